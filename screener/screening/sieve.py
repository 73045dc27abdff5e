"""Coarse stage: which (pair, interval) of the sampling grid could hold an approach within D.

Both sieves are conservative.  On an interval of length h, with relative speed bounded by W,
the range can fall no lower than (|rho_k| + |rho_k+1| - h W) / 2 (triangle inequality from both
ends).  W is the larger end speed plus a relative-acceleration bound times h/2.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..propagation.ephemeris import hermite_cubic

# Relative acceleration bound between two objects, km/s^2: twice surface gravity (both
# accelerations at most ~9.8 m/s^2 and opposite).  Loose, cheap, safe.
ACCEL_BOUND_KM_S2 = 2.0 * 9.81e-3


def fleet_candidates(rp: np.ndarray, vp: np.ndarray, rs: np.ndarray, vs: np.ndarray,
                     usable: np.ndarray, h_s: float, reach_km: float) -> tuple[np.ndarray, np.ndarray]:
    """One primary (m,3) against secondaries (n,m,3).  Returns (secondary index, interval index)
    of every interval whose lower bound on range is <= reach_km and whose ends are usable."""
    rho = rs - rp[None]
    w = vs - vp[None]
    d = np.sqrt(np.einsum("nmi,nmi->nm", rho, rho))
    ws = np.sqrt(np.einsum("nmi,nmi->nm", w, w))
    W = np.maximum(ws[:, :-1], ws[:, 1:]) + ACCEL_BOUND_KM_S2 * h_s / 2.0
    lb = 0.5 * (d[:, :-1] + d[:, 1:] - h_s * W)
    ok = usable[:, :-1] & usable[:, 1:]
    with np.errstate(invalid="ignore"):
        hit = (lb <= reach_km) & ok
    return np.nonzero(hit)


# Over +-dt/2 around a substep the relative path departs from its tangent line by at most
# A (dt/2)^2 / 2 with A the relative acceleration; LINEAR_SAFETY covers the interpolant's own
# curvature on top of the physical bound.
LINEAR_SAFETY = 3.0


def _linear_pass(pos: np.ndarray, vel: np.ndarray, pairs: np.ndarray, dt_s: float,
                 reach_km: float) -> np.ndarray:
    """Mask of index pairs whose straight-line relative motion over +-dt/2 comes within
    reach_km plus the curvature margin (conservative; removes pairs the radius let in only
    because they move fast)."""
    rho = pos[pairs[:, 1]] - pos[pairs[:, 0]]
    w = vel[pairs[:, 1]] - vel[pairs[:, 0]]
    half = dt_s / 2.0
    tau = np.clip(-np.einsum("ni,ni->n", rho, w) / np.maximum(np.einsum("ni,ni->n", w, w), 1e-30),
                  -half, half)
    d = np.linalg.norm(rho + w * tau[:, None], axis=1)
    margin = LINEAR_SAFETY * ACCEL_BOUND_KM_S2 * half * half / 2.0
    return d <= reach_km + margin


def kd_candidates(r: np.ndarray, v: np.ndarray, usable: np.ndarray, h_s: float, reach_km: float,
                  v_max_km_s: float, substeps: int) -> np.ndarray:
    """All-vs-all: unique (i, j, interval) with i < j.  Positions are interpolated (cubic Hermite)
    at `substeps` points inside each interval; a cKDTree at each finds pairs within
    reach + W * (h/substeps)/2, which covers every instant of the interval."""
    n, m, _ = r.shape
    dt = h_s / substeps
    radius = reach_km + (2.0 * v_max_km_s + ACCEL_BOUND_KM_S2 * dt) * dt / 2.0
    found = []
    for k in range(m - 1):
        ok = usable[:, k] & usable[:, k + 1]
        idx = np.nonzero(ok)[0]
        if len(idx) < 2:
            continue
        r0, r1 = r[idx, k], r[idx, k + 1]
        v0, v1 = v[idx, k] * h_s, v[idx, k + 1] * h_s
        keys = []
        for q in range(substeps):
            u = (q + 0.5) / substeps
            pos, vel = hermite_cubic(u, r0, v0, r1, v1, h_s)
            pairs = cKDTree(pos, balanced_tree=False, compact_nodes=False).query_pairs(
                radius, output_type="ndarray")
            if len(pairs):
                pairs = pairs[_linear_pass(pos, vel, pairs, dt, reach_km)]
            if len(pairs):
                keys.append(pairs[:, 0].astype(np.int64) * n + pairs[:, 1])
        if keys:
            kk = np.unique(np.concatenate(keys))
            a, b = idx[kk // n], idx[kk % n]
            lo, hi = np.minimum(a, b), np.maximum(a, b)
            found.append(np.stack([lo, hi, np.full(len(lo), k)], axis=1))
    if not found:
        return np.empty((0, 3), dtype=np.int64)
    return np.concatenate(found)
