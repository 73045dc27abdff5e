"""What travels between the parent and its workers, and what is made in bulk, arrives
unchanged.

A task's encounters go back as columns (screening/encounter_columns.py), the element sets a
task carries are pickled once and read once per worker (screening/shared_records.py), the
tasks' encounters are merged by an array form of the dedupe rule, and the records the JSON
export and the store write are made in blocks (encounter.json_records).  The reference is the
one-at-a-time form before the change (the object before the trip, the rule as stated,
Python's datetime arithmetic): every float is compared bitwise, every field by type and the
fields in their order.  The scenario (tests/scenarios.py, invented objects) only supplies
realistic encounters: head-on, crossing, slow co-orbital passes, GTO and GEO.
"""

from __future__ import annotations

import dataclasses
import pickle

import numpy as np
import orjson
import pytest

from screener.screening.encounter import Encounter
from screener.screening.engine import ScreeningRequest, TaskResult, plan_tasks, run_task
from screener.screening.shared_records import Records
from screener.screening.volume import Volume
from screener.workers import spawn_pool
from tests.scenarios import WINDOW_S, hard_cases


def _bits(x) -> np.ndarray:
    return np.asarray(x, np.float64).view(np.int64)


def _same(a, b) -> bool:
    if isinstance(a, np.ndarray):
        return (type(b) is np.ndarray and a.shape == b.shape and a.dtype == b.dtype
                and np.array_equal(_bits(a), _bits(b)) and b.flags["C_CONTIGUOUS"])
    if isinstance(a, float):
        return type(b) is float and _bits(a) == _bits(b)
    if isinstance(a, tuple):
        return type(b) is tuple and len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    return type(a) is type(b) and a == b


def assert_identical(before: list[Encounter], after: list[Encounter]) -> None:
    assert len(before) == len(after)
    for x, y in zip(before, after):
        assert type(y) is Encounter
        assert list(x.__dict__) == list(y.__dict__), "fields in another order"
        for k, a in x.__dict__.items():
            assert _same(a, y.__dict__[k]), (k, a, y.__dict__[k])


@pytest.fixture(scope="module")
def task_result():
    sc = hard_cases()
    req = ScreeningRequest(catalog=sc["secondaries"], primaries=sc["primaries"], jd0=sc["jd0"],
                           fr0=sc["fr0"], duration_s=WINDOW_S, volume=Volume.sphere(5.0), workers=1)
    results = [run_task(t) for t in plan_tasks(req, spans=1)]
    assert len(results) == 1
    return results[0]


def test_a_task_result_comes_back_bitwise_equal(task_result):
    encs = task_result.encounters
    # slow co-orbital passes (m/s) and a head-on one (15 km/s) among them
    speeds = [e.relative_speed_km_s for e in encs]
    assert min(speeds) < 0.01 and max(speeds) > 14.0
    back = pickle.loads(pickle.dumps(task_result, protocol=pickle.HIGHEST_PROTOCOL))
    assert back.stats == task_result.stats and back.unusable == task_result.unusable
    assert_identical(encs, back.encounters)


def test_uneven_lengths_and_odd_fields(task_result):
    encs = [dataclasses.replace(e) for e in task_result.encounters[:6]]
    encs[1].relative_path_km = encs[1].relative_path_km[:40].copy()   # samples SGP4 refused
    encs[2].range_profile_km = encs[2].range_profile_km[:0].copy()
    encs[3].risk = {"pc": 1.5e-4, "attention": "watch"}
    encs[4].entry_s, encs[4].exit_s = 12.5, None
    encs[5].miss_km = np.float64(encs[5].miss_km)        # comes back as the equal Python float
    res = TaskResult(encs, {}, {})
    back = pickle.loads(pickle.dumps(res))
    assert back.encounters[5].miss_km == encs[5].miss_km
    encs[5].miss_km = float(encs[5].miss_km)
    assert_identical(encs, back.encounters)
    # a field the columns do not keep (a profile as a tuple): the objects travel as they are
    encs[0].range_profile_km = tuple(encs[0].range_profile_km.tolist())
    back = pickle.loads(pickle.dumps(TaskResult(encs, {}, {})))
    assert_identical(encs, back.encounters)
    assert pickle.loads(pickle.dumps(TaskResult([], {}, {}))).encounters == []


def _identity(records):
    from screener.screening import shared_records

    return shared_records.reads, tuple(r.catalog_id for r in records)


