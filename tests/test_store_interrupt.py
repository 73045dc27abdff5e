"""A run is stored whole or not at all.  A child `screener run` is stopped at known points
inside its write transaction (SCREENER_TEST_HOLD) and killed with SIGKILL, SIGTERM or SIGINT;
the store must pass SQLite's integrity check with the earlier run intact, and a reader during
the write sees the old state (WAL)."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest

from .nightly import store_counts, write_config


@pytest.fixture(scope="module")
def base(tmp_path_factory):
    d = tmp_path_factory.mktemp("interrupt")
    cfg = write_config(d / "c.toml", days=0.5)
    store = d / "base.sqlite"
    p = subprocess.run([sys.executable, "-m", "screener.cli.main", "run", "--config", cfg, "--store",
                        str(store), "--quiet"], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr
    return cfg, store


def _copy_store(src, dst):
    a, b = sqlite3.connect(src), sqlite3.connect(dst)
    a.backup(b)
    a.close()
    b.close()


def _start(cfg, store, hold):
    env = dict(os.environ, SCREENER_TEST_HOLD=hold) if hold else dict(os.environ)
    return subprocess.Popen([sys.executable, "-m", "screener.cli.main", "run", "--config", cfg,
                             "--store", str(store)], stderr=subprocess.PIPE, stdout=subprocess.PIPE,
                            text=True, env=env)


def _wait_for(proc, needle, timeout_s=300):
    t_end = time.monotonic() + timeout_s
    seen = []
    while time.monotonic() < t_end:
        line = proc.stderr.readline()
        if not line:
            break
        seen.append(line)
        if needle in line:
            return
    proc.kill()
    raise AssertionError(f"child never reached {needle!r}: {''.join(seen)[-2000:]}")


@pytest.mark.parametrize("hold,sig", [
    ("before-begin", signal.SIGKILL),
    ("after-run-row", signal.SIGKILL),
    ("after-events", signal.SIGTERM),
    ("before-commit", signal.SIGINT),
    ("before-commit", signal.SIGKILL),
    ("screening-task-done", signal.SIGKILL),   # during the screening itself
])
def test_interrupted_run_leaves_the_store_consistent(base, tmp_path, hold, sig):
    cfg, src = base
    store = tmp_path / "s.sqlite"
    _copy_store(src, store)
    before = store_counts(store)
    proc = _start(cfg, store, hold)
    _wait_for(proc, f"screener-hold:{hold}")
    if hold != "before-begin":
        # a concurrent reader (during the open write transaction) sees the old state
        assert store_counts(store) == before
    proc.send_signal(sig)
    rc = proc.wait(timeout=120)
    proc.stderr.close()
    proc.stdout.close()
    assert rc != 0
    if sig == signal.SIGTERM:
        assert rc == 143
    if sig == signal.SIGINT:
        assert rc == 130
    c = sqlite3.connect(store)
    assert c.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    c.close()
    assert store_counts(store) == before, "nothing of the interrupted run is stored, nothing lost"
    # and the store still takes the next run
    p = subprocess.run([sys.executable, "-m", "screener.cli.main", "run", "--config", cfg, "--store",
                        str(store), "--quiet"], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr
    assert store_counts(store)[0] == before[0] + 1


def test_reader_sees_the_new_run_after_commit(base, tmp_path):
    cfg, src = base
    store = tmp_path / "s.sqlite"
    _copy_store(src, store)
    reader = sqlite3.connect(store)
    n0 = reader.execute("SELECT count(*) FROM runs").fetchone()[0]
    p = subprocess.run([sys.executable, "-m", "screener.cli.main", "run", "--config", cfg, "--store",
                        str(store), "--quiet"], capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr
    assert reader.execute("SELECT count(*) FROM runs").fetchone()[0] == n0 + 1
    reader.close()


def test_new_stores_use_16_kb_pages_and_old_ones_keep_theirs(tmp_path):
    """A new store is created with 16 KB pages (an encounter's ~3 KB row wastes a quarter of
    SQLite's default 4 KB page); a store made with 4 KB pages opens, migrates and takes
    writes with its own page size (SQLite fixes the page size when a file is created)."""
    from screener.store import Store

    with Store(str(tmp_path / "new.sqlite")) as s:
        assert s.conn.execute("PRAGMA page_size").fetchone()[0] == 16384
        assert s.conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    old = tmp_path / "old.sqlite"
    c = sqlite3.connect(old)
    c.execute("PRAGMA page_size=4096")
    c.execute("CREATE TABLE x (y)")
    c.close()
    with Store(str(old)) as s:
        assert s.conn.execute("PRAGMA page_size").fetchone()[0] == 4096
        assert s.version() >= 7
        s.conn.execute("INSERT INTO runs (name, started_utc, finished_utc, window_start_utc, "
                       "window_start_unix_s, window_days, volume, mode, software_version, "
                       "config_json, inputs_json, stats_json, thresholds_json, n_primaries, "
                       "n_secondaries, n_encounters) VALUES ('r','t','t','t',0,1,'v','m','s',"
                       "'{}','[]','{}','{}',0,0,0)")
    with Store(str(old)) as s:
        assert s.conn.execute("SELECT COUNT(*) FROM runs").fetchone()[0] == 1
