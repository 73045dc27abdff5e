"""Both coarse sieves against references outside the project.

All-vs-all (`screening.cells`): for every grid interval and sample instant the reference takes
every pair of objects (scipy.spatial.distance.pdist for the distances at the instant) and finds
each pair's closest straight-line approach over +-dt/2 with scipy.optimize.minimize_scalar
(bounded, xatol 1e-9); a pair is expected when both tests of `screening.cells` hold.  The
objects are placed to make the search's hard cases happen: clusters that straddle cell
boundaries, fast objects (speed bound above `sieve.SLOW_SPEED_KM_S`) that scan wider blocks,
objects exactly one wrap period (`cells.WRAP` cells) apart that share bins without being close,
and unusable samples.  Independently of how the two tests are stated, every pair whose
interpolated paths (the cubic Hermite, sampled every 0.05 s) come within reach on an interval
must be kept: the conservativeness the screening relies on.

Fleet (`screening.fleet_scan`): every interval in which the sgp4 library, sampled every second,
brings a secondary within reach of the primary must be kept.
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


def _bounds(r, v, idx, k, substeps):
    """Each object's speed bound s at each instant of interval k and its acceleration bound A
    (the interpolant's acceleration at the interval's ends, the larger norm), as the module
    text of `screening.cells` states them; and the positions and velocities at the instants."""
    r0, r1, w0, w1 = r[idx, k], r[idx, k + 1], v[idx, k] * H_S, v[idx, k + 1] * H_S
    acc = np.maximum(np.linalg.norm(6 * (r1 - r0) - 4 * w0 - 2 * w1, axis=1),
                     np.linalg.norm(6 * (r0 - r1) + 2 * w0 + 4 * w1, axis=1)) / H_S**2
    half = H_S / substeps / 2.0
    out = []
    for q in range(substeps):
        pos, vel = hermite_cubic((q + 0.5) / substeps, r0, w0, r1, w1, H_S)
        out.append((pos, vel, np.linalg.norm(vel, axis=1) + acc * half))
    return acc, out


def _cell_km(r, v, usable, k, substeps, q=0):
    """The cell side `cells.grid_pairs` uses at instant q of interval k: reach plus the largest
    speed bound of the slow objects times dt."""
    idx = np.nonzero(usable[:, k] & usable[:, k + 1])[0]
    _, inst = _bounds(r, v, idx, k, substeps)
    s = inst[q][2]
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
    # twins one wrap period away along each axis: at the first instant they share bins with
    # the originals without being close
    cell_km = _cell_km(r, v, usable, 0, substeps)
    for axis, a in enumerate(TWINS):
        r[n - 1 - a] = r[a] + np.eye(3)[axis] * cells.WRAP * cell_km
        v[n - 1 - a] = v[a]
    return r, v, usable


def _reference(r, v, usable, substeps):
    n, m, _ = r.shape
    half = H_S / substeps / 2.0
    sure, border = set(), set()
    for k in range(m - 1):
        idx = np.nonzero(usable[:, k] & usable[:, k + 1])[0]
        acc, inst = _bounds(r, v, idx, k, substeps)
        lim = REACH_KM + (acc[:, None] + acc[None, :]) * half * half / 2.0
        for pos, vel, s in inst:
            dist = squareform(pdist(pos))
            rad = REACH_KM + (s[:, None] + s[None, :]) * half
            for a, b in zip(*np.nonzero(np.triu(dist <= rad + BORDER_KM, 1))):
                rho, w = pos[b] - pos[a], vel[b] - vel[a]
                if dist[a, b] - np.linalg.norm(w) * half > lim[a, b] + 1.0:
                    continue        # the triangle inequality: it cannot come within lim
                best = minimize_scalar(lambda tau: np.linalg.norm(rho + w * tau),
                                       bounds=(-half, half), method="bounded",
                                       options={"xatol": 1e-9}).fun
                row = (idx[a], idx[b], k)
                if abs(dist[a, b] - rad[a, b]) < BORDER_KM or abs(best - lim[a, b]) < BORDER_KM:
                    border.add(row)
                elif dist[a, b] <= rad[a, b] and best <= lim[a, b]:
                    sure.add(row)
    return sure, border


def _close_paths(r, v, usable):
    """(i, j, interval) of every pair whose interpolated paths, sampled every 0.05 s, come
    within reach on the interval."""
    n, m, _ = r.shape
    u = np.linspace(0.0, 1.0, int(H_S / 0.05) + 1)
    out = set()
    for k in range(m - 1):
        idx = np.nonzero(usable[:, k] & usable[:, k + 1])[0]
        pos, _ = hermite_cubic(u[None, :, None], r[idx, k][:, None], v[idx, k][:, None] * H_S,
                               r[idx, k + 1][:, None], v[idx, k + 1][:, None] * H_S, H_S)
        for a in range(len(idx)):
            d = np.linalg.norm(pos[a + 1:] - pos[a][None], axis=2).min(axis=1)
            out |= {(idx[a], idx[a + 1 + b], k) for b in np.nonzero(d <= REACH_KM)[0]}
    return out


@pytest.mark.parametrize("seed,substeps", [(1, 4), (2, 2), (3, 6)])
def test_cell_search_equals_brute_force(seed, substeps):
    r, v, usable = _states(seed, substeps)
    got = {tuple(row) for row in sieve.all_pairs_candidates(r, v, usable, H_S, REACH_KM,
                                                            substeps).tolist()}
    sure, border = _reference(r, v, usable, substeps)
    assert len(sure) > 50                                  # the scenario has work in it
    assert sure <= got                                     # nothing the tests keep is lost
    assert got - sure <= border                            # and nothing else is kept
    close = _close_paths(r, v, usable)
    assert len(close) > 20 and close <= got                # no approach within reach is lost
    paired = {a for a, b, _ in close} | {b for a, b, _ in close}
    assert any(np.linalg.norm(v[i], axis=1).max() > sieve.SLOW_SPEED_KM_S for i in paired)
    twins = {(a, len(r) - 1 - a) for a in TWINS}
    assert not any((a, b) in twins for a, b, _ in got)


def test_rows_sorted_and_unique():
    r, v, usable = _states(4, 4)
    rows = sieve.all_pairs_candidates(r, v, usable, H_S, REACH_KM, 4)
    key = (rows[:, 2] * len(r) + rows[:, 0]) * len(r) + rows[:, 1]
    assert (np.diff(key) > 0).all() and (rows[:, 0] < rows[:, 1]).all()


def test_fleet_sieve_keeps_every_interval_sgp4_brings_within_reach():
    """The fleet sieve's bound against the sgp4 library sampled every second: every 240 s
    interval in which the true range (sgp4's own SatrecArray, 1 s steps) falls within reach
    must be kept, for head-on, crossing and slow encounters and a background."""
    from sgp4.api import SatrecArray

    from screener import synth
    from screener.timeutil import datetime_to_jd, parse_iso

    from .test_screening_reference import reference_satrec

    jd0, fr0 = datetime_to_jd(parse_iso("2026-12-02T00:00:00Z"))
    rng = np.random.default_rng(5)
    prim = synth.circular("90000001", "P", 550.0, 53.0, 10.0, 20.0, jd0, fr0 - 0.2)
    secs = [synth.engineer(prim, jd0, fr0 + rng.uniform(0.03, 0.22), f"E{k}", f"E{k}",
                           ("head-on", "crossing", "slow", "gto")[k % 4],
                           miss_km=rng.uniform(0.5, 20.0), rng=rng) for k in range(16)]
    secs += synth.background_catalog(120, jd0, fr0, seed=6, id_of=lambda k: f"B{k}")
    sats = SatrecArray([reference_satrec(x) for x in [prim] + secs])
    h_s, window_s, reach_km = 240.0, 0.25 * 86400.0, 25.0
    grid = np.arange(0.0, window_s + 1.0, h_s)
    e, r, v = sats.sgp4(np.full(len(grid), jd0), fr0 + grid / 86400.0)
    fine = np.arange(0.0, window_s + 0.5, 1.0)
    ef, rf, _ = sats.sgp4(np.full(len(fine), jd0), fr0 + fine / 86400.0)
    usable = e == 0
    rows = np.arange(1, len(secs) + 1)
    top = sieve.top_speeds(np.where(usable[..., None], v, np.nan)[rows])
    si, kk = sieve.fleet_candidates(r[0], v[0], usable[0], r, v, usable, rows, h_s, reach_km, top)
    kept = set(zip(rows[si].tolist(), kk.tolist()))
    rng_km = np.linalg.norm(rf[1:] - rf[0][None], axis=2)
    rng_km[(ef[1:] != 0) | (ef[0] != 0)[None]] = np.inf
    close = 0
    for j, t_idx in zip(*np.nonzero(rng_km <= reach_km)):
        k = min(int(fine[t_idx] // h_s), len(grid) - 2)
        if usable[0, k] and usable[0, k + 1] and usable[j + 1, k] and usable[j + 1, k + 1]:
            assert (j + 1, k) in kept, (j + 1, k, float(rng_km[j, t_idx]))
            close += 1
    assert close > 100                      # the encounters are there to be kept
    assert len(kept) < 0.2 * len(rows) * (len(grid) - 1)     # and the bound prunes
