"""Nightly runs into a real SQLite store: event identity across runs over shifted windows,
histories, the run-to-run diff, exit codes for cron, progress output, per-run logs."""

from __future__ import annotations

import glob
import os
import re
import json
import sqlite3

import pytest

from screener.store import SCHEMA_VERSION, Store, queries

from .nightly import DEMO, screener, write_config

TOL_S = 600.0   # the configuration default for event identity (events.tca_tolerance_s)


@pytest.fixture(scope="module")
def two_runs(tmp_path_factory):
    """Run A: window 2026-12-02 00:00 + 2 d with the catalog as of 2026-12-01 12:00 (older
    element sets of the engineered objects).  Run B: the window shifted by 12 h, with the
    current element sets."""
    d = tmp_path_factory.mktemp("nightly")
    store = str(d / "store.sqlite")
    a = write_config(d / "a.toml", start="2026-12-02T00:00:00Z", as_of="2026-12-01T12:00:00Z")
    b = write_config(d / "b.toml", start="2026-12-02T12:00:00Z")
    pa = screener("run", "--config", a, "--store", store)
    pb = screener("run", "--config", b, "--store", store, "--json", str(d / "b.json"))
    return store, pa, pb, d


def _rows(conn, run_id):
    conn.row_factory = sqlite3.Row
    return conn.execute("SELECT * FROM encounters WHERE run_id=?", (run_id,)).fetchall()


def test_both_runs_commit(two_runs):
    store, pa, pb, _ = two_runs
    assert pa.returncode == 0, pa.stderr
    assert pb.returncode == 0, pb.stderr
    with Store(store) as s:
        assert [r.id for r in queries.runs(s)] == [2, 1]
        assert s.conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert s.version() == SCHEMA_VERSION


def test_events_are_matched_by_pair_and_tca_tolerance(two_runs):
    """Brute force over both runs' rows: a run-B encounter shares its event with the run-A
    encounter of the same pair within 600 s, and only then."""
    store, *_ = two_runs
    conn = sqlite3.connect(store)
    a, b = _rows(conn, 1), _rows(conn, 2)
    matched = 0
    for e in b:
        twins = [x for x in a if (x["primary_id"], x["secondary_id"]) == (e["primary_id"], e["secondary_id"])
                 and abs(x["tca_unix_s"] - e["tca_unix_s"]) <= TOL_S]
        if twins:
            matched += 1
            assert e["event_id"] == twins[0]["event_id"]
            assert e["change"] != "new"
        else:
            assert e["event_id"] not in {x["event_id"] for x in a}
            assert e["change"] == "new" and e["trend"] == "new"
    assert matched >= 3, "the engineered events inside both windows are matched"


def test_history_grows_and_trend_follows_the_miss(two_runs):
    store, *_ = two_runs
    with Store(store) as s:
        # LARKSPUR-3 (from its OEM, tied to catalog number 900000003) x DEB-004 on 2026-12-03 06:00 is in both windows
        row = s.conn.execute("SELECT * FROM encounters WHERE run_id=2 AND primary_id='900000003' "
                             "AND secondary_id='339003'").fetchone()
        hist = queries.event_history(s, row["event_id"])
        assert [h["run_id"] for h in hist] == [1, 2]
        d_miss = hist[1]["miss_km"] - hist[0]["miss_km"]
        want = "stable" if abs(d_miss) < max(0.05, 0.1 * hist[0]["miss_km"]) else (
            "converging" if d_miss < 0 else "growing")
        assert row["trend"] == want


def test_trend_comes_from_runs_with_different_inputs(two_runs, tmp_path):
    """Re-screening unchanged inputs (same files, same as-of) adds no information: every
    event keeps the trend it had, instead of all turning "stable"."""
    import shutil

    store, _pa, _pb, d = two_runs
    copy = tmp_path / "s.sqlite"
    shutil.copy(store, copy)
    p = screener("run", "--config", str(d / "b.toml"), "--store", str(copy), "--quiet", "--no-exports", "--no-alerts")
    assert p.returncode == 0, p.stderr
    conn = sqlite3.connect(copy)
    b = {r["event_id"]: r["trend"] for r in _rows(conn, 2)}
    c = {r["event_id"]: r["trend"] for r in _rows(conn, 3)}
    shared = set(b) & set(c)
    assert shared and all(c[k] == b[k] for k in shared)
    assert any(b[k] not in ("stable", "new") for k in shared), "the demo has moving events"


def test_trend_is_a_line_through_the_runs():
    """Least-squares slope over the points (ordinary least squares: any statistics text),
    its change over the span against the 50 m / 10 % floor."""
    from screener.store.events import trend_over

    assert trend_over([1.0, 0.8, 0.6, 0.4]) == "converging"
    assert trend_over([1.0, 1.3, 1.2, 1.6]) == "growing"
    assert trend_over([1.0, 1.02, 0.99, 1.01]) == "stable"
    assert trend_over([2.0, 0.5, 2.1]) == "stable"        # one outlier is not a trend
    assert trend_over([1.0]) == "new"


