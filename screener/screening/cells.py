"""All-vs-all neighbour search on the sampling grid: a uniform grid of cells at each sample
instant, compiled with numba (one call per task, no Python per interval or per pair).

At each sample instant inside a grid interval every object's position and velocity come from
the cubic Hermite of its two end states (`ephemeris.hermite_cubic`, compiled here).  A pair is
kept when

1. its distance at the instant is at most reach + (s_a + s_b) dt/2 (s the speed bounds over the
   interval: each object moves at most s dt/2 within +-dt/2 of the instant), and
2. its straight-line relative motion over +-dt/2 comes within reach plus the curvature margin.

Both are necessary for any approach within reach during +-dt/2, so the search is conservative.
The pairs are found by speed class.  Slow objects (speed bound at most `slow_km_s`) are binned
in cubic cells of side c = reach + s_slow dt, s_slow their largest bound, so that any pair of
them within its radius lies in the same or neighbouring cells: each occupied cell is tested
against itself and its 13 half-space neighbours, every pair of cells once.  Each fast object
scans the block of cells within ceil((reach + s_a dt) / c) of its own (it is the faster of any
fast x slow pair, whose radius is then at most reach + s_a dt), and fast objects are tested
against each other directly.  Cells are wrapped modulo `WRAP` per axis: positions that alias
share a bin and the distance test rejects them, so aliasing costs tests, never pairs.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..propagation.ephemeris import hermite_cubic

WRAP = 64     # cells per axis of the wrapped grid: 64^3 bins (2 MB of counts)


_hermite = njit(cache=True, nogil=True)(hermite_cubic)


@njit(cache=True, nogil=True)
def _cell(x, cell_km):
    """The (unwrapped) cell index of one coordinate."""
    return int(math.floor(x / cell_km))


@njit(cache=True, nogil=True)
def _bin_of(cx, cy, cz):
    """The bin of cell (cx, cy, cz) in the wrapped grid (WRAP is a power of two: & is the
    modulo, for negative indices too)."""
    return (((cx & (WRAP - 1)) * WRAP) + (cy & (WRAP - 1))) * WRAP + (cz & (WRAP - 1))


@njit(cache=True, nogil=True)
def _bin(pos, rows, cell_km, cell_of, counts, starts, order):
    """Counting sort of pos[rows] into wrapped cells: order[starts[b]:starts[b + 1]] are bin
    b's rows."""
    nb = counts.shape[0]
    counts[:] = 0
    for e in range(len(rows)):
        i = rows[e]
        b = _bin_of(_cell(pos[i, 0], cell_km), _cell(pos[i, 1], cell_km), _cell(pos[i, 2], cell_km))
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
    (n, m); slow_km_s: the speed bound of the slow class; margin_km: the curvature margin of
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
        v0h, v1h = v0 * h_s, v1 * h_s
        s = np.empty(q_n)
        for i in range(q_n):
            s0 = math.sqrt(v0[i, 0] ** 2 + v0[i, 1] ** 2 + v0[i, 2] ** 2)
            s1 = math.sqrt(v1[i, 0] ** 2 + v1[i, 1] ** 2 + v1[i, 2] ** 2)
            s[i] = max(s0, s1) + g_km_s2 * h_s / 2.0
        slow = np.nonzero(s <= slow_km_s)[0]
        fast = np.nonzero(s > slow_km_s)[0]
        s_slow = s[slow].max() if len(slow) else 0.0
        cell_km = reach_km + s_slow * dt
        cell_of = np.empty(len(slow), np.int64)
        order = np.empty(len(slow), np.int64)
        spos = np.empty((len(slow), 3))
        svel = np.empty((len(slow), 3))
        ss = np.empty(len(slow))
        for q in range(substeps):
            pos, vel = _hermite((q + 0.5) / substeps, r0, v0h, r1, v1h, h_s)
            _bin(pos, slow, cell_km, cell_of, counts, starts, order)
            # the slow rows in bin order, so that a cell's rows are contiguous in memory
            for e in range(len(slow)):
                spos[e] = pos[order[e]]
                svel[e] = vel[order[e]]
                ss[e] = s[order[e]]
            # slow x slow: each occupied cell against itself and its half-space neighbours
            for e0 in range(len(slow)):
                ax, ay, az = (_cell(spos[e0, 0], cell_km), _cell(spos[e0, 1], cell_km),
                              _cell(spos[e0, 2], cell_km))
                own = _bin_of(ax, ay, az)
                if e0 != starts[own]:
                    continue            # the cell is taken from its first row
                for o in range(len(half_cells)):
                    other = _bin_of(ax + half_cells[o, 0], ay + half_cells[o, 1],
                                    az + half_cells[o, 2])
                    for ea in range(starts[own], starts[own + 1]):
                        eb0 = ea + 1 if other == own else starts[other]
                        for eb in range(eb0, starts[other + 1]):
                            if _test(ea, eb, spos, svel, ss, reach_km, half, lim2):
                                out, n_out = _push(out, n_out, idx[order[ea]], idx[order[eb]], k)
            # fast x slow: a block of cells wide enough for the fast one's radius
            for a in fast:
                ka = int(math.ceil((reach_km + s[a] * dt) / cell_km))
                ax, ay, az = (_cell(pos[a, 0], cell_km), _cell(pos[a, 1], cell_km),
                              _cell(pos[a, 2], cell_km))
                for dx in range(-ka, ka + 1):
                    for dy in range(-ka, ka + 1):
                        for dz in range(-ka, ka + 1):
                            other = _bin_of(ax + dx, ay + dy, az + dz)
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

