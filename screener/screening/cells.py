"""All-vs-all neighbour search on the sampling grid: a uniform grid of cells at each sample
instant, compiled with numba (one call per task, no Python per interval or per pair).

At each sample instant inside a grid interval every object's position and velocity come from
the cubic Hermite of its two end states.  Objects are binned in cubic cells of side c, wrapped
modulo `WRAP` cells per axis (positions that alias share a bin; the distance tests below reject
them, so aliasing costs checks, never pairs).  An object scans the cells within k_a of its own,
k_a = ceil((reach + s_a dt) / c), and tests each other object b of lower speed bound (ties: the
higher index), so that every pair is tested once, by its faster member, whose scan covers the
pair's radius reach + (s_a + s_b) dt/2 <= reach + s_a dt.  A pair is kept when

1. its distance at the instant is at most reach + (s_a + s_b) dt/2 (s the speed bounds over the
   interval: each object moves at most s dt/2 within +-dt/2 of the instant), and
2. its straight-line relative motion over +-dt/2 comes within reach plus the curvature margin.

Both are necessary for any approach within reach during +-dt/2, so the search is conservative.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

WRAP = 64     # cells per axis of the wrapped grid: 64^3 bins (2 MB of counts)


@njit(cache=True, nogil=True)
def _hermite_at(u, h, r0, v0, r1, v1, pos, vel):
    """Cubic Hermite at u in [0, 1] of the rows given (r, v at both ends; v in km/s)."""
    u2 = u * u
    u3 = u2 * u
    h00, h10, h01, h11 = 2 * u3 - 3 * u2 + 1, u3 - 2 * u2 + u, -2 * u3 + 3 * u2, u3 - u2
    d00, d10, d01, d11 = 6 * u2 - 6 * u, 3 * u2 - 4 * u + 1, -6 * u2 + 6 * u, 3 * u2 - 2 * u
    for i in range(pos.shape[0]):
        for c in range(3):
            pos[i, c] = h00 * r0[i, c] + h10 * h * v0[i, c] + h01 * r1[i, c] + h11 * h * v1[i, c]
            vel[i, c] = (d00 * r0[i, c] + d10 * h * v0[i, c] + d01 * r1[i, c]
                         + d11 * h * v1[i, c]) / h


@njit(cache=True, nogil=True)
def _wrapped(x, cell_km):
    """The wrapped cell index of one coordinate (WRAP is a power of two: & is the modulo,
    for negative indices too)."""
    return int(math.floor(x / cell_km)) & (WRAP - 1)


@njit(cache=True, nogil=True)
def _bin(pos, rows, cell_km, cell_of, counts, starts, order):
    """Counting sort of pos[rows] into wrapped cells: order[starts[b]:starts[b + 1]] are bin
    b's rows."""
    nb = counts.shape[0]
    counts[:] = 0
    for e in range(len(rows)):
        i = rows[e]
        b = (_wrapped(pos[i, 0], cell_km) * WRAP + _wrapped(pos[i, 1], cell_km)) * WRAP \
            + _wrapped(pos[i, 2], cell_km)
        cell_of[e] = b
        counts[b] += 1
    acc = 0
    for b in range(nb):
        starts[b] = acc
        acc += counts[b]
    starts[nb] = acc
    fill = starts[:nb].copy()
    for e in range(len(rows)):
        order[fill[cell_of[e]]] = rows[e]
        fill[cell_of[e]] += 1


@njit(cache=True, nogil=True)
def _test(a, b, pos, vel, s, reach_km, half, lim2):
    """Both tests of the module docstring for rows a, b at one instant."""
    rx = pos[b, 0] - pos[a, 0]
    ry = pos[b, 1] - pos[a, 1]
    rz = pos[b, 2] - pos[a, 2]
    rad = reach_km + (s[a] + s[b]) * half
    if rx * rx + ry * ry + rz * rz > rad * rad:
        return False
    wx = vel[b, 0] - vel[a, 0]
    wy = vel[b, 1] - vel[a, 1]
    wz = vel[b, 2] - vel[a, 2]
    w2 = max(wx * wx + wy * wy + wz * wz, 1e-30)
    tau = min(half, max(-half, -(rx * wx + ry * wy + rz * wz) / w2))
    ex, ey, ez = rx + wx * tau, ry + wy * tau, rz + wz * tau
    return ex * ex + ey * ey + ez * ez <= lim2


# the 13 neighbour offsets of a cell's half-space (each unordered pair of cells once) and
# the cell itself
_HALF = np.array([(dx, dy, dz) for dx in (-1, 0, 1) for dy in (-1, 0, 1) for dz in (-1, 0, 1)
                  if (dx, dy, dz) > (0, 0, 0)] + [(0, 0, 0)], dtype=np.int64)




@njit(cache=True, nogil=True)
def _push(out, n_out, ia, ib, k):
    if n_out == out.shape[0]:
        grown = np.empty((2 * out.shape[0], 3), np.int64)
        grown[:n_out] = out[:n_out]
        out = grown
    out[n_out, 0] = min(ia, ib)
    out[n_out, 1] = max(ia, ib)
    out[n_out, 2] = k
    return out, n_out + 1


