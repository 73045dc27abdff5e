"""All-vs-all neighbour search on the sampling grid: a uniform grid of cells at each sample
instant, compiled with numba (one call per task, no Python per interval or per pair).

At each sample instant inside a grid interval every object's position and velocity come from
the cubic Hermite of its two end states (`ephemeris.hermite_cubic`'s arithmetic, as a loop
into buffers that the whole call reuses).  A pair is kept when

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


hermite_compiled = njit(cache=True, nogil=True)(hermite_cubic)


@njit(cache=True, nogil=True)
def hermite_weights(u):
    """hermite_cubic's weights at u of its four end terms (r0, v0 h, r1, v1 h): (position
    weights, velocity weights times h), from the compiled formula on unit end values; shared
    by the cell search and the bracket search."""
    w = np.empty(4)
    d = np.empty(4)
    for q in range(4):
        unit = np.zeros(4)
        unit[q] = 1.0
        w[q], d[q] = hermite_compiled(u, unit[0], unit[1], unit[2], unit[3], 1.0)
    return w, d


@njit(cache=True, nogil=True)
def _cell(x, per_km):
    """The (unwrapped) cell index of one coordinate (per_km: cells per km), offset by half a
    wrap period so that the wrap falls far from the origin (outside LEO for cells over 250 km):
    there, the three cells along z of a column are neighbouring bins."""
    return int(math.floor(x * per_km)) + WRAP // 2


@njit(cache=True, nogil=True)
def _bin_of(cx, cy, cz):
    """The bin of cell (cx, cy, cz) in the wrapped grid (WRAP is a power of two: & is the
    modulo, for negative indices too)."""
    return (((cx & (WRAP - 1)) * WRAP) + (cy & (WRAP - 1))) * WRAP + (cz & (WRAP - 1))


@njit(cache=True, nogil=True)
def _bin(pos, rows, per_km, cell_of, counts, starts, order):
    """Counting sort of pos[rows] into wrapped cells: order[starts[b]:starts[b + 1]] are bin
    b's rows."""
    nb = counts.shape[0]
    counts[:] = 0
    for e in range(len(rows)):
        i = rows[e]
        b = _bin_of(_cell(pos[i, 0], per_km), _cell(pos[i, 1], per_km), _cell(pos[i, 2], per_km))
        cell_of[e] = b
        counts[b] += 1
    acc = 0
    for b in range(nb):
        starts[b] = acc
        acc += counts[b]
        counts[b] = starts[b]       # from here on: where bin b's next row goes
    starts[nb] = acc
    for e in range(len(rows)):
        order[counts[cell_of[e]]] = rows[e]
        counts[cell_of[e]] += 1


@njit(cache=True, nogil=True)
def _test(a, b, pos, vel, s, acc, reach_km, half):
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
    lim = reach_km + (acc[a] + acc[b]) * half * half / 2.0
    return ex * ex + ey * ey + ez * ez <= lim * lim


@njit(cache=True, nogil=True)
def _near(a, lo, hi, pos, s, reach_km, half, hits, n_hit):
    """Test (1) of _test for row a against rows lo..hi-1, the rows that pass appended to
    hits[n_hit:]; returns the new count.  The same comparison as _test's, in a loop that
    does nothing else (the rows are contiguous; the rare pass goes on to the full test)."""
    ax, ay, az, sa = pos[a, 0], pos[a, 1], pos[a, 2], s[a]
    for b in range(lo, hi):
        rx = pos[b, 0] - ax
        ry = pos[b, 1] - ay
        rz = pos[b, 2] - az
        rad = reach_km + (sa + s[b]) * half
        if rx * rx + ry * ry + rz * rz <= rad * rad:
            hits[n_hit] = b
            n_hit += 1
    return n_hit


@njit(cache=True, nogil=True)
def _accel_bound(r0, v0h, r1, v1h, h_s):
    """The largest acceleration of one object's cubic Hermite over its interval: the
    interpolant's acceleration is linear in time, so its norm peaks at an end,
    (6 (r1 - r0) - 4 v0 h - 2 v1 h) / h^2 at the start and (6 (r0 - r1) + 2 v0 h + 4 v1 h) / h^2
    at the end."""
    a0 = 0.0
    a1 = 0.0
    for c in range(3):
        d = r1[c] - r0[c]
        a0 += (6.0 * d - 4.0 * v0h[c] - 2.0 * v1h[c]) ** 2
        a1 += (-6.0 * d + 2.0 * v0h[c] + 4.0 * v1h[c]) ** 2
    return math.sqrt(max(a0, a1)) / (h_s * h_s)


