"""The screening engine: plan self-contained tasks, run them (here, on local processes, or on
a Dask cluster), gather encounters.

A task is (primaries, secondaries, time span) with element sets as plain records, so it pickles
and runs anywhere.  Fleet-vs-catalog tasks cut the window into spans and the secondaries into
chunks; all-vs-all tasks cut the window into spans (each holds the whole population, which the
spatial index needs).
"""

from __future__ import annotations

import dataclasses
import math
import time
from concurrent.futures import as_completed
from typing import Callable, Sequence

import numpy as np

from ..elements.oem import Oem
from ..elements.record import ElementSet
from ..errors import ScreenerError
from ..gcpause import gc_paused
from ..propagation import codes
from ..propagation.ephemeris import Population
from ..workers import result_of
from . import encounter_columns
from .shared_records import Records
from .encounter import (SLOW_RELATIVE_SPEED_KM_S, Encounter, add_range_profiles, fill_altitudes,
                        make_encounters)
from .filters import (apogee_perigee_mask, bounds_array, orbit_columns, radial_bounds_km,
                      radial_bounds_many)
from .refine import VolumeCrossings, brackets_from_candidates, solve_tcas
from .ric import to_ric
from .sieve import all_pairs_candidates, fleet_candidates, top_speeds
from .volume import Volume

# Grid steps.  Cubic Hermite midpoint error measured against SGP4 over one day:
#   120 s: 5 m LEO 550 km, 7 m LEO 300 km, 25 m GTO, 19 m Molniya-type HEO
#   240 s: 87 m, 104 m, 346 m, 273 m
# both far inside INTERP_MARGIN_KM.  Both modes use 240 s: neither coarse stage's bound
# depends on the step (the fleet sieve bounds each interval by its end states and speeds; the
# all-vs-all cell search tests instants SIEVE_INSTANT_SPACING_S apart with the interpolant's
# own speed and acceleration bounds), and the TCA is solved on the real propagator.  At 120 s
# the all-vs-all propagation was twice the work for the same sieve (measured on the
# 30,000-object day: the same 70,548 encounters, TCA within 1 us, propagation 10.0 -> 5.9 task
# CPU s; DEVELOPERS.md).
FLEET_STEP_S = 240.0
ALL_VS_ALL_STEP_S = 240.0
INTERP_MARGIN_KM = 2.0        # added to the volume's bounding radius in both coarse stages
SIEVE_INSTANT_SPACING_S = 30.0        # cell-search instants this far apart (all-vs-all) ...
SIEVE_INSTANT_SPACING_SMALL_S = 60.0  # ... and for a task of fewer objects than
SIEVE_SMALL_OBJECTS = 15_000          # SIEVE_SMALL_OBJECTS, where each instant's fixed cost
                                      # (binning every object) outweighs the candidates it
                                      # saves (measured, DEVELOPERS.md)
MAX_SECONDARIES_PER_TASK = 4000
# Planned peak memory of one task, so that a task fits a 4 GB worker: an all-vs-all span holds
# every object's states, so large catalogs get more, shorter spans.  Measured (DEVELOPERS.md):
# 158 bytes per object and grid sample (r, v, codes, masks, SGP4's chunk output, the sieve's
# interpolated positions), and about 12 kB per object whatever the span (its element set and
# Satrec, the task's pickled input, a Dask worker's copies).
TASK_MEMORY_BUDGET_MB = 3000.0
TASK_FIXED_MB = 300.0             # interpreter and libraries
BYTES_PER_OBJECT = 12_000.0
BYTES_PER_OBJECT_SAMPLE = 170.0   # measured 158 (30,000 objects, 91 and 181 samples)
DEDUPE_TOL_S = 1e-3

Progress = Callable[[str, int, int], None]