def test_diff_lists_new_escalated_and_gone(two_runs):
    store, _, pb, _ = two_runs
    conn = sqlite3.connect(store)
    conn.row_factory = sqlite3.Row
    a, b = _rows(conn, 1), _rows(conn, 2)
    b_start = conn.execute("SELECT window_start_unix_s FROM runs WHERE id=2").fetchone()[0]
    b_events = {e["event_id"] for e in b}
    rank_a = {x["event_id"]: x["attention_rank"] for x in a}
    want_new = sum(1 for e in b if e["event_id"] not in rank_a)
    want_esc = sum(1 for e in b if e["event_id"] in rank_a and e["attention_rank"] < rank_a[e["event_id"]])
    want_gone = sum(1 for x in a if x["event_id"] not in b_events and x["tca_unix_s"] >= b_start)
    m = re.search(r"Since run 1: (\d+) new, (\d+) escalated, (\d+) de-escalated, (\d+) gone", pb.stdout)
    assert m, pb.stdout
    assert (int(m[1]), int(m[2]), int(m[4])) == (want_new, want_esc, want_gone)
    # DEB-001 passes LARKSPUR-1 at 06:30 on 2026-12-02, before run B's window: passed, not gone
    early = [x for x in a if x["secondary_id"] == "339000" and x["tca_unix_s"] < b_start]
    assert early and all(x["event_id"] not in b_events for x in early)
    import json

    doc = json.loads(open(two_runs[3] / "b.json").read())
    assert doc["run_id"] == 2 and len(doc["changes"]["new"]) == want_new
    assert len(doc["changes"]["gone"]) == want_gone


