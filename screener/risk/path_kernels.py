"""The inner loops of the along-path Monte Carlo (`risk.pc_path`), compiled with numba: the
hit test of offsets against the path's segments, and the importance-sampling mixture's log
density at the hits.  Both work per offset, so no (offsets x segments) matrices are formed.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

LOG_NEGLIGIBLE = -40.0


@njit(cache=True, nogil=True)
def segment_hits(delta, a, seg, seg2, hbr_km):
    """hits[n]: whether the point -delta[n] lies within hbr_km of some segment
    a[s] + u seg[s], u in [0, 1] (exact point-to-segment distance)."""
    n = delta.shape[0]
    hits = np.zeros(n, np.bool_)
    lim2 = hbr_km * hbr_km
    for i in range(n):
        px, py, pz = -delta[i, 0], -delta[i, 1], -delta[i, 2]
        for s in range(a.shape[0]):
            qx, qy, qz = px - a[s, 0], py - a[s, 1], pz - a[s, 2]
            u = (qx * seg[s, 0] + qy * seg[s, 1] + qz * seg[s, 2]) / seg2[s]
            u = min(1.0, max(0.0, u))
            dx, dy, dz = qx - u * seg[s, 0], qy - u * seg[s, 1], qz - u * seg[s, 2]
            if dx * dx + dy * dy + dz * dz <= lim2:
                hits[i] = True
                break
    return hits


@njit(cache=True, nogil=True)
def log_mixture(x, centres, axis, s_along, s_across, log_norm):
    """log of sum_k exp(log_norm[k] - (u_k / s_along[k])^2 / 2 - perp_k^2 / (2 s_across^2)) at
    each row of x, with u_k and perp_k the parts of x - centres[k] along and across axis[k]
    (unit vectors): the mixture of one elongated Gaussian per path segment."""
    n, k_n = x.shape[0], centres.shape[0]
    out = np.empty(n)
    terms = np.empty(k_n)
    for i in range(n):
        top = -np.inf
        for k in range(k_n):
            dx, dy, dz = x[i, 0] - centres[k, 0], x[i, 1] - centres[k, 1], x[i, 2] - centres[k, 2]
            u = dx * axis[k, 0] + dy * axis[k, 1] + dz * axis[k, 2]
            perp2 = max(dx * dx + dy * dy + dz * dz - u * u, 0.0)
            t = log_norm[k] - 0.5 * (u / s_along[k]) ** 2 - 0.5 * perp2 / (s_across * s_across)
            terms[k] = t
            top = max(top, t)
        acc = 0.0
        for k in range(k_n):
            d = terms[k] - top
            if d > LOG_NEGLIGIBLE:      # the rest add under 1e-17 each to a sum of at least 1
                acc += math.exp(d)
        out[i] = top + math.log(acc)
    return out
