"""Coarse stage: which (pair, interval) of the sampling grid could hold an approach within D.

Both sieves are conservative.  On an interval of length h, with relative speed bounded by W,
the range can fall no lower than (|rho_k| + |rho_k+1| - h W) / 2 (triangle inequality from both
ends).  W is the larger end speed plus a relative-acceleration bound times h/2.
"""

from __future__ import annotations

import numpy as np


# Any object's acceleration is at most g (surface gravity; less everywhere above the surface),
# so its speed over an interval is at most the larger end speed plus g h/2, and the relative
# acceleration of two objects at most 2 g (both opposite).  Loose, cheap, safe.
G_KM_S2 = 9.81e-3
ACCEL_BOUND_KM_S2 = 2.0 * G_KM_S2


def top_speeds(v: np.ndarray) -> np.ndarray:
    """Each object's largest speed over its samples (n, m, 3) -> (n,), unusable ones ignored."""
    with np.errstate(invalid="ignore"):
        return np.nanmax(np.sqrt(np.einsum("nmi,nmi->nm", v, v)), axis=1, initial=0.0)


def fleet_candidates(rp: np.ndarray, vp: np.ndarray, usable_p: np.ndarray, r: np.ndarray,
                     v: np.ndarray, usable: np.ndarray, rows: np.ndarray, h_s: float,
                     reach_km, s_top_speed: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One primary (m,3) against the secondaries rows of r, v (N,m,3).  Returns (index into
    rows, interval index) of every interval whose lower bound on range is <= reach_km (one
    value, or one per row) and whose ends are usable for both.  s_top_speed: the rows'
    top_speeds.  First with each secondary's largest relative speed over the span
    (|v_s| + |v_p|, a bound on every interval's W), then with the end speeds on the intervals
    that pass (`fleet_scan.fleet_scan`, compiled: each sample's range computed once)."""
    from .fleet_scan import fleet_scan      # numba compiles (or loads) it on first use

    rows = np.asarray(rows, np.int64)
    reach = np.ascontiguousarray(np.broadcast_to(np.asarray(reach_km, float), (len(rows),)))
    if not len(rows):
        return np.empty(0, np.int64), np.empty(0, np.int64)
    p_top = float(top_speeds(vp[None])[0])
    out = fleet_scan(np.ascontiguousarray(rp), np.ascontiguousarray(vp),
                     np.ascontiguousarray(usable_p, bool), r, v, usable, rows, float(h_s), reach,
                     np.ascontiguousarray(s_top_speed, float), p_top, ACCEL_BOUND_KM_S2)
    return out[:, 0], out[:, 1]


# Objects whose speed bound around an instant is at most this (every circular orbit above
# about 150 km, MEO, GEO) find their partners in the neighbouring cells of the all-vs-all grid;
# the few faster ones (eccentric orbits near perigee) scan a wider block of cells.
SLOW_SPEED_KM_S = 8.0


def all_pairs_candidates(r: np.ndarray, v: np.ndarray, usable: np.ndarray, h_s: float,
                         reach_km: float, substeps: int) -> np.ndarray:
    """All-vs-all: unique (i, j, interval) rows with i < j, sorted by interval then pair.
    Positions are interpolated (cubic Hermite) at `substeps` instants inside each interval; at
    each, a pair is kept when its distance is within reach + (s_i + s_j) (h/substeps)/2 and its
    straight-line motion over +-dt/2 comes within reach + (A_i + A_j) (dt/2)^2 / 2, with A an
    object's largest interpolated acceleration over the interval and s its interpolated speed
    at the instant + A dt/2 (`cells.grid_pairs`)."""
    from .cells import grid_pairs       # numba compiles (or loads) it on first use

    n, m, _ = r.shape
    rows = grid_pairs(np.ascontiguousarray(r, float), np.ascontiguousarray(v, float),
                      np.ascontiguousarray(usable, bool), float(h_s), float(reach_km),
                      int(substeps), SLOW_SPEED_KM_S)
    if not len(rows):
        return np.empty((0, 3), dtype=np.int64)
    key = np.unique((rows[:, 2] * n + rows[:, 0]) * n + rows[:, 1])
    pair, k = key % (n * n), key // (n * n)
    return np.stack([pair // n, pair % n, k], axis=1)
