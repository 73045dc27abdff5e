"""Coarse stage: which (pair, interval) of the sampling grid could hold an approach within D.

Both sieves are conservative.  On an interval of length h, with relative speed bounded by W,
the range can fall no lower than (|rho_k| + |rho_k+1| - h W) / 2 (triangle inequality from both
ends).  W is the larger end speed plus a relative-acceleration bound times h/2.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..propagation.ephemeris import hermite_cubic

# Any object's acceleration is at most g (surface gravity; less everywhere above the surface),
# so its speed over an interval is at most the larger end speed plus g h/2, and the relative
# acceleration of two objects at most 2 g (both opposite).  Loose, cheap, safe.
G_KM_S2 = 9.81e-3
ACCEL_BOUND_KM_S2 = 2.0 * G_KM_S2


def top_speeds(v: np.ndarray) -> np.ndarray:
    """Each object's largest speed over its samples (n, m, 3) -> (n,), unusable ones ignored."""
    with np.errstate(invalid="ignore"):
        return np.nanmax(np.sqrt(np.einsum("nmi,nmi->nm", v, v)), axis=1, initial=0.0)


def fleet_candidates(rp: np.ndarray, vp: np.ndarray, rs: np.ndarray, vs: np.ndarray,
                     usable: np.ndarray, h_s: float, reach_km,
                     s_top_speed: np.ndarray | None = None,
                     rows: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """One primary (m,3) against secondaries (n,m,3).  Returns (secondary index, interval index)
    of every interval whose lower bound on range is <= reach_km (one value, or one per
    secondary) and whose ends are usable.  s_top_speed: the secondaries' top_speeds, when the
    caller has them for many primaries; rows: the secondaries' rows of vs when vs holds more
    objects (not copied)."""
    reach = np.broadcast_to(np.asarray(reach_km, float), (len(rs),))
    rho = rs - rp[None]
    d = np.sqrt(np.einsum("nmi,nmi->nm", rho, rho))
    ok = usable[:, :-1] & usable[:, 1:]
    # first with each secondary's largest relative speed over the span (|v_s| + |v_p|, a
    # bound on every interval's W): it only needs the ranges, and the exact test below runs
    # on the few intervals it lets through
    if s_top_speed is None:
        s_top_speed = top_speeds(vs if rows is None else vs[rows])
    w_top = s_top_speed + top_speeds(vp[None])[0]
    with np.errstate(invalid="ignore"):
        d_sum = d[:, :-1] + d[:, 1:]
        maybe = (0.5 * (d_sum - h_s * (w_top[:, None] + ACCEL_BOUND_KM_S2 * h_s / 2.0)) <= reach[:, None]) & ok
    n_idx, k_idx = np.nonzero(maybe)
    if not len(n_idx):
        return n_idx, k_idx
    vrow = n_idx if rows is None else rows[n_idx]
    w0 = vs[vrow, k_idx] - vp[k_idx]
    w1 = vs[vrow, k_idx + 1] - vp[k_idx + 1]
    w_end = np.maximum(np.sqrt(np.einsum("ni,ni->n", w0, w0)), np.sqrt(np.einsum("ni,ni->n", w1, w1)))
    ds = d_sum[n_idx, k_idx]
    W = w_end + ACCEL_BOUND_KM_S2 * h_s / 2.0
    lb = 0.5 * (ds - h_s * W)
    hit = lb <= reach[n_idx]
    return n_idx[hit], k_idx[hit]


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


# Objects whose speed bound over an interval is at most this (every circular orbit above about
# 150 km, MEO, GEO) are paired among themselves with a radius for two such speeds; the few
# faster ones (eccentric orbits near perigee) get their own, wider query against all.
SLOW_SPEED_KM_S = 8.6


def _pairs_within(pos: np.ndarray, fast: np.ndarray, speed: np.ndarray, reach_km: float,
                  dt: float) -> np.ndarray:
    """Index pairs (a, b) of pos whose distance may fall to reach_km within +-dt/2: distance
    at the sample <= reach + (s_a + s_b) dt/2 with s the speed bounds, by speed class."""
    slow = np.nonzero(~fast)[0]
    quick = np.nonzero(fast)[0]
    out = []
    if len(slow) > 1:
        s_max = float(speed[slow].max())
        t_slow = cKDTree(pos[slow], balanced_tree=False, compact_nodes=False)
        p = t_slow.query_pairs(reach_km + s_max * dt, output_type="ndarray")
        if len(p):
            out.append(slow[p])
    if len(quick):
        all_max = float(speed.max())
        t_quick = cKDTree(pos[quick], balanced_tree=False, compact_nodes=False)
        p = t_quick.query_pairs(reach_km + all_max * dt, output_type="ndarray")
        if len(p):
            out.append(quick[p])
        if len(slow):
            m = t_quick.sparse_distance_matrix(t_slow, reach_km + (all_max + s_max) * dt / 2.0,
                                               output_type="ndarray")
            if len(m):
                out.append(np.stack([quick[m["i"]], slow[m["j"]]], axis=1))
    return np.concatenate(out) if out else np.empty((0, 2), dtype=np.int64)


def kd_candidates(r: np.ndarray, v: np.ndarray, usable: np.ndarray, h_s: float, reach_km: float,
                  substeps: int) -> np.ndarray:
    """All-vs-all: unique (i, j, interval) with i < j.  Positions are interpolated (cubic Hermite)
    at `substeps` points inside each interval; at each, cKDTrees find the pairs within
    reach + (s_i + s_j) (h/substeps)/2, s an object's speed bound over the interval (the larger
    end speed + g h/2), which covers every instant of the interval; pairs are then kept only
    when their straight-line motion comes within reach plus a curvature margin."""
    n, m, _ = r.shape
    dt = h_s / substeps
    speed = np.linalg.norm(v, axis=2)
    found = []
    for k in range(m - 1):
        ok = usable[:, k] & usable[:, k + 1]
        idx = np.nonzero(ok)[0]
        if len(idx) < 2:
            continue
        r0, r1 = r[idx, k], r[idx, k + 1]
        v0, v1 = v[idx, k] * h_s, v[idx, k + 1] * h_s
        s_bound = np.maximum(speed[idx, k], speed[idx, k + 1]) + G_KM_S2 * h_s / 2.0
        fast = s_bound > SLOW_SPEED_KM_S
        keys = []
        for q in range(substeps):
            u = (q + 0.5) / substeps
            pos, vel = hermite_cubic(u, r0, v0, r1, v1, h_s)
            pairs = _pairs_within(pos, fast, s_bound, reach_km, dt)
            if len(pairs):
                pairs = pairs[_linear_pass(pos, vel, pairs, dt, reach_km)]
            if len(pairs):
                lo, hi = np.minimum(pairs[:, 0], pairs[:, 1]), np.maximum(pairs[:, 0], pairs[:, 1])
                keys.append(lo.astype(np.int64) * n + hi)
        if keys:
            kk = np.unique(np.concatenate(keys))
            a, b = idx[kk // n], idx[kk % n]
            lo, hi = np.minimum(a, b), np.maximum(a, b)
            found.append(np.stack([lo, hi, np.full(len(lo), k)], axis=1))
    if not found:
        return np.empty((0, 3), dtype=np.int64)
    return np.concatenate(found)
