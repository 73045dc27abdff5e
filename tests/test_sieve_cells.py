"""The all-vs-all sieve's compiled cell search against a brute-force reference built from scipy.

For every grid interval and sample instant the reference takes every pair of objects
(scipy.spatial.distance.pdist for the distances at the instant) and finds each pair's closest
straight-line approach over +-dt/2 with scipy.optimize.minimize_scalar (bounded, xatol 1e-9);
a pair is expected when both tests of `screening.cells` hold.  The objects are placed to make
the search's hard cases happen: clusters that straddle cell boundaries, fast objects (speed
bound above `sieve.SLOW_SPEED_KM_S`) that scan wider blocks, objects exactly one wrap period
(`cells.WRAP` cells) apart that share bins without being close, and unusable samples.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import minimize_scalar
from scipy.spatial.distance import pdist, squareform

from screener.propagation.ephemeris import hermite_cubic
from screener.screening import cells, sieve

H_S = 120.0
REACH_KM = 7.0
BORDER_KM = 1e-6     # pairs this close to a threshold are left out of the comparison
TWINS = (0, 1, 2)


def _cell_km(v, usable, k, substeps):
    """The cell side `cells.grid_pairs` uses on interval k: reach plus the largest speed bound
    of the slow objects times dt (its docstring)."""
    ok = usable[:, k] & usable[:, k + 1]
    speed = np.linalg.norm(v, axis=2)
    s = np.maximum(speed[ok, k], speed[ok, k + 1]) + sieve.G_KM_S2 * H_S / 2.0
    return REACH_KM + s[s <= sieve.SLOW_SPEED_KM_S].max() * H_S / substeps


def _states(seed: int, substeps: int, n: int = 240, m: int = 4):
    rng = np.random.default_rng(seed)
    r = np.empty((n, m, 3))
    v = np.empty((n, m, 3))
    centre = rng.normal(size=(n, 3)) * 40.0 + np.array([6900.0, 0.0, 0.0])
    speed = np.where(rng.random(n) < 0.15, rng.uniform(8.7, 10.5, n), rng.uniform(6.5, 7.8, n))
    heading = rng.normal(size=(n, 3))
    heading /= np.linalg.norm(heading, axis=1)[:, None]
    turn = rng.normal(size=(n, 3)) * 1e-3          # a small acceleration, km/s^2
    for k in range(m):
        tk = (k - m / 2) * H_S
        r[:, k] = centre + heading * speed[:, None] * tk + 0.5 * turn * tk * tk
        v[:, k] = heading * speed[:, None] + turn * tk
    usable = rng.random((n, m)) > 0.03
    usable[list(TWINS) + [n - 1 - a for a in TWINS], :2] = True
    # twins one wrap period away along each axis: on the first interval they share bins
    # with the originals without being close
    cell_km = _cell_km(v, usable, 0, substeps)
    for axis, a in enumerate(TWINS):
        r[n - 1 - a] = r[a] + np.eye(3)[axis] * cells.WRAP * cell_km
        v[n - 1 - a] = v[a]
    return r, v, usable


def _reference(r, v, usable, substeps):
    n, m, _ = r.shape
    dt = H_S / substeps
    half = dt / 2.0
    margin = sieve.LINEAR_SAFETY * sieve.ACCEL_BOUND_KM_S2 * half * half / 2.0
    lim = REACH_KM + margin
    speed = np.linalg.norm(v, axis=2)
    sure, border = set(), set()
    for k in range(m - 1):
        idx = np.nonzero(usable[:, k] & usable[:, k + 1])[0]
        s = np.maximum(speed[idx, k], speed[idx, k + 1]) + sieve.G_KM_S2 * H_S / 2.0
        for q in range(substeps):
            pos, vel = hermite_cubic((q + 0.5) / substeps, r[idx, k], v[idx, k] * H_S,
                                     r[idx, k + 1], v[idx, k + 1] * H_S, H_S)
            dist = squareform(pdist(pos))
            rad = REACH_KM + (s[:, None] + s[None, :]) * half
            for a, b in zip(*np.nonzero(np.triu(dist <= rad + BORDER_KM, 1))):
                rho, w = pos[b] - pos[a], vel[b] - vel[a]
                if dist[a, b] - np.linalg.norm(w) * half > lim + 1.0:
                    continue        # the triangle inequality: it cannot come within lim
                best = minimize_scalar(lambda tau: np.linalg.norm(rho + w * tau),
                                       bounds=(-half, half), method="bounded",
                                       options={"xatol": 1e-9}).fun
                row = (idx[a], idx[b], k)
                if abs(dist[a, b] - rad[a, b]) < BORDER_KM or abs(best - lim) < BORDER_KM:
                    border.add(row)
                elif dist[a, b] <= rad[a, b] and best <= lim:
                    sure.add(row)
    return sure, border


@pytest.mark.parametrize("seed,substeps", [(1, 4), (2, 2), (3, 6)])
def test_cell_search_equals_brute_force(seed, substeps):
    r, v, usable = _states(seed, substeps)
    got = {tuple(row) for row in sieve.all_pairs_candidates(r, v, usable, H_S, REACH_KM,
                                                            substeps).tolist()}
    sure, border = _reference(r, v, usable, substeps)
    assert len(sure) > 50                                  # the scenario has work in it
    assert sure <= got                                     # nothing the tests keep is lost
    assert got - sure <= border                            # and nothing else is kept
    paired = {a for a, b, _ in sure} | {b for a, b, _ in sure}
    assert any(np.linalg.norm(v[i], axis=1).max() > sieve.SLOW_SPEED_KM_S for i in paired)
    twins = {(a, len(r) - 1 - a) for a in TWINS}
    assert not any((a, b) in twins for a, b, _ in got)


def test_rows_sorted_and_unique():
    r, v, usable = _states(4, 4)
    rows = sieve.all_pairs_candidates(r, v, usable, H_S, REACH_KM, 4)
    key = (rows[:, 2] * len(r) + rows[:, 0]) * len(r) + rows[:, 1]
    assert (np.diff(key) > 0).all() and (rows[:, 0] < rows[:, 1]).all()