def test_records_are_written_once_and_read_once_per_worker():
    sc = hard_cases()
    recs = Records(sc["secondaries"])
    one, two = pickle.dumps(recs), pickle.dumps(recs)
    assert one == two
    assert recs.__reduce__()[1] is recs.__reduce__()[1]          # the same bytes, not again
    back = pickle.loads(one)
    assert tuple(back) == tuple(recs) and isinstance(back, Records)
    pool = spawn_pool(1)
    try:
        a = pool.submit(_identity, recs).result()
        b = pool.submit(_identity, recs).result()
        c = pool.submit(_identity, Records(sc["primaries"])).result()
    finally:
        pool.shutdown(wait=True)
    assert a[0] == b[0] == 1 and c[0] == 2                # read once in the worker
    assert a[1] == b[1] == tuple(r.catalog_id for r in sc["secondaries"])
    assert c[1] == tuple(r.catalog_id for r in sc["primaries"])


def _dedupe_as_stated(encs, tol_s):
    """The rule written out plainly: in (primary, secondary, TCA) order drop an encounter
    within tol_s of its pair's last kept one; then order by TCA (ties by pair)."""
    out = []
    for e in sorted(encs, key=lambda e: (e.primary, e.secondary, e.tca_s)):
        if out and (out[-1].primary, out[-1].secondary) == (e.primary, e.secondary) \
                and abs(out[-1].tca_s - e.tca_s) < tol_s:
            continue
        out.append(e)
    return sorted(out, key=lambda e: e.tca_s)


def test_merging_the_tasks_drops_the_same_duplicates_as_the_plain_rule(task_result):
    """Spans meet at a boundary, where two tasks can find one minimum within a millisecond:
    gather's array form of the rule (engine._dedupe) against the rule as stated, on the
    scenario's encounters with copies shifted by 0 to 1.5 ms (chains longer than the
    tolerance among them) and with equal TCAs across pairs."""
    import random

    from screener.screening.engine import DEDUPE_TOL_S, _dedupe

    rng = random.Random(4)
    base = task_result.encounters
    copies = [dataclasses.replace(e, tca_s=e.tca_s + d) for e in base
              for d in rng.sample([0.0, 0.0004, 0.0009, 0.0011, -0.0006, 0.0015, 0.0019], 3)]
    tied = [dataclasses.replace(e, tca_s=1000.0) for e in base[::3]]
    for encs in (base, base + copies, copies + tied + base):
        encs = list(encs)
        rng.shuffle(encs)
        got, want = _dedupe(encs), _dedupe_as_stated(encs, DEDUPE_TOL_S)
        assert len(got) == len(want) and all(a is b for a, b in zip(got, want))
    assert len(_dedupe(base + copies)) < len(base + copies)


def test_records_made_in_blocks_equal_the_ones_made_one_at_a_time(task_result):
    """json_records (what `screen --json` and the store write) against Encounter.to_json one
    at a time, whose TCA text is Python's datetime arithmetic: the same dicts, also for TCAs
    at day boundaries, before the window and half a microsecond off (rounding half to even),
    for a block boundary and for profiles of unequal length."""
    from screener.screening import encounter as enc

    base = task_result.encounters
    odd = [dataclasses.replace(e, tca_s=t, window_fr=fr) for e, t, fr in zip(
        base * 3, [0.0, -1e-7, 86400.0 - 1e-7, 43200.0000005, 43200.0000015, -3 * 86400.5,
                   12.3456785, 1e6] * 20, [0.0, 0.5, 0.999999999, 0.25] * 40)]
    short = dataclasses.replace(base[0], range_profile_km=base[0].range_profile_km[:7])
    encs = base + odd + [short]
    old_block = enc.JSON_BLOCK
    try:
        enc.JSON_BLOCK = 37
        got = list(enc.json_records(encs))
    finally:
        enc.JSON_BLOCK = old_block
    want = [e.to_json() for e in encs]
    # the profiles come as numpy rows: the same numbers, and the same text where orjson writes
    # them (the JSON export and the store)
    for g, w in zip(got, want):
        assert isinstance(g["range_profile_km"], np.ndarray)
        assert g["range_profile_km"].tolist() == w["range_profile_km"]
    option = orjson.OPT_INDENT_2 | orjson.OPT_SERIALIZE_NUMPY
    assert orjson.dumps(got, option=option) == orjson.dumps(want, option=option)
    assert [{k: x for k, x in g.items() if k != "range_profile_km"} for g in got] == \
        [{k: x for k, x in w.items() if k != "range_profile_km"} for w in want]
    assert [g["tca"] for g in got] == [w["tca"] for w in want]