@dataclasses.dataclass
class ScreeningRequest:
    catalog: list[ElementSet]
    jd0: float
    fr0: float
    duration_s: float
    volume: Volume
    primaries: list[ElementSet] = dataclasses.field(default_factory=list)
    primary_oems: list[Oem] = dataclasses.field(default_factory=list)
    coarse_step_s: float | None = None     # None: FLEET_STEP_S or ALL_VS_ALL_STEP_S

    @property
    def step_s(self) -> float:
        if self.coarse_step_s is not None:
            return self.coarse_step_s
        return ALL_VS_ALL_STEP_S if self.all_vs_all else FLEET_STEP_S
    workers: int = 1

    @property
    def all_vs_all(self) -> bool:
        return not self.primaries and not self.primary_oems


@dataclasses.dataclass
class Task:
    primaries: Sequence[ElementSet]     # plan_tasks gives shared_records.Records
    primary_oems: list[Oem]
    secondaries: Sequence[ElementSet]
    jd0: float
    fr0: float
    t0_s: float
    t1_s: float
    window_s: float
    volume: Volume
    step_s: float
    all_vs_all: bool
    last_span: bool
    # object id -> seconds from the window start from which its states are not used (it
    # re-entered earlier in the window, maybe in another task's span)
    cutoff_s: dict[str, float] = dataclasses.field(default_factory=dict)


@dataclasses.dataclass(frozen=True)
class Unusable:
    """What made an object's states unusable, merged over every task of a screening."""
    code: int             # the first bad sample's code (propagation.codes)
    first_bad_s: float    # seconds from the window start
    bad_s: float          # time not screened: bad samples x the grid step

    def merge(self, other: "Unusable") -> "Unusable":
        first = self if self.first_bad_s <= other.first_bad_s else other
        return Unusable(first.code, first.first_bad_s, self.bad_s + other.bad_s)

    def describe(self, jd0: float, fr0: float, window_s: float) -> str:
        from ..timeutil import iso_z, jd_to_datetime

        when = iso_z(jd_to_datetime(jd0, fr0 + self.first_bad_s / 86400.0), 0)
        share = min(1.0, self.bad_s / window_s)
        return f"{codes.describe(self.code)} from {when}; {share:.0%} of the window not screened"


@dataclasses.dataclass
class TaskResult:
    encounters: list[Encounter]
    unusable: dict[str, Unusable]
    stats: dict[str, float]

    # pickled with its encounters as columns (encounter_columns): the trip back from a worker
    # is part of every task's cost
    def __getstate__(self) -> dict:
        cols = encounter_columns.pack(self.encounters)
        return {**self.__dict__, "encounters": self.encounters if cols is None else cols,
                "packed": cols is not None}

    def __setstate__(self, state: dict) -> None:
        state = dict(state)
        if state.pop("packed", False):
            state["encounters"] = encounter_columns.unpack(state["encounters"])
        self.__dict__.update(state)


@dataclasses.dataclass
class ScreeningResult:
    encounters: list[Encounter]
    unusable: dict[str, str]          # catalog id -> why (some or all of the window skipped)
    stats: dict[str, float]
    request: ScreeningRequest


class Cancelled(ScreenerError):
    pass


def _grid(t0: float, t1: float, step: float) -> np.ndarray:
    n = max(1, math.ceil((t1 - t0) / step - 1e-9))
    return np.linspace(t0, t1, n + 1)


