"""States between exact SGP4 samples by two-body motion, with a bound on the difference.

Fleet screening samples every secondary on a 240 s grid.  Near-earth objects can instead be
propagated by SGP4 at every COARSE_EVERY-th grid point only, and the points between filled by
two-body (Kepler) motion from the nearest exact sample.  The fill is not a state to report:
it feeds the sieve, whose reach grows by `fill_pads`, and every interval the sieve keeps gets
exact SGP4 states again before brackets and TCA.

The bound.  Let r(t) be the SGP4 trajectory and k(t) the two-body one that starts from SGP4's
state at t0.  With r'' = g(r) + f, g the central gravity, |f| <= F, and |g(a) - g(b)| <=
L |a - b| where L = 2 mu / rho^3 bounds the gravity gradient at radii above rho, the difference
d = r - k satisfies |d|'' <= L |d| + F with |d(0)| = 0 and |d'(0)| <= V (SGP4's velocity is not
exactly the derivative of its position).  By comparison with y'' = L y + F:

    |d(tau)|  <= (F / L) (cosh(sqrt(L) tau) - 1) + (V / sqrt(L)) sinh(sqrt(L) tau)
    |d'(tau)| <= (F / sqrt(L)) sinh(sqrt(L) tau) + V cosh(sqrt(L) tau)

F and V are measured on SGP4 itself (tests/test_kepler_fill.py): on 5,000 near-earth orbits
(e up to 0.25, perigee 200 to 1,500 km) the largest departure of SGP4's acceleration from
central gravity was 2.7e-5 km/s^2 (J2 at 200 km: 3 J2 mu Re^2 / r^4 = 2.8e-5) and of its
velocity from the derivative of its position 2.0e-3 km/s (eccentric orbits; 2.3e-4 below
e = 0.015).  The bound uses F = 1e-4 and V = 5e-3, and applies to near-earth element sets
(SGP4's deep-space branch is left out) whose perigee over the window stays above
FILL_MIN_PERIGEE_KM.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..constants import MU_EARTH_KM3_S2 as MU
from ..constants import RE_WGS72_KM

PERTURBATION_BOUND_KM_S2 = 1e-4     # F: measured at most 2.7e-5 (see the module text)
VELOCITY_MISMATCH_KM_S = 5e-3       # V: measured at most 2.0e-3
FILL_MIN_PERIGEE_KM = 200.0         # altitude; the gradient bound uses 50 km less
COARSE_EVERY = 4                    # exact SGP4 every 4th grid point (960 s at 240 s)
KEPLER_ITERATIONS = 8               # Newton steps on Kepler's equation (converged by 4 at e 0.25)


def fill_pads(tau_max_s: float) -> tuple[float, float]:
    """(position km, velocity km/s) bounds on SGP4 minus the two-body fill at |tau| <= tau_max_s."""
    rho = RE_WGS72_KM + FILL_MIN_PERIGEE_KM - 50.0
    L = 2.0 * MU / rho**3
    x = math.sqrt(L) * tau_max_s
    F, V = PERTURBATION_BOUND_KM_S2, VELOCITY_MISMATCH_KM_S
    pos = F / L * (math.cosh(x) - 1.0) + V / math.sqrt(L) * math.sinh(x)
    vel = F / math.sqrt(L) * math.sinh(x) + V * math.cosh(x)
    return pos, vel


KEPLER_TOL_RAD = 1e-13


def kepler_states(r0_km: np.ndarray, v0_km_s: np.ndarray, tau_s: np.ndarray):
    """Two-body states tau_s after (r0, v0): arrays (n, 3), (n, 3), (n,) -> r, v (n, 3).
    Elliptic orbits; Kepler's equation in the difference of eccentric anomaly (well posed for
    near-circular orbits), by Newton's method from dE = dM until its steps are under
    KEPLER_TOL_RAD (3 steps near-circular, 5 at e = 0.25; at most KEPLER_ITERATIONS); one
    compiled loop over the rows (numba)."""
    r0 = np.ascontiguousarray(r0_km, float).reshape(-1, 3)
    v0 = np.ascontiguousarray(v0_km_s, float).reshape(-1, 3)
    tau = np.ascontiguousarray(np.broadcast_to(np.asarray(tau_s, float), (len(r0),)))
    r = np.empty_like(r0)
    v = np.empty_like(v0)
    _kepler_rows(r0, v0, tau, MU, KEPLER_ITERATIONS, KEPLER_TOL_RAD, r, v)
    return r, v


@njit(cache=True, nogil=True, error_model="numpy")
def _kepler_one(r0, v0, tau, mu, iterations, tol, r, v):
    """One two-body state: r, v (3,) written from r0, v0 (3,) after tau seconds."""
    x, y, z = r0[0], r0[1], r0[2]
    vx, vy, vz = v0[0], v0[1], v0[2]
    r0m = math.sqrt(x * x + y * y + z * z)
    inv_a = 2.0 / r0m - (vx * vx + vy * vy + vz * vz) / mu
    a = 1.0 / inv_a
    n = math.sqrt(mu * inv_a ** 3)
    ec = 1.0 - r0m * inv_a                                   # e cos E0
    es = (x * vx + y * vy + z * vz) / math.sqrt(mu * a)      # e sin E0
    dm = n * tau
    de = dm
    for _ in range(iterations):
        s, c = math.sin(de), math.cos(de)
        step = (de - ec * s + es * (1.0 - c) - dm) / (1.0 - ec * c + es * s)
        de -= step
        if abs(step) < tol:
            break
    s, c = math.sin(de), math.cos(de)
    f = 1.0 - a / r0m * (1.0 - c)
    g = tau + (s - de) / n
    rm = a * (1.0 - ec * c + es * s)
    fd = -math.sqrt(mu * a) / (r0m * rm) * s
    gd = 1.0 - a / rm * (1.0 - c)
    r[0], r[1], r[2] = f * x + g * vx, f * y + g * vy, f * z + g * vz
    v[0], v[1], v[2] = fd * x + gd * vx, fd * y + gd * vy, fd * z + gd * vz


@njit(cache=True, nogil=True, error_model="numpy")
def _kepler_rows(r0, v0, tau, mu, iterations, tol, r, v):
    for k in range(r0.shape[0]):
        _kepler_one(r0[k], v0[k], tau[k], mu, iterations, tol, r[k], v[k])


@njit(cache=True, nogil=True, error_model="numpy")
def _fill_in_place(r, v, t_s, src, mu, iterations, tol):
    """r, v (n, m, 3): every point j with src[j] != j from the exact point src[j], in place."""
    for k in range(r.shape[0]):
        for j in range(r.shape[1]):
            c = src[j]
            if c != j:
                _kepler_one(r[k, c], v[k, c], t_s[j] - t_s[c], mu, iterations, tol, r[k, j], v[k, j])


def coarse_indices(m: int, every: int = COARSE_EVERY) -> np.ndarray:
    """Grid indices (of m points) that get exact states: every `every`-th, and the last."""
    return np.unique(np.r_[np.arange(0, m, every), m - 1])


def fill_sources(t_s: np.ndarray, every: int = COARSE_EVERY) -> np.ndarray:
    """For each grid point (times t_s), the exact point (coarse_indices) its state comes from:
    itself where exact; in the regular body the nearer of the two exact points around it (the
    earlier one at the midpoint); between the last regular point and the end, the nearer of
    the two by time (the earlier on a tie)."""
    m = len(t_s)
    src = np.arange(m)
    if m < 3:
        return src
    last = ((m - 1) // every) * every          # last regular exact index
    for q in range(1, every):                  # j = c + q between regular exact c, c + every
        j = np.arange(q, last - every + q + 1, every)
        src[j] = j - q if q <= every // 2 else j - q + every
    tail = np.arange(last + 1, m - 1)
    src[tail] = np.where(t_s[tail] - t_s[last] <= t_s[m - 1] - t_s[tail], last, m - 1)
    return src


def fill_between(r: np.ndarray, v: np.ndarray, t_s: np.ndarray, every: int = COARSE_EVERY) -> float:
    """Fill r, v (n, m, 3), exact at coarse_indices(m, every), everywhere else from the nearest
    exact sample (fill_sources), in place, in one compiled pass.  Returns the largest |tau|
    used (s)."""
    n, m = r.shape[:2]
    if not n or m < 3:
        return 0.0
    t_s = np.ascontiguousarray(t_s, float)
    src = fill_sources(t_s, every)
    filled = src != np.arange(m)
    if not filled.any():
        return 0.0
    if r.flags.c_contiguous and v.flags.c_contiguous:
        _fill_in_place(r, v, t_s, src, MU, KEPLER_ITERATIONS, KEPLER_TOL_RAD)
    else:       # a non-contiguous view: through contiguous copies
        rc, vc = np.ascontiguousarray(r), np.ascontiguousarray(v)
        _fill_in_place(rc, vc, t_s, src, MU, KEPLER_ITERATIONS, KEPLER_TOL_RAD)
        r[...], v[...] = rc, vc
    return float(np.abs(t_s[filled] - t_s[src[filled]]).max())
