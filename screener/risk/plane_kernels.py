"""The fixed Gauss-Legendre rule of the 2-D Pc quadrature (`risk.pc`), compiled with numba:
one loop over geometries and nodes, with the normal CDF from math.erfc, so no (geometries x
nodes) temporaries are formed."""

from __future__ import annotations

import math

from numba import cfunc, njit, types

_SQRT2 = math.sqrt(2.0)
_SQRT2PI = math.sqrt(2.0 * math.pi)


@njit(cache=True, nogil=True)
def _ndtr(z):
    return 0.5 * math.erfc(-z / _SQRT2)


@njit(cache=True, nogil=True)
def node_value(x0, y0, sx, sy, r, sin_t, cos_t):
    """The quadrature's integrand at one node theta (given as its sine and cosine): g_x(x)
    P(|y - y0| <= half) half with x = x0 + r sin(theta), half = r cos(theta), g_x the
    N(0, sx^2) density and y ~ N(0, sy^2).  The chord's mass is taken on the side where it
    is small, accurate in the tails: Q(a) - Q(b) when both ends lie right of the mean, else
    Phi(b) - Phi(a)."""
    x = x0 + r * sin_t
    half = r * cos_t
    a = (y0 - half) / sy
    b = (y0 + half) / sy
    if a > 0.0:
        chord = _ndtr(-a) - _ndtr(-b)
    else:
        chord = _ndtr(b) - _ndtr(a)
    z = x / sx
    return math.exp(-0.5 * z * z) / (sx * _SQRT2PI) * chord * half


@njit(cache=True, nogil=True)
def fixed_rule(xm, ym, sx, sy, R, sin_t, cos_t, w, out):
    """out[n] = sum_q w[q] node_value(geometry n, node q).  All 1-D arrays."""
    for n in range(xm.shape[0]):
        acc = 0.0
        for q in range(sin_t.shape[0]):
            acc += w[q] * node_value(xm[n], ym[n], sx[n], sy[n], R[n], sin_t[q], cos_t[q])
        out[n] = acc


@cfunc(types.float64(types.intc, types.CPointer(types.float64)), cache=True, nopython=True)
def node_at_theta(n, xx):
    """node_value at theta = xx[0] for the geometry xx[1:6] = (x0, y0, sx, sy, r): the
    integrand of the adaptive rule as a C function (scipy's quad calls it through a
    LowLevelCallable without entering Python)."""
    return node_value(xx[1], xx[2], xx[3], xx[4], xx[5], math.sin(xx[0]), math.cos(xx[0]))
