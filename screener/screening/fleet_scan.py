"""Fleet sieve, compiled with numba: one primary against many secondaries, every grid interval,
in one pass over the secondaries' states (`sieve.fleet_candidates` states the bound).

Each sample's range is computed once and shared by the two intervals it ends; an interval is
first tested with the secondary's largest speed over the span, and only when that lets it
through with the relative speeds at its ends.  States are read in place (no copy of the
secondaries' rows).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit


@njit(cache=True, nogil=True)
def _gap(x, i, k, xp):
    """|x[i, k] - xp[k]| (a range from positions, a relative speed from velocities)."""
    dx = x[i, k, 0] - xp[k, 0]
    dy = x[i, k, 1] - xp[k, 1]
    dz = x[i, k, 2] - xp[k, 2]
    return math.sqrt(dx * dx + dy * dy + dz * dz)


@njit(cache=True, nogil=True)
def fleet_scan(rp, vp, usable_p, r, v, usable, rows, h_s, reach_km, s_top_km_s, p_top_km_s,
               accel_km_s2):
    """(e, k) of every secondary rows[e] and interval k whose lower bound on range is within
    reach_km[e] and whose four end samples (both objects) are usable.  rp, vp: the primary's
    (m, 3) states; r, v: (N, m, 3) states of all objects; s_top_km_s[e]: secondary rows[e]'s
    largest speed over the span; p_top_km_s: the primary's.  Float64 states (the engine's)."""
    m = rp.shape[0]
    n = len(rows)
    cap = 1 << 12
    out = np.empty((cap, 2), np.int64)
    n_out = 0
    half_dv = accel_km_s2 * h_s / 2.0
    for e in range(n):
        i = rows[e]
        pad = h_s * (s_top_km_s[e] + p_top_km_s + half_dv)
        d0 = _gap(r, i, 0, rp)
        ok0 = usable[i, 0] and usable_p[0]
        for k in range(m - 1):
            d1 = _gap(r, i, k + 1, rp)
            ok1 = usable[i, k + 1] and usable_p[k + 1]
            if ok0 and ok1 and 0.5 * (d0 + d1 - pad) <= reach_km[e]:
                w = max(_gap(v, i, k, vp), _gap(v, i, k + 1, vp)) + half_dv
                if 0.5 * (d0 + d1 - h_s * w) <= reach_km[e]:
                    if n_out == cap:
                        cap *= 2
                        grown = np.empty((cap, 2), np.int64)
                        grown[:n_out] = out[:n_out]
                        out = grown
                    out[n_out, 0] = e
                    out[n_out, 1] = k
                    n_out += 1
            d0, ok0 = d1, ok1
    return out[:n_out]