@gc_paused
def run_task(task: Task) -> TaskResult:
    """Run one task to completion; pure function of its input (safe in any worker)."""
    t_start = time.perf_counter()
    prim = list(task.primaries)
    sec = list(task.secondaries)
    n_fill = 0
    if not task.all_vs_all:
        # radial bounds once per secondary; the secondaries the two-body fill covers first, so
        # that their rows are one block
        orbits = orbit_columns(sec)
        bounds = _bounds_many(sec, task, orbits)
        ok = _fillable(sec, bounds[:, 0], orbits["period_s"], task)
        order = np.r_[np.nonzero(ok)[0], np.nonzero(~ok)[0]].astype(int)
        sec, bounds = [sec[k] for k in order.tolist()], bounds[order]
        n_fill = int(ok.sum())
    pop = Population(prim + sec, oems=task.primary_oems)
    n_p_rec = len(prim)
    p_rows = list(range(n_p_rec)) + list(range(len(prim) + len(sec), len(pop)))
    s_rows = list(range(n_p_rec, n_p_rec + len(sec)))
    t = _grid(task.t0_s, task.t1_s, task.step_s)
    h = t[1] - t[0]
    if task.all_vs_all:
        r, v, code = pop.states(task.jd0, task.fr0, t)
        filled = np.zeros(len(pop), bool)
        fill_pos_km = fill_vel_km_s = 0.0
    else:
        r, v, code, filled, fill_pos_km, fill_vel_km_s = _fleet_states(
            pop, task, t, np.arange(n_p_rec, n_p_rec + n_fill))
    cutoff = _apply_decay(pop, t, code, task.cutoff_s)
    usable = code == codes.OK
    stats = {"objects": len(pop), "grid_points": len(t), "propagate_s": time.perf_counter() - t_start,
             "t0_s": task.t0_s, "t1_s": task.t1_s, "filled": int(filled.sum())}
    unusable = {}
    for k in np.nonzero(~usable.all(axis=1))[0]:
        bad = np.nonzero(code[k] != codes.OK)[0]
        # each sample stands for one grid step (the span's end sample belongs to the next span)
        n_bad = len(bad) - (1 if bad[-1] == len(t) - 1 and not task.last_span else 0)
        unusable[pop.ids[k]] = Unusable(int(code[k][bad[0]]), float(t[bad[0]]), n_bad * h)
    reach = task.volume.bounding_radius_km + INTERP_MARGIN_KM
    row_of = np.arange(len(pop))
    brackets = []
    t_sieve = time.perf_counter()
    if task.all_vs_all:
        spacing_s = SIEVE_INSTANT_SPACING_S if len(pop) >= SIEVE_SMALL_OBJECTS else SIEVE_INSTANT_SPACING_SMALL_S
        substeps = max(1, round(h / spacing_s))
        trip = all_pairs_candidates(r, v, usable, h, reach, substeps)
        stats["candidates"] = len(trip)
        brackets = brackets_from_candidates(t, r, v, trip[:, 0], trip[:, 1], trip[:, 2], reach, row_of)
    else:
        s_arr = np.array(s_rows, int)
        if len(s_arr):
            s_bounds = bounds
            s_top = top_speeds(v)[s_arr]      # no copy of the rows
        # a filled secondary's fine states are two-body from the nearest exact sample: its
        # reach grows by the fill's position bound and, for the range-rate term h W / 2, by
        # h times its velocity bound over 2
        s_reach = reach + np.where(filled[s_arr], fill_pos_km + h * fill_vel_km_s / 2.0, 0.0)
        n_cand = 0
        filter_s = 0.0
        cand = []
        for p in p_rows:
            if not len(s_arr):
                break
            t_f = time.perf_counter()
            p_b = bounds_array([_pop_bounds(pop, p, task)])
            mask = apogee_perigee_mask(p_b, s_bounds, reach)[0]
            mask &= np.array([pop.ids[s] != pop.ids[p] for s in s_arr])
            ss = s_arr[mask]
            filter_s += time.perf_counter() - t_f
            if not len(ss):
                continue
            si, kk = fleet_candidates(r[p], v[p], usable[p], r, v, usable, ss, h, s_reach[mask],
                                      s_top[mask])
            n_cand += len(si)
            cand.append((np.full(len(si), p), ss[si], kk))
        if cand:
            ci, cj, ck = (np.concatenate(x) for x in zip(*cand))
            _exact_at(pop, task, t, r, v, code, filled, cj, ck)
            brackets = brackets_from_candidates(t, r, v, ci, cj, ck, reach, row_of)
        stats["candidates"] = n_cand
        stats["filter_s"] = filter_s
    stats["sieve_s"] = time.perf_counter() - t_sieve - stats.get("filter_s", 0.0)
    stats["brackets"] = len(brackets)
    t_ref = time.perf_counter()
    out = _refine(pop, brackets, task, cutoff)
    stats["refine_s"] = time.perf_counter() - t_ref
    out = _dedupe(out)
    fill_altitudes(out)         # here, where the task's worker computes them alongside others
    stats["peak_rss_mb"] = _peak_rss_mb()
    return TaskResult(out, unusable, stats)