@njit(cache=True, nogil=True)
def grid_pairs(r, v, usable, h_s, reach_km, substeps, slow_km_s, g_km_s2, margin_km):
    """(i, j, interval) rows, i < j, possibly repeated, of every pair and grid interval the two
    tests above keep at some sample instant.  r, v: (n, m, 3) states on the grid; usable:
    (n, m); objects with a speed bound above slow_km_s scan wider blocks of cells (the others
    pair through their own and the 26 neighbouring cells); margin_km: the curvature margin of
    the straight-line test."""
    n, m = usable.shape
    dt = h_s / substeps
    half = dt / 2.0
    lim2 = (reach_km + margin_km) ** 2
    nb = WRAP * WRAP * WRAP
    counts = np.zeros(nb, np.int64)
    starts = np.zeros(nb + 1, np.int64)
    out = np.empty((1 << 16, 3), np.int64)
    n_out = 0
    half_cells = _HALF
    for k in range(m - 1):
        idx = np.nonzero(usable[:, k] & usable[:, k + 1])[0]
        q_n = len(idx)
        if q_n < 2:
            continue
        r0, v0, r1, v1 = r[idx, k], v[idx, k], r[idx, k + 1], v[idx, k + 1]
        s = np.empty(q_n)
        for i in range(q_n):
            s0 = math.sqrt(v0[i, 0] ** 2 + v0[i, 1] ** 2 + v0[i, 2] ** 2)
            s1 = math.sqrt(v1[i, 0] ** 2 + v1[i, 1] ** 2 + v1[i, 2] ** 2)
            s[i] = max(s0, s1) + g_km_s2 * h_s / 2.0
        slow = np.nonzero(s <= slow_km_s)[0]
        fast = np.nonzero(s > slow_km_s)[0]
        s_slow = s[slow].max() if len(slow) else 0.0
        cell_km = reach_km + s_slow * dt
        pos = np.empty((q_n, 3))
        vel = np.empty((q_n, 3))
        cell_of = np.empty(len(slow), np.int64)
        order = np.empty(len(slow), np.int64)
        spos = np.empty((len(slow), 3))
        svel = np.empty((len(slow), 3))
        ss = np.empty(len(slow))
        for q in range(substeps):
            _hermite_at((q + 0.5) / substeps, h_s, r0, v0, r1, v1, pos, vel)
            _bin(pos, slow, cell_km, cell_of, counts, starts, order)
            # the slow rows in bin order, so that a cell's rows are contiguous in memory
            for e in range(len(slow)):
                spos[e] = pos[order[e]]
                svel[e] = vel[order[e]]
                ss[e] = s[order[e]]
            # slow x slow: each occupied cell against itself and its half-space neighbours
            for e0 in range(len(slow)):
                ax = int(math.floor(spos[e0, 0] / cell_km))
                ay = int(math.floor(spos[e0, 1] / cell_km))
                az = int(math.floor(spos[e0, 2] / cell_km))
                own = ((ax & (WRAP - 1)) * WRAP + (ay & (WRAP - 1))) * WRAP + (az & (WRAP - 1))
                if e0 != starts[own]:
                    continue            # the cell is taken from its first row
                for o in range(len(half_cells)):
                    bx = (ax + half_cells[o, 0]) & (WRAP - 1)
                    by = (ay + half_cells[o, 1]) & (WRAP - 1)
                    bz = (az + half_cells[o, 2]) & (WRAP - 1)
                    other = (bx * WRAP + by) * WRAP + bz
                    for ea in range(starts[own], starts[own + 1]):
                        eb0 = ea + 1 if other == own else starts[other]
                        for eb in range(eb0, starts[other + 1]):
                            if _test(ea, eb, spos, svel, ss, reach_km, half, lim2):
                                out, n_out = _push(out, n_out, idx[order[ea]], idx[order[eb]], k)
            # fast x slow: a block of cells wide enough for the fast one's radius
            for a in fast:
                ka = int(math.ceil((reach_km + s[a] * dt) / cell_km))
                ax = int(math.floor(pos[a, 0] / cell_km))
                ay = int(math.floor(pos[a, 1] / cell_km))
                az = int(math.floor(pos[a, 2] / cell_km))
                for dx in range(-ka, ka + 1):
                    for dy in range(-ka, ka + 1):
                        for dz in range(-ka, ka + 1):
                            other = ((((ax + dx) & (WRAP - 1)) * WRAP + ((ay + dy) & (WRAP - 1)))
                                     * WRAP + ((az + dz) & (WRAP - 1)))
                            for eb in range(starts[other], starts[other + 1]):
                                b = order[eb]
                                if _test(a, b, pos, vel, s, reach_km, half, lim2):
                                    out, n_out = _push(out, n_out, idx[a], idx[b], k)
            # fast x fast: every pair (they are few)
            for ea in range(len(fast)):
                for eb in range(ea + 1, len(fast)):
                    if _test(fast[ea], fast[eb], pos, vel, s, reach_km, half, lim2):
                        out, n_out = _push(out, n_out, idx[fast[ea]], idx[fast[eb]], k)
    return out[:n_out]