@njit(cache=True, nogil=True)
def _gather(r, v, idx, k, h_s, r0, v0h, r1, v1h):
    """The end states of interval k for rows idx, velocities times h, into the given buffers."""
    for e in range(len(idx)):
        i = idx[e]
        for c in range(3):
            r0[e, c] = r[i, k, c]
            v0h[e, c] = v[i, k, c] * h_s
            r1[e, c] = r[i, k + 1, c]
            v1h[e, c] = v[i, k + 1, c] * h_s


@njit(cache=True, nogil=True)
def _interpolate_into(u, r0, v0h, r1, v1h, h_s, n, pos, vel):
    """hermite_compiled at one u for the first n rows, written into pos, vel: the same
    arithmetic in the same order, without the temporary arrays of its array form (about 16
    arrays of n x 3 per instant)."""
    w, d = hermite_weights(u)
    h00, h10, h01, h11 = w[0], w[1], w[2], w[3]
    d00, d10, d01, d11 = d[0], d[1], d[2], d[3]
    for e in range(n):
        for c in range(3):
            pos[e, c] = h00 * r0[e, c] + h10 * v0h[e, c] + h01 * r1[e, c] + h11 * v1h[e, c]
            vel[e, c] = (d00 * r0[e, c] + d10 * v0h[e, c] + d01 * r1[e, c] + d11 * v1h[e, c]) / h_s


# the 13 neighbour offsets of a cell's half-space (each unordered pair of cells once) ...
_HALF = np.array([(dx, dy, dz) for dx in (-1, 0, 1) for dy in (-1, 0, 1) for dz in (-1, 0, 1)
                  if (dx, dy, dz) > (0, 0, 0)], dtype=np.int64)
# ... as the cell above in z and four whole columns of three cells (dz = -1, 0, 1), each a
# run of consecutive bins unless the column crosses the wrap in z
_COLUMNS = np.array([(0, 1), (1, -1), (1, 0), (1, 1)], dtype=np.int64)