def _fillable(recs: Sequence[ElementSet], min_radius_km: np.ndarray, period_s: np.ndarray,
              task: Task) -> np.ndarray:
    """Which secondaries the two-body fill's bound covers over the task: near-earth element
    sets (SGP4's deep-space branch is left out) that do not re-enter in the window and whose
    lowest radius (their radial bound) stays above kepler_fill.FILL_MIN_PERIGEE_KM."""
    from ..constants import RE_WGS72_KM
    from ..propagation.kepler_fill import FILL_MIN_PERIGEE_KM
    from .filters import DEEP_SPACE_PERIOD_S

    kept = np.array([rec.catalog_id not in task.cutoff_s for rec in recs], bool)
    return (kept & (period_s < DEEP_SPACE_PERIOD_S)
            & (min_radius_km >= RE_WGS72_KM + FILL_MIN_PERIGEE_KM))


def _fleet_states(pop: Population, task: Task, t: np.ndarray, fill_rows: np.ndarray):
    """Grid states for a fleet task: exact SGP4 everywhere for the primaries and the
    secondaries the two-body fill does not cover, and for the block `fill_rows` of fillable
    secondaries exact at every COARSE_EVERY-th point with the two-body fill between
    (propagation.kepler_fill); one of those with a bad sample there is propagated exactly
    instead.  Returns r, v, code, which rows are filled, and the fill's position (km) and
    velocity (km/s) bounds."""
    from ..propagation.kepler_fill import coarse_indices, fill_between, fill_pads

    n, m = len(pop), len(t)
    r = np.empty((n, m, 3))
    v = np.empty((n, m, 3))
    code = np.empty((n, m), dtype=np.int8)
    filled = np.zeros(n, bool)
    cidx = coarse_indices(m)
    tau_max = 0.0
    if len(fill_rows) and len(cidx) < m:
        a, b = int(fill_rows[0]), int(fill_rows[-1]) + 1       # one block of rows: views
        rc, vc, cc = pop.states(task.jd0, task.fr0, t[cidx], rows=fill_rows)
        r[a:b, cidx], v[a:b, cidx] = rc, vc
        del rc, vc
        tau_max = fill_between(r[a:b], v[a:b], t)
        code[a:b] = codes.OK
        filled[a:b] = (cc == codes.OK).all(axis=1)
    exact = np.nonzero(~filled)[0]
    if len(exact):
        r[exact], v[exact], code[exact] = pop.states(task.jd0, task.fr0, t, rows=exact)
    pos_km, vel_km_s = fill_pads(tau_max)
    return r, v, code, filled, pos_km, vel_km_s


def _exact_at(pop: Population, task: Task, t: np.ndarray, r, v, code, filled, rows, k) -> None:
    """Exact SGP4 states, in place, at both ends of every candidate interval (rows[n], k[n])
    of a filled secondary: brackets and TCA never see a two-body state.  A state SGP4 cannot
    give there is marked in `code` and left NaN (no bracket can form on it)."""
    sel = filled[rows]
    if not sel.any():
        return
    rr = np.r_[rows[sel], rows[sel]]
    kk = np.r_[k[sel], k[sel] + 1]
    key = np.unique(rr.astype(np.int64) * len(t) + kk)
    rr, kk = key // len(t), key % len(t)
    er, ev, ec = pop.states_at(rr, task.jd0, task.fr0, t[kk])
    r[rr, kk], v[rr, kk], code[rr, kk] = er, ev, ec