def test_plain_progress_and_log_file(two_runs):
    store, pa, *_ = two_runs
    lines = [l for l in pa.stderr.splitlines() if re.match(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ ", l)]
    stages = {l.split()[1].rstrip(":") for l in lines}
    assert {"loading", "screening", "risk", "storing"} <= stages
    assert "\x1b" not in pa.stderr and "\r" not in pa.stderr
    logs = glob.glob(os.path.join(os.path.dirname(store), "logs", "run-*.log"))
    assert len(logs) == 2
    assert any("committed run 1" in open(p).read() for p in logs)


def test_exit_codes(tmp_path):
    store = str(tmp_path / "s.sqlite")
    # 3: --fail-on-act with act-level events (the demo's engineered head-on passes)
    p = screener("run", "--config", os.path.join(DEMO, "demo.toml"), "--store", store, "--quiet",
                 "--no-exports", "--no-alerts", "--fail-on-act")
    assert p.returncode == 3 and "act level" in p.stderr
    # 0 without the flag
    p = screener("run", "--config", os.path.join(DEMO, "demo.toml"), "--store", store, "--quiet",
                 "--no-exports", "--no-alerts")
    assert p.returncode == 0, p.stderr
    # 2: bad configuration, file and line named
    bad = tmp_path / "bad.toml"
    bad.write_text('[run]\nname = "x"\nwindow_dayz = 3\n[catalog]\nsources = ["nowhere.tle"]\n')
    p = screener("run", "--config", str(bad), "--store", store)
    assert p.returncode == 2 and f"{bad}:3" in p.stderr and "window_dayz" in p.stderr
    assert "Traceback" not in p.stderr
    # 4: the store is not a store
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"this is not sqlite" * 100)
    p = screener("run", "--config", os.path.join(DEMO, "demo.toml"), "--store", str(junk), "--quiet")
    assert p.returncode == 4 and "store" in p.stderr and "Traceback" not in p.stderr


def test_one_off_run_with_screen_options(tmp_path):
    store = str(tmp_path / "s.sqlite")
    p = screener("run", "--catalog", os.path.join(DEMO, "catalog.tle"), "--primaries",
                 os.path.join(DEMO, "fleet.json"), "--start", "2026-12-02T00:00:00Z", "--days", "0.5",
                 "--store", store, "--quiet", "--workers", "1")
    assert p.returncode == 0, p.stderr
    with Store(store) as s:
        assert queries.run(s).name == "one-off"


def test_newer_schema_is_refused(tmp_path):
    path = tmp_path / "s.sqlite"
    Store(str(path)).close()
    c = sqlite3.connect(path)
    c.execute("PRAGMA user_version = 99")
    c.close()
    from screener.errors import ScreenerError

    with pytest.raises(ScreenerError, match="newer"):
        Store(str(path))


def test_a_schema_1_store_migrates_in_place(tmp_path):
    """A store written before element sets were kept as OMM keywords (and before encounters
    kept their flags, before manoeuvre trades, received CDMs and alerts were kept) opens and migrates
    through every step."""
    import sqlite3

    from screener.store.db import MIGRATIONS

    path = tmp_path / "old.sqlite"
    c = sqlite3.connect(path)
    c.executescript(MIGRATIONS[0])
    c.execute("PRAGMA user_version = 1")
    c.execute("INSERT INTO elsets VALUES (1, '12345', 'X', 'catalog', 'element set', 't', 's', 'l1', 'l2')")
    c.commit()
    c.close()
    with Store(str(path)) as s:
        assert s.version() == SCHEMA_VERSION == 7
        row = s.conn.execute("SELECT line1, omm_json FROM elsets").fetchone()
        assert row["line1"] == "l1" and row["omm_json"] is None
        assert "flags" in {r["name"] for r in s.conn.execute("PRAGMA table_info(encounters)")}
        assert s.conn.execute("SELECT count(*) FROM trades").fetchone()[0] == 0
        assert s.conn.execute("SELECT count(*) FROM received").fetchone()[0] == 0
        assert s.conn.execute("SELECT count(*) FROM alerts").fetchone()[0] == 0
        assert "text" in {r["name"] for r in s.conn.execute("PRAGMA table_info(received)")}


def test_a_catalog_that_shrinks_is_said_even_under_quiet(tmp_path):
    """A truncated catalog (4,008 objects last night, 1 tonight) screens almost nothing; the
    run warns on stderr under --quiet, and refuses to screen with fail_on_input_drop."""
    store = str(tmp_path / "s.sqlite")
    full = write_config(tmp_path / "a.toml", days=0.3, name="n")
    assert screener("run", "--config", full, "--store", store, "--quiet", "--no-exports", "--no-alerts").returncode == 0
    lines = open(f"{DEMO}/catalog.tle").read().splitlines()
    one = next(k for k, t in enumerate(lines) if t.startswith("1 "))
    (tmp_path / "one.tle").write_text("\n".join(lines[one - 1:one + 2]) + "\n")
    small = write_config(tmp_path / "b.toml", days=0.3, name="n")
    text = open(small).read().replace(f'"{DEMO}/catalog.tle", "{DEMO}/catalog-history.tle"',
                                      f'"{tmp_path}/one.tle"')
    open(small, "w").write(text.replace("workers = 1", "workers = 1\nfail_on_input_drop = true", 1))
    p = screener("run", "--config", small, "--store", store, "--quiet", "--no-exports", "--no-alerts")
    assert p.returncode == 2 and "nothing screened" in p.stderr and "Traceback" not in p.stderr
    open(small, "w").write(text)
    p = screener("run", "--config", small, "--store", store, "--quiet", "--no-exports", "--no-alerts")
    assert p.returncode == 0, p.stderr
    assert "inputs shrank: the catalog has 1 object, 4008 in run 1" in p.stderr
    conn = sqlite3.connect(store)
    assert conn.execute("SELECT count(*) FROM runs").fetchone()[0] == 2
    stats = json.loads(conn.execute("SELECT stats_json FROM runs WHERE id = 2").fetchone()[0])
    assert any("inputs shrank" in x for x in stats["degraded"])


def test_repeated_warnings_are_one_line_with_a_count(tmp_path):
    p = screener("screen", "--catalog", f"{DEMO}/catalog-history.tle", "--primaries",
                 f"{DEMO}/fleet.json", "--start", "2026-12-02T00:00:00Z", "--days", "0.2",
                 "--max-age-days", "0.01", "--workers", "1")
    assert p.returncode == 0, p.stderr
    stale = [l for l in p.stderr.splitlines() if "stale:" in l]
    assert len(stale) == 1 and "element sets older than 0.01 days" in stale[0]
    assert "more" in stale[0] and stale[0].count(" d)") == 5, stale[0]


def test_stored_records_read_back_with_the_standard_json_module(store):
    """The store's record writer (orjson) against Python's json module (reference library):
    every demo record, parsed by json and written again, parses to the same values; numpy
    scalars and arrays are written as their values, non-finite floats as null (standard JSON
    has no NaN)."""
    import json
    import sqlite3

    import numpy as np

    from screener.store.runs import _record_json

    c = sqlite3.connect(store)
    rows = [json.loads(d) for (d,) in c.execute("SELECT data_json FROM encounters")]
    c.close()
    assert len(rows) > 100
    for d in rows:
        assert json.loads(_record_json(d)) == d
    odd = {"a": np.float64(1.5), "b": np.arange(3.0), "c": float("nan"), "d": [np.float32(0.25)]}
    assert json.loads(_record_json(odd)) == {"a": 1.5, "b": [0.0, 1.0, 2.0], "c": None, "d": [0.25]}
