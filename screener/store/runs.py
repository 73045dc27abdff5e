"""Writing one run: everything in a single transaction, so a run is stored whole or not at all."""

from __future__ import annotations

import json
import os
import sys
import time

import orjson

from .. import __version__
from ..gcpause import gc_paused
from ..risk.attention import LEVEL_RANK
from ..timeutil import iso_z, jd_to_datetime
from ..elements.omm import omm_fields
from ..elements.record import SGP4_MAX_SATNUM
from ..elements.tle import catalog_id_to_int
from ..screening.encounter import json_records
from .db import Store
from .events import RunSignatures, change_of, event_trend, inputs_signature, match_events, run_diff

HOLD_ENV = "SCREENER_TEST_HOLD"   # tests only: pause a run at a named point (hold_for_tests)


def hold_for_tests(point: str) -> None:
    """Lets the interruption tests stop a child at a known point (of the write, or after the
    first screening task, pipeline.run); a no-op unless SCREENER_TEST_HOLD names the point."""
    if os.environ.get(HOLD_ENV) == point:
        print(f"screener-hold:{point}", file=sys.stderr, flush=True)
        time.sleep(120)


def unix_s(jd: float, fr: float) -> float:
    return ((jd - 2440587.5) + fr) * 86400.0


def tle_writable(rec) -> bool:
    """A TLE's 5-column number field holds catalog numbers up to alpha-5 Z9999 (339999)."""
    n = catalog_id_to_int(rec.catalog_id)
    return n is not None and n <= SGP4_MAX_SATNUM


def _elset_rows(run_id, req, encounters):
    """Element sets of every primary and of each secondary that has an encounter (the whole
    catalog is identified by its files' SHA-256 in the run row; storing 30,000 sets a night
    would grow the store by gigabytes a year)."""
    involved = {e.secondary for e in encounters} | {e.primary for e in encounters}
    rows = []
    for role, recs in (("primary", req.primaries),
                       ("catalog", [r for r in req.catalog if r.catalog_id in involved])):
        for r in recs:
            l1, l2 = r.to_tle() if tle_writable(r) else (None, None)
            omm = omm_fields(r)         # its EPOCH is the record's epoch text (iso_z, 6 digits)
            rows.append((run_id, r.catalog_id, r.name, role, "element set",
                         omm["EPOCH"], str(r.source), l1, l2, orjson.dumps(omm).decode()))
    for o in req.primary_oems:
        seg = o.segments[0]
        rows.append((run_id, o.object_id, o.object_name, "primary", "OEM",
                     iso_z(jd_to_datetime(seg.start_jd, seg.t_s[0] / 86400.0), 3), o.path, None, None,
                     None))
    return rows


@gc_paused
def commit_run(store: Store, *, name: str, config_snapshot: dict, inputs_files: list[dict],
               result, started_utc: str, thresholds, tca_tolerance_s: float,
               log_path: str | None = None):
    """Store a screening result with risk attached.  Returns (run_id, Diff)."""
    req = result.request
    conn = store.conn
    w0 = unix_s(req.jd0, req.fr0)
    hold_for_tests("before-begin")
    conn.execute("BEGIN IMMEDIATE")
    try:
        run_id = conn.execute(
            "INSERT INTO runs (name, started_utc, finished_utc, window_start_utc, window_start_unix_s,"
            " window_days, volume, mode, software_version, config_json, inputs_json, stats_json,"
            " thresholds_json, n_primaries, n_secondaries, n_encounters, log_path)"
            " VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
            (name, started_utc, iso_z(_now(), 3), iso_z(jd_to_datetime(req.jd0, req.fr0), 3), w0,
             req.duration_s / 86400.0, req.volume.describe(),
             "all-vs-all" if req.all_vs_all else "fleet", f"screener {__version__}",
             json.dumps(config_snapshot, default=str), json.dumps(inputs_files),
             json.dumps({**result.stats, "unusable": result.unusable}),
             json.dumps({"act_pc": thresholds.act_pc, "watch_pc": thresholds.watch_pc}),
             len(req.primaries) + len(req.primary_oems), len(req.catalog), len(result.encounters),
             log_path)).lastrowid
        hold_for_tests("after-run-row")
        conn.executemany("INSERT OR REPLACE INTO elsets VALUES (?,?,?,?,?,?,?,?,?,?)", _elset_rows(run_id, req, result.encounters))
        encs = result.encounters
        tcas = [unix_s(*e.tca_jd) for e in encs]
        matches = match_events(conn, run_id, [(e.primary, e.secondary, t) for e, t in zip(encs, tcas)],
                               tca_tolerance_s)
        signature = inputs_signature(json.dumps(inputs_files), json.dumps(config_snapshot, default=str))
        signatures = RunSignatures(conn)
        staged = []
        for e, t, m in zip(encs, tcas, matches):
            rank = LEVEL_RANK[e.risk["attention"]]
            staged.append((e, t, m, rank, event_trend(m.history, e.miss_km, signature, m.prev, signatures),
                           change_of(m.prev, rank)))

        written = []        # what run_diff reads of each row, instead of reading it back

        def rows():
            # one record at a time, written as it is made: holding all of them first (about
            # 200 MB of text at 70,000 encounters) cost more in fresh memory than the writing
            for (e, t, m, rank, tr, ch), data in zip(staged, json_records(encs)):
                rk = e.risk
                written.append((m.event_id, e.primary, e.secondary, data["tca"], float(t),
                                float(e.miss_km), float(rk["pc"]), rk["attention"], ch))
                data.update({"trend": tr, "change": ch, "event_id": m.event_id})
                if m.prev is not None:
                    data["previous"] = {"run_id": m.prev["run_id"], "miss_km": m.prev["miss_km"],
                                        "pc": m.prev["pc"], "tca": m.prev["tca_utc"],
                                        "attention": m.prev["attention"]}
                yield (run_id, m.event_id, e.primary, e.primary_name, e.secondary, e.secondary_name,
                       data["tca"], t, e.miss_km, e.radial_km, e.in_track_km, e.cross_track_km,
                       e.relative_speed_km_s, rk["pc"], rk.get("log10_pc"), rk["pc_max"],
                       rk["attention"], rank, rk["covariance_source"], int(rk["dilution_region"]),
                       tr, ch, _record_json(data), rk.get("flags", ""))
        hold_for_tests("after-events")
        conn.executemany(
            "INSERT INTO encounters (run_id, event_id, primary_id, primary_name, secondary_id,"
            " secondary_name, tca_utc, tca_unix_s, miss_km, radial_km, in_track_km, cross_track_km,"
            " relative_speed_km_s, pc, log10_pc, pc_max, attention, attention_rank,"
            " covariance_source, dilution, trend, change, data_json, flags)"
            " VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)", rows())
        hold_for_tests("before-commit")
        diff = run_diff(conn, run_id, name, w0, written)
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    return run_id, diff


def _record_json(data: dict) -> str:
    """An encounter's record as JSON text, by orjson: about 7 times the standard library's
    speed on these records (measured on 20,000 of them: 1.06 against 0.15 s), the same values
    read back.  Non-finite floats become null (standard JSON has no NaN)."""
    return orjson.dumps(data, default=_jsonable, option=orjson.OPT_SERIALIZE_NUMPY).decode()


def _jsonable(x):
    """What orjson cannot write itself: other array types as lists, anything else as text."""
    if hasattr(x, "tolist"):
        return x.tolist()
    return str(x)


def _now():
    import datetime as dt

    return dt.datetime.now(dt.timezone.utc)
