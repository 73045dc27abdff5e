"""The bracket search of `refine.brackets_from_candidates`, compiled with numba: one loop over
the candidates, no (candidates x 17 x 3) temporaries.

For candidate n (objects i, j, interval k) the relative motion is the cubic Hermite of the two
objects' end states (`ephemeris.hermite_cubic`, as compiled in `cells`).  f = rho . rho_dot is
sampled at `subdivisions + 1` points; each sub-interval where f goes from negative to
non-negative holds a range minimum, estimated by the straight line through the sub-interval's
start (position and velocity there), clipped to the sub-interval.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .cells import hermite_weights


@njit(cache=True, nogil=True)
def _basis(subdivisions, h_s):
    """basis[s, q] = (position weight, velocity weight) of term q (r0, v0 h, r1, v1 h) at
    u = s / subdivisions (cells.hermite_weights, the velocity weight over h), once per call."""
    basis = np.empty((subdivisions + 1, 4, 2))
    for s in range(subdivisions + 1):
        w, d = hermite_weights(s / subdivisions)
        for q in range(4):
            basis[s, q, 0], basis[s, q, 1] = w[q], d[q] / h_s
    return basis


@njit(cache=True, nogil=True)
def bracket_scan(r, v, ri, rj, kk, h_s, subdivisions, reach_km):
    """(candidate index, sub-interval index, estimated miss km) of every sign change of f
    whose straight-line estimate is within reach_km.  r, v: (rows, m, 3) grid states; ri, rj,
    kk: each candidate's two rows and interval."""
    out = np.empty((max(16, len(ri) // 8), 3))
    n_out = 0
    dt_sub = h_s / subdivisions
    basis = _basis(subdivisions, h_s)
    ends = np.empty((4, 3))      # the relative r0, v0 h, r1, v1 h of one candidate
    p = np.empty(3)
    q = np.empty(3)
    for n in range(len(ri)):
        i, j, k = ri[n], rj[n], kk[n]
        for c in range(3):
            ends[0, c] = r[j, k, c] - r[i, k, c]
            ends[1, c] = (v[j, k, c] - v[i, k, c]) * h_s
            ends[2, c] = r[j, k + 1, c] - r[i, k + 1, c]
            ends[3, c] = (v[j, k + 1, c] - v[i, k + 1, c]) * h_s
        f_prev = 0.0
        px = py = pz = qx = qy = qz = 0.0
        for s in range(subdivisions + 1):
            for c in range(3):
                p[c] = (basis[s, 0, 0] * ends[0, c] + basis[s, 1, 0] * ends[1, c]
                        + basis[s, 2, 0] * ends[2, c] + basis[s, 3, 0] * ends[3, c])
                q[c] = (basis[s, 0, 1] * ends[0, c] + basis[s, 1, 1] * ends[1, c]
                        + basis[s, 2, 1] * ends[2, c] + basis[s, 3, 1] * ends[3, c])
            f = p[0] * q[0] + p[1] * q[1] + p[2] * q[2]
            if s > 0 and f_prev < 0.0 and f >= 0.0:
                # the straight line from the sub-interval's start
                qq = max(qx * qx + qy * qy + qz * qz, 1e-30)
                tau = min(max(-(px * qx + py * qy + pz * qz) / qq, 0.0), dt_sub)
                ex, ey, ez = px + qx * tau, py + qy * tau, pz + qz * tau
                est = math.sqrt(ex * ex + ey * ey + ez * ez)
                if est <= reach_km:
                    if n_out == out.shape[0]:
                        grown = np.empty((2 * out.shape[0], 3))
                        grown[:n_out] = out[:n_out]
                        out = grown
                    out[n_out, 0] = n
                    out[n_out, 1] = s - 1
                    out[n_out, 2] = est
                    n_out += 1
            f_prev = f
            px, py, pz, qx, qy, qz = p[0], p[1], p[2], q[0], q[1], q[2]
    return out[:n_out]