def _refine(pop: Population, brackets: list, task: Task, cutoff: dict[str, float]) -> list[Encounter]:
    """TCA of every bracket on the real propagator, then the encounters inside the volume,
    each stage over all brackets of the task at once."""
    tca = solve_tcas(pop, brackets, task.jd0, task.fr0, 0.0, task.window_s)
    bi = np.array([b.i for b in brackets], int)
    bj = np.array([b.j for b in brackets], int)
    cut = np.array([min(cutoff.get(pop.ids[a], math.inf), cutoff.get(pop.ids[b], math.inf))
                    for a, b in zip(bi.tolist(), bj.tolist())])
    with np.errstate(invalid="ignore"):
        # after one of the two re-entered: not a state to trust
        ok = np.isfinite(tca) & (tca < cut) if len(tca) else np.zeros(0, bool)
        in_span = (task.t0_s <= tca) & (tca < task.t1_s)
        if task.last_span:
            in_span |= tca <= task.t1_s
    keep = np.nonzero(ok & in_span)[0]
    encs = make_encounters(pop, bi[keep], bj[keep], tca[keep], task.jd0, task.fr0)
    ric = np.array([[e.radial_km, e.in_track_km, e.cross_track_km] for e in encs]).reshape(-1, 3)
    inside = task.volume.contains(ric)
    encs = [e for e, k in zip(encs, inside) if k]
    keep = keep[inside]
    crossings = VolumeCrossings(pop, task.jd0, task.fr0, task.volume, 0.0, task.window_s)
    for e, a, b in zip(encs, bi[keep].tolist(), bj[keep].tolist()):
        if e.relative_speed_km_s < SLOW_RELATIVE_SPEED_KM_S:
            e.entry_s, e.exit_s = crossings.times(a, b, e.tca_s)
    add_range_profiles(pop, encs, bi[keep], bj[keep])
    return encs


def _peak_rss_mb() -> float:
    """The process's peak resident memory so far (Linux reports KiB)."""
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


# SGP4's decay codes and our re-entry gate: once one is seen, nothing later is used
DECAY_CODES = (1, 6, codes.BELOW_100_KM)
DECAY_PERIGEE_KM = 400.0      # only objects with a perigee below this altitude are pre-checked
DECAY_PROBE_STEP_S = 60.0
DECAY_COARSE_STEP_S = 600.0