@njit(cache=True, nogil=True)
def _neighbour_runs(ax, ay, az, starts, runs):
    """The rows of the 13 half-space neighbours of cell (ax, ay, az) as runs
    order[runs[q, 0]:runs[q, 1]]; returns how many runs."""
    own = _bin_of(ax, ay, az)
    if 0 < (az & (WRAP - 1)) < WRAP - 1:
        runs[0, 0], runs[0, 1] = starts[own + 1], starts[own + 2]
        for c in range(len(_COLUMNS)):
            mid = _bin_of(ax + _COLUMNS[c, 0], ay + _COLUMNS[c, 1], az)
            runs[c + 1, 0], runs[c + 1, 1] = starts[mid - 1], starts[mid + 2]
        return 1 + len(_COLUMNS)
    for o in range(len(_HALF)):
        other = _bin_of(ax + _HALF[o, 0], ay + _HALF[o, 1], az + _HALF[o, 2])
        runs[o, 0], runs[o, 1] = starts[other], starts[other + 1]
    return len(_HALF)


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
def grid_pairs(r, v, usable, h_s, reach_km, substeps, slow_km_s):
    """(i, j, interval) rows, i < j, possibly repeated, of every pair and grid interval the two
    tests above keep at some sample instant.  r, v: (n, m, 3) states on the grid; usable:
    (n, m); slow_km_s: the speed bound of the slow class."""
    n, m = usable.shape
    dt = h_s / substeps
    half = dt / 2.0
    nb = WRAP * WRAP * WRAP
    counts = np.zeros(nb, np.int64)
    starts = np.zeros(nb + 1, np.int64)
    out = np.empty((1 << 16, 3), np.int64)
    n_out = 0
    runs = np.empty((len(_HALF), 2), np.int64)
    cell_of = np.empty(n, np.int64)
    order = np.empty(n, np.int64)
    spos = np.empty((n, 3))
    svel = np.empty((n, 3))
    ss = np.empty(n)
    sacc = np.empty(n)
    r0, v0h, r1, v1h = np.empty((n, 3)), np.empty((n, 3)), np.empty((n, 3)), np.empty((n, 3))
    pos, vel = np.empty((n, 3)), np.empty((n, 3))
    acc, s = np.empty(n), np.empty(n)
    idx_all = np.empty(n, np.int64)
    hits = np.empty(n, np.int64)        # one row's neighbours within test (1)
    for k in range(m - 1):
        q_n = 0
        for i in range(n):
            if usable[i, k] and usable[i, k + 1]:
                idx_all[q_n] = i
                q_n += 1
        if q_n < 2:
            continue
        idx = idx_all[:q_n]
        _gather(r, v, idx, k, h_s, r0, v0h, r1, v1h)
        for i in range(q_n):
            acc[i] = _accel_bound(r0[i], v0h[i], r1[i], v1h[i], h_s)
        for q in range(substeps):
            _interpolate_into((q + 0.5) / substeps, r0, v0h, r1, v1h, h_s, q_n, pos, vel)
            for i in range(q_n):
                s[i] = math.sqrt(vel[i, 0] ** 2 + vel[i, 1] ** 2 + vel[i, 2] ** 2) + acc[i] * half
            slow = np.nonzero(s[:q_n] <= slow_km_s)[0]
            fast = np.nonzero(s[:q_n] > slow_km_s)[0]
            n_slow = len(slow)
            s_slow = s[slow].max() if n_slow else 0.0
            # a hair wider than the largest slow pair's radius, whatever the rounding of 1 / c
            cell_km = (reach_km + s_slow * dt) * (1.0 + 1e-9)
            per_km = 1.0 / cell_km
            _bin(pos, slow, per_km, cell_of, counts, starts, order)
            # the slow rows in bin order, so that a cell's rows are contiguous in memory
            for e in range(n_slow):
                spos[e] = pos[order[e]]
                svel[e] = vel[order[e]]
                ss[e] = s[order[e]]
                sacc[e] = acc[order[e]]
            # slow x slow: each occupied cell against itself and its half-space neighbours
            for e0 in range(n_slow):
                ax, ay, az = (_cell(spos[e0, 0], per_km), _cell(spos[e0, 1], per_km),
                              _cell(spos[e0, 2], per_km))
                own = _bin_of(ax, ay, az)
                if e0 != starts[own]:
                    continue            # the cell is taken from its first row
                a1 = starts[own + 1]
                n_runs = _neighbour_runs(ax, ay, az, starts, runs)
                for ea in range(e0, a1):
                    n_hit = _near(ea, ea + 1, a1, spos, ss, reach_km, half, hits, 0)
                    for q2 in range(n_runs):
                        n_hit = _near(ea, runs[q2, 0], runs[q2, 1], spos, ss, reach_km, half,
                                      hits, n_hit)
                    for e in range(n_hit):
                        eb = hits[e]
                        if _test(ea, eb, spos, svel, ss, sacc, reach_km, half):
                            out, n_out = _push(out, n_out, idx[order[ea]], idx[order[eb]], k)
            # fast x slow: a block of cells wide enough for the fast one's radius
            for a in fast:
                ka = int(math.ceil((reach_km + s[a] * dt) / cell_km * (1.0 + 1e-9)))
                ax, ay, az = (_cell(pos[a, 0], per_km), _cell(pos[a, 1], per_km),
                              _cell(pos[a, 2], per_km))
                for dx in range(-ka, ka + 1):
                    for dy in range(-ka, ka + 1):
                        for dz in range(-ka, ka + 1):
                            other = _bin_of(ax + dx, ay + dy, az + dz)
                            for eb in range(starts[other], starts[other + 1]):
                                b = order[eb]
                                if _test(a, b, pos, vel, s, acc, reach_km, half):
                                    out, n_out = _push(out, n_out, idx[a], idx[b], k)
            # fast x fast: every pair (they are few)
            for ea in range(len(fast)):
                for eb in range(ea + 1, len(fast)):
                    if _test(fast[ea], fast[eb], pos, vel, s, acc, reach_km, half):
                        out, n_out = _push(out, n_out, idx[fast[ea]], idx[fast[eb]], k)
    return out[:n_out]
