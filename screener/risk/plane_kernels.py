"""The fixed Gauss-Legendre rule of the 2-D Pc quadrature (`risk.pc`), compiled with numba:
one loop over geometries and nodes, with the normal CDF from math.erfc, so no (geometries x
nodes) temporaries are formed."""

from __future__ import annotations

import math

from numba import njit

_SQRT2 = math.sqrt(2.0)
_SQRT2PI = math.sqrt(2.0 * math.pi)


@njit(cache=True, nogil=True)
def _ndtr(z):
    return 0.5 * math.erfc(-z / _SQRT2)


@njit(cache=True, nogil=True)
def fixed_rule(xm, ym, sx, sy, R, sin_t, cos_t, w, out):
    """out[n] = sum_q w[q] g_x(x_q) P(|y - ym| <= half_q) half_q with x_q = xm + R sin(theta_q),
    half_q = R cos(theta_q), g_x the N(0, sx^2) density and y ~ N(0, sy^2).  The chord's mass
    is taken on the side where it is small, accurate in the tails: Q(a) - Q(b) when both ends
    lie right of the mean, else Phi(b) - Phi(a).  All 1-D arrays."""
    for n in range(xm.shape[0]):
        x0, y0, gx_s, gy_s, r = xm[n], ym[n], sx[n], sy[n], R[n]
        norm = 1.0 / (gx_s * _SQRT2PI)
        acc = 0.0
        for q in range(sin_t.shape[0]):
            x = x0 + r * sin_t[q]
            half = r * cos_t[q]
            a = (y0 - half) / gy_s
            b = (y0 + half) / gy_s
            if a > 0.0:
                chord = _ndtr(-a) - _ndtr(-b)
            else:
                chord = _ndtr(b) - _ndtr(a)
            z = x / gx_s
            acc += w[q] * math.exp(-0.5 * z * z) * norm * chord * half
        out[n] = acc