def _first_decay(code: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(rows, first sample index) of the rows of `code` (objects x samples) that hold a
    decay code."""
    dec = np.isin(code, DECAY_CODES)
    rows = np.nonzero(dec.any(axis=1))[0]
    return rows, dec[rows].argmax(axis=1)


def _apply_decay(pop: Population, t: np.ndarray, code: np.ndarray,
                 cutoff_s: dict[str, float]) -> dict[str, float]:
    """Mark, in place, every sample at or after an object's re-entry as unusable: from the
    window-wide cutoff found by plan_tasks, and from the task's own first decay sample.
    Returns the cutoff per object id (seconds from the window start)."""
    out = dict(cutoff_s)
    if cutoff_s:
        for k, oid in enumerate(pop.ids):
            if oid in cutoff_s:
                late = (t >= cutoff_s[oid]) & (code[k] == codes.OK)
                code[k][late] = codes.BELOW_100_KM
    rows, first = _first_decay(code)
    for k, f in zip(rows, first):
        tail = code[k][f:]
        tail[tail == codes.OK] = code[k][f]
        out[pop.ids[k]] = min(out.get(pop.ids[k], math.inf), float(t[f]))
    return out


DECAY_PROBE_MIN_PARALLEL = 200   # objects below which the probe is not split over workers


def decay_cutoffs(catalog: Sequence[ElementSet], jd0: float, fr0: float, duration_s: float,
                  executor=None, parts: int = 1) -> dict[str, float]:
    """First re-entry time in the window (s) of each low-perigee object that re-enters: a
    cheap whole-window probe, so that every task ignores it from then on.  Probed at
    DECAY_COARSE_STEP_S, then at DECAY_PROBE_STEP_S over the coarse interval before each first
    decay found (SGP4's decay codes persist once reached, and an object whose perigee dips
    under the 100 km gate dips deeper on each later pass), so the cutoff is the fine probe's
    for a tenth of its samples: low-perigee objects are mostly transfer orbits on the slower
    deep-space branch.  With an executor the objects are probed in `parts` chunks on its
    workers (the probe runs before any task can start)."""
    from ..constants import RE_WGS72_KM

    perigee_km = orbit_columns(catalog)["perigee_km"]
    low = [catalog[k] for k in np.nonzero(perigee_km - RE_WGS72_KM < DECAY_PERIGEE_KM)[0].tolist()]
    if executor is None or parts <= 1 or len(low) < DECAY_PROBE_MIN_PARALLEL:
        return _probe_decay(low, jd0, fr0, duration_s)
    size = -(-len(low) // parts)
    futures = [executor.submit(_probe_decay, low[a:a + size], jd0, fr0, duration_s)
               for a in range(0, len(low), size)]
    out: dict[str, float] = {}
    for fut in futures:
        out.update(result_of(fut, "a re-entry probe"))
    return out


def _probe_decay(low: Sequence[ElementSet], jd0: float, fr0: float,
                 duration_s: float) -> dict[str, float]:
    """decay_cutoffs for these objects, in this process."""
    from ..propagation.sgp4_batch import Sgp4Batch

    if not low:
        return {}
    t = _grid(0.0, duration_s, DECAY_COARSE_STEP_S)
    _, _, code = Sgp4Batch(low).states(jd0, fr0, t)
    rows, first = _first_decay(code)
    out = {}
    for k, f in zip(rows, first):
        lo = t[f - 1] if f > 0 else t[f]
        fine = _grid(lo, float(t[f]), DECAY_PROBE_STEP_S)
        _, _, c = Sgp4Batch([low[k]]).states(jd0, fr0, fine)
        hit, at = _first_decay(c)
        out[low[k].catalog_id] = float(fine[at[0]]) if len(hit) else float(t[f])
    return out


def _bounds(rec: ElementSet, task: Task):
    age0 = rec.age_days_at(task.jd0, task.fr0)
    return radial_bounds_km(rec, task.window_s / 86400.0, age0)


def _bounds_many(recs: Sequence[ElementSet], task: Task, orbits: dict | None = None) -> np.ndarray:
    """_bounds of many element sets, (n, 2), the same numbers in array operations."""
    ages = np.array([r.age_days_at(task.jd0, task.fr0) for r in recs], float)
    return radial_bounds_many(recs, task.window_s / 86400.0, ages, orbits)


def _pop_bounds(pop: Population, k: int, task: Task):
    if pop.is_sgp4(k):
        return _bounds(pop.records[k], task)
    orb = pop.orbit(k)
    return orb.perigee_radius_km - 50.0, orb.apogee_radius_km + 50.0


def _dedupe(encs: list[Encounter]) -> list[Encounter]:
    """One encounter per pair and TCA: in (primary, secondary, TCA) order, an encounter within
    DEDUPE_TOL_S of the pair's last kept one is dropped.  Returned in (TCA, primary,
    secondary) order.  The sorts are numpy's (stable); only runs of one pair closer than the
    tolerance, and runs of equal TCAs, which are both rare, are walked in Python."""
    n = len(encs)
    if n < 2:
        return list(encs)
    tca = np.array([e.tca_s for e in encs], float)
    codes: dict[tuple[str, str], int] = {}
    pair = np.array([codes.setdefault((e.primary, e.secondary), len(codes)) for e in encs], np.int64)
    order = np.lexsort((tca, pair))
    close = (pair[order][1:] == pair[order][:-1]) & (np.diff(tca[order]) < DEDUPE_TOL_S)
    keep = np.ones(n, bool)
    for k in np.nonzero(close)[0].tolist():      # the start of a run of close neighbours
        if k > 0 and close[k - 1]:
            continue
        last = k
        while k < n - 1 and close[k]:
            k += 1
            if tca[order[k]] - tca[order[last]] < DEDUPE_TOL_S:
                keep[order[k]] = False
            else:
                last = k
    idx = np.nonzero(keep)[0]
    idx = idx[np.argsort(tca[idx], kind="stable")]
    out = [encs[i] for i in idx.tolist()]
    ties = np.nonzero(np.diff(tca[idx]) == 0.0)[0]
    for k in ties.tolist():                      # equal TCAs: in (primary, secondary) order
        if k > 0 and tca[idx[k - 1]] == tca[idx[k]]:
            continue
        j = k + 1
        while j + 1 < len(idx) and tca[idx[j + 1]] == tca[idx[k]]:
            j += 1
        out[k:j + 1] = sorted(out[k:j + 1], key=lambda e: (e.primary, e.secondary))
    return out


def spans_for_memory(n_objects: int, duration_s: float, step_s: float,
                     budget_mb: float = TASK_MEMORY_BUDGET_MB) -> int:
    """How many time spans keep one all-vs-all task (every object, one span) in budget_mb."""
    n = max(1, n_objects)
    free_mb = budget_mb - TASK_FIXED_MB - BYTES_PER_OBJECT * n / 1e6
    per_span_samples = free_mb * 1e6 / (BYTES_PER_OBJECT_SAMPLE * n)
    return max(1, math.ceil((duration_s / step_s + 1) / max(per_span_samples, 8.0)))


def plan_tasks(req: ScreeningRequest, spans: int | None = None, executor=None) -> list[Task]:
    """Cut a request into tasks.  Fleet mode first drops catalog objects that no primary can
    reach by the apogee/perigee filter.  `executor`, if given, runs the re-entry probe."""
    if req.duration_s <= 0:
        raise ScreenerError("the screening window must be longer than zero")
    spans = spans or max(1, 2 * req.workers)
    spans = min(spans, max(1, int(req.duration_s // (4 * req.step_s))))
    if req.all_vs_all:
        spans = max(spans, spans_for_memory(len(req.catalog), req.duration_s, req.step_s))
    edges = np.linspace(0.0, req.duration_s, spans + 1)
    reach = req.volume.bounding_radius_km + INTERP_MARGIN_KM
    if req.all_vs_all:
        chunks = [req.catalog]
    else:
        probe = Task([], [], [], req.jd0, req.fr0, 0, req.duration_s, req.duration_s,
                     req.volume, req.step_s, False, True)
        p_b = [_bounds(p, probe) for p in req.primaries]
        for o in req.primary_oems:
            orb = Population(oems=[o]).orbit(0)
            p_b.append((orb.perigee_radius_km - 50.0, orb.apogee_radius_km + 50.0))
        s_b = _bounds_many(req.catalog, probe)
        keep = apogee_perigee_mask(bounds_array(p_b), s_b, reach).any(axis=0) if len(req.catalog) else []
        survivors = [s for s, k in zip(req.catalog, keep) if k]
        chunks = [survivors[a:a + MAX_SECONDARIES_PER_TASK]
                  for a in range(0, len(survivors), MAX_SECONDARIES_PER_TASK)] or [[]]
    cut = decay_cutoffs(list(req.primaries) + [s for c in chunks for s in c], req.jd0, req.fr0,
                        req.duration_s, executor, 2 * req.workers)
    tasks = []
    primaries = Records(req.primaries)     # pickled once for all tasks (shared_records)
    for chunk in chunks:
        ids = {r.catalog_id for r in chunk} | {r.catalog_id for r in req.primaries}
        mine = {k: v for k, v in cut.items() if k in ids}
        secondaries = Records(chunk)
        for a, b in zip(edges[:-1], edges[1:]):
            tasks.append(Task(primaries, list(req.primary_oems),
                              secondaries, req.jd0, req.fr0, float(a), float(b),
                              req.duration_s, req.volume, req.step_s, req.all_vs_all,
                              bool(b == edges[-1]), mine))
    return tasks


@gc_paused
def screen(req: ScreeningRequest, progress: Progress | None = None, cancel=None,
           executor=None) -> ScreeningResult:
    """Run a screening.  progress(stage, done, total) is called as tasks finish; `cancel` is
    anything with is_set() (threading.Event); `executor` is any concurrent.futures-style
    executor (default: in-process for workers=1, else a local process pool)."""
    if req.primary_oems:
        Population(oems=req.primary_oems).check_coverage(req.jd0, req.fr0, 0.0, req.duration_s)
    t0 = time.perf_counter()
    report = progress or (lambda stage, done, total: None)
    results: list[TaskResult] = []
    own = executor is None and req.workers > 1
    if own:
        from ..workers import spawn_pool

        executor = spawn_pool(req.workers)
    try:
        tasks = plan_tasks(req, executor=executor)
        report("screening", 0, len(tasks))
        if executor is None:
            for n, task in enumerate(tasks, start=1):
                if cancel is not None and cancel.is_set():
                    raise Cancelled("screening cancelled")
                results.append(run_task(task))
                report("screening", n, len(tasks))
        else:
            futures = [executor.submit(run_task, t) for t in tasks]
            for n, fut in enumerate(as_completed(futures), start=1):
                if cancel is not None and cancel.is_set():
                    for f in futures:
                        f.cancel()
                    raise Cancelled("screening cancelled")
                results.append(result_of(fut, "a screening task"))
                report("screening", n, len(tasks))
    finally:
        if own:
            executor.shutdown(wait=True, cancel_futures=True)
    return gather(req, results, time.perf_counter() - t0)


def gather(req: ScreeningRequest, results: Sequence[TaskResult], wall_s: float) -> ScreeningResult:
    encs = _dedupe([e for r in results for e in r.encounters])     # in TCA order
    # one entry per object and time span (a primary is in every chunk of secondaries of a
    # span and must count once), then merged over the spans
    per_span: dict[tuple[str, float], Unusable] = {}
    for r in results:
        for k, u in r.unusable.items():
            per_span.setdefault((k, r.stats.get("t0_s", 0.0)), u)
    merged: dict[str, Unusable] = {}
    for (k, _span), u in per_span.items():
        merged[k] = merged[k].merge(u) if k in merged else u
    unusable = {k: u.describe(req.jd0, req.fr0, req.duration_s) for k, u in sorted(merged.items())}
    stats = {"tasks": len(results), "wall_s": wall_s}
    for key in ("candidates", "brackets"):
        stats[key] = sum(r.stats.get(key, 0) for r in results)
    # secondaries x spans whose grid states were two-body filled between exact samples
    stats["filled_object_spans"] = sum(r.stats.get("filled", 0) for r in results)
    # per stage, seconds summed over tasks (CPU time across the workers, not wall time)
    stats["task_stage_s"] = {k: sum(r.stats.get(f"{k}_s", 0.0) for r in results)
                             for k in ("propagate", "filter", "sieve", "refine")}
    stats["task_peak_rss_mb"] = max((r.stats.get("peak_rss_mb", 0.0) for r in results), default=0.0)
    return ScreeningResult(encs, unusable, stats, req)


__all__ = ["ScreeningRequest", "ScreeningResult", "Task", "TaskResult", "Cancelled",
           "plan_tasks", "run_task", "screen", "gather", "to_ric"]
