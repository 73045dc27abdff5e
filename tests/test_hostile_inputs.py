"""Hostile input, interruption and trust: every case ends in a stated outcome.

Each bad input gets a non-zero exit (2 for bad input, 4 for the store), one line on stderr
naming file, line and reason, no traceback, and an untouched store.  The corpus is written by
tests/hostile.py (invented data derived from the demo).  Expected behaviour: POSIX semantics
(FIFOs block readers, /dev/zero never ends, SIGKILL cannot be caught), CCSDS 502.0-B-3 /
508.0-B-1 keyword rules (from memory of the standards), and common practice for CSV formula
injection (a leading apostrophe).
"""

from __future__ import annotations

import json
import math
import os
import random
import signal
import sqlite3
import stat
import subprocess
import sys
import time

import pytest

from . import hostile
from .nightly import DEMO, alive, process_tree, screener, write_config

START = "2026-12-02T00:00:00Z"


@pytest.fixture(scope="module")
def corpus(tmp_path_factory):
    d = tmp_path_factory.mktemp("hostile")
    hostile.write(str(d))
    lines = open(os.path.join(DEMO, "catalog.tle")).read().splitlines()
    (d / "small.tle").write_text("\n".join(lines[:301]) + "\n")
    return d


def _one_line_error(p, code=2):
    assert p.returncode == code, (p.returncode, p.stderr[-2000:])
    assert "Traceback" not in p.stderr
    err = [ln for ln in p.stderr.strip().splitlines()
           if ln.startswith(("screener: error", "screener: store error"))]
    assert len(err) == 1, p.stderr[-2000:]
    return err[0]


def _screen(corpus, primaries, *extra, catalog=None):
    return screener("screen", "--catalog", str(catalog or corpus / "small.tle"), "--primaries",
                    *primaries, "--start", START, "--days", "0.2", "--workers", "1", *extra,
                    timeout=300)


@pytest.mark.parametrize("name,reason", [
    ("omm-bstar_nan.json", "B"), ("omm-ra_of_asc_node_inf.json", "RA_OF_ASC_NODE"),
    ("omm-arg_of_pericenter_inf.json", "ARG_OF_PERICENTER"), ("omm-mean_anomaly_1e_308.json", "mean anomaly"),
    ("omm-mean_motion_nan.json", "MEAN_MOTION"), ("omm-mean_motion_dot_1e_308.json", "first derivative"),
    ("omm-bstar_1e_308.json", "B*"), ("omm-epoch_2199_01_01.json", "epoch"),
    ("omm-element_set_no_inf.json", "ELEMENT_SET_NO"), ("omm-rev_at_epoch_nan.json", "REV_AT_EPOCH"),
    ("omm-norad_cat_id_hyperlink.json", "not a catalog number"),
    ("omm-deep.json", "nested too deeply"),
])
def test_non_finite_absurd_or_hostile_elements_are_named_never_dropped(corpus, name, reason):
    path = corpus / name
    assert path.exists(), sorted(os.listdir(corpus))
    line = _one_line_error(_screen(corpus, [str(path)], "--strict"))
    assert str(path) in line and reason in line, line
    # without --strict the record is skipped and said, with file and line
    p = _screen(corpus, [str(path), f"{DEMO}/fleet.json"])
    assert p.returncode == 0, p.stderr[-2000:]
    assert f"skipped: {path}:" in p.stderr + p.stdout and reason in p.stderr + p.stdout


def test_oem_gap_is_a_segment_break_never_interpolated(corpus):
    p = screener("screen", "--catalog", str(corpus / "small.tle"), "--primaries",
                 str(corpus / "oem-gap.oem"), "--start", START, "--days", "0.5", "--workers", "1")
    line = _one_line_error(p)
    assert "does not contain the screening window" in line and "; " in line   # two spans named
    assert "without ephemeris lines" in p.stderr and "never interpolated" in p.stderr
    # a window inside the first part still screens
    p = screener("screen", "--catalog", str(corpus / "small.tle"), "--primaries",
                 str(corpus / "oem-gap.oem"), "--start", START, "--days", "0.2", "--workers", "1")
    assert p.returncode == 0, p.stderr[-2000:]


def test_oem_non_finite_state_is_refused(corpus):
    line = _one_line_error(_screen(corpus, [str(corpus / "oem-nan.oem")]))
    assert "oem-nan.oem:" in line and "non-finite" in line


def test_conflicting_duplicates_are_said_and_refused_when_strict(corpus):
    path = corpus / "omm-conflict.json"
    p = _screen(corpus, [str(path)])
    assert p.returncode == 0
    assert "conflicting element sets at the same epoch" in p.stderr + p.stdout
    line = _one_line_error(_screen(corpus, [str(path)], "--strict"))
    assert "conflicting" in line and str(path) in line


def test_control_characters_never_reach_outputs(corpus, tmp_path):
    out = tmp_path / "e.json"
    p = _screen(corpus, [str(corpus / "omm-escape-name.json")], "--json", str(out))
    assert p.returncode == 0, p.stderr
    for text in (p.stdout, p.stderr, out.read_text()):
        assert "\x1b" not in text and "\x07" not in text and "\u2028" not in text
    assert "\\u001b" not in out.read_text()


def test_csv_cells_cannot_run_as_formulas():
    from screener.exports.tables import csv_cell

    assert csv_cell("=cmd|' /C calc'!A0") == "'=cmd|' /C calc'!A0"
    for lead in "+-@":
        assert csv_cell(lead + "x").startswith("'")
    assert csv_cell(-0.5) == "-0.5" and csv_cell("LARKSPUR-1") == "LARKSPUR-1"


@pytest.mark.parametrize("kind", ["fifo", "zero", "urandom", "link-to-zero", "folder-as-cdm"])
@pytest.mark.parametrize("role", ["catalog", "config", "cdm"])
def test_non_regular_files_are_refused_at_once(tmp_path, kind, role):
    if kind == "fifo":
        path = tmp_path / "f"
        os.mkfifo(path)
    elif kind == "zero":
        path = "/dev/zero"
    elif kind == "urandom":
        path = "/dev/urandom"
    elif kind == "link-to-zero":
        path = tmp_path / "l.tle"
        os.symlink("/dev/zero", path)
    else:
        path = tmp_path
    if role == "catalog":
        p = screener("screen", "--catalog", str(path), "--primaries", f"{DEMO}/fleet.json",
                     "--start", START, "--days", "0.1", timeout=60)
    elif role == "config":
        p = screener("run", "--config", str(path), "--store", str(tmp_path / "s.sqlite"), timeout=60)
    else:
        p = screener("risk", "--cdm", str(path), "--hbr-m", "10", timeout=60)
    assert p.returncode == 2, p.stderr[-1000:]
    assert "Traceback" not in p.stderr
    assert "regular file" in p.stderr or "folder" in p.stderr or "no usable" in p.stderr


def test_input_size_cap(tmp_path):
    big = tmp_path / "big.tle"
    big.write_bytes(b"x" * (2 * 1024 * 1024))
    p = screener("screen", "--catalog", str(big), "--primaries", f"{DEMO}/fleet.json", "--start",
                 START, env={"SCREENER_MAX_INPUT_MB": "1"}, timeout=60)
    assert p.returncode == 2 and "limit" in p.stderr and "SCREENER_MAX_INPUT_MB" in p.stderr


def _cdm_text(**changes):
    from .test_readme_claims import _CDM_CASE_1, _cov_lines

    text = _CDM_CASE_1.format(cov1=_cov_lines(100.0, 312.5, 1250.0), cov2=_cov_lines(100.0, 312.5, 1250.0))
    for key, value in changes.items():
        lines = text.splitlines()
        for i, ln in enumerate(lines):
            if ln.split("=")[0].strip() == key:
                unit = ln[ln.index("["):] if "[" in ln else ""
                lines[i] = f"{key:<36}= {value} {unit}".rstrip()
                break
        text = "\n".join(lines) + "\n"
    return text


@pytest.mark.parametrize("changes,needle", [
    ({"X": "nan"}, "X is not a finite number"), ({"CR_R": "inf"}, "CR_R is not a finite"),
    ({"CT_T": "nan"}, "CT_T is not a finite"), ({"X": "-1e6"}, "not an Earth orbit"),
    ({"MISS_DISTANCE": "nan"}, "MISS_DISTANCE"), ({"TCA": "not-a-time"}, "TCA is not"),
])
def test_cdm_values_are_checked(tmp_path, changes, needle):
    path = tmp_path / "bad.cdm"
    path.write_text(_cdm_text(**changes))
    line = _one_line_error(screener("risk", "--cdm", str(path), "--hbr-m", "10"))
    assert needle in line and str(path) in line, line


def test_cdm_duplicate_key_names_its_line(tmp_path):
    text = _cdm_text()
    text = text.replace("MISS_DISTANCE", "MISS_DISTANCE                       = 5.0 [m]\nMISS_DISTANCE", 1)
    path = tmp_path / "dup.cdm"
    path.write_text(text)
    line = _one_line_error(screener("risk", "--cdm", str(path), "--hbr-m", "10"))
    assert "given twice" in line and f"{path}:7" in line


def test_chan_series_memory_is_bounded():
    """A valid geometry 20 km out with 1 m sigmas once needed 1.6 GB for Chan's series."""
    import resource

    from screener.risk.pc import chan_is_reliable, pc_chan, pc_quadrature

    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    assert not chan_is_reliable(20000.0, 0.0, 1.0, 1.0, 10.0)[0]
    assert pc_quadrature(20000.0, 0.0, 1.0, 1.0, 10.0) == 0.0
    assert pc_chan(300.0, 0.0, 1.0, 1.0, 0.1) == pytest.approx(0.0, abs=1e-300)
    # a geometry that is not a number (a zero or NaN sigma) gives NaN, never a huge array
    assert math.isnan(pc_chan(float("nan"), 0.0, 1.0, 1.0, 0.1))
    assert math.isnan(pc_chan(1.0, 0.0, 0.0, 1.0, 0.1))
    assert resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - before < 200_000   # KiB


def test_risk_into_a_closed_pipe_is_quiet(tmp_path):
    path = tmp_path / "ok.cdm"
    path.write_text(_cdm_text())
    p = subprocess.run(f"{sys.executable} -m screener.cli.main risk --cdm {path} --hbr-m 10 | head -c 10",
                       shell=True, capture_output=True, text=True, timeout=120)
    assert "Traceback" not in p.stderr and "BrokenPipe" not in p.stderr


@pytest.mark.parametrize("address,needle", [
    ("foo", "not a scheduler address"), ("tls://127.0.0.1:8786", "dask_tls_ca_file"),
    ("tcp://192.0.2.10:8786", "plain tcp:// to 192.0.2.10 is refused"),
])
def test_dask_addresses_are_checked_before_any_connection(corpus, address, needle):
    line = _one_line_error(_screen(corpus, [f"{DEMO}/fleet.json"], "--dask", address))
    assert needle in line


def test_exports_of_two_stores_never_mix(tmp_path):
    out = tmp_path / "out"
    cfg = write_config(tmp_path / "c.toml", days=0.3, outputs=str(out))
    p = screener("run", "--config", cfg, "--store", str(tmp_path / "a.sqlite"), "--quiet")
    assert p.returncode == 0, p.stderr
    before = sorted(os.listdir(out / "run-1"))
    p = screener("run", "--config", cfg, "--store", str(tmp_path / "b.sqlite"), "--quiet")
    line = _one_line_error(p)
    assert "not an export of run 1" in line
    assert sorted(os.listdir(out / "run-1")) == before
    marker = json.loads((out / "run-1" / ".screener-export.json").read_text())
    assert marker["store"].endswith("a.sqlite")


def test_files_are_user_only(tmp_path):
    out = tmp_path / "out"
    cfg = write_config(tmp_path / "c.toml", days=0.3, outputs=str(out))
    p = screener("run", "--config", cfg, "--store", str(tmp_path / "st" / "s.sqlite"), "--quiet")
    assert p.returncode == 0, p.stderr
    for root, dirs, files in os.walk(tmp_path):
        for d in dirs:
            if d in ("st", "out", "logs", "run-1", "cdm"):
                assert stat.S_IMODE(os.stat(os.path.join(root, d)).st_mode) == 0o700, (root, d)
        for f in files:
            full = os.path.join(root, f)
            if f.endswith((".toml",)):
                continue
            assert stat.S_IMODE(os.stat(full).st_mode) == 0o600, full


def test_decay_mid_window_is_reported_with_object_time_and_share(tmp_path):
    """A 200 km object with a large B* re-enters about 10.6 h into the window (the 100 km gate
    on plain SGP4 states); the summary and JSON name it with the first bad time and its
    share, merged over the tasks of both workers (so near 56 %, not one task's figure)."""
    from screener.elements.tle import format_tle
    from screener.synth import circular
    from screener.timeutil import datetime_to_jd, parse_iso

    jd0, fr0 = datetime_to_jd(parse_iso(START))
    low = circular("88001", "SYN-REENTRY", 200.0, 51.0, 10.0, 0.0, jd0, fr0 - 0.05, bstar=0.01)
    cat = tmp_path / "cat.tle"
    lines = open(os.path.join(DEMO, "catalog.tle")).read().splitlines()[:151]
    cat.write_text("\n".join(lines + ["SYN-REENTRY", *format_tle(low)]) + "\n")
    out = tmp_path / "e.json"
    # all-vs-all, so that the filter of fleet mode (no primary reaches 150 km) keeps it
    p = screener("screen", "--catalog", str(cat), "--start", START, "--days", "1", "--workers",
                 "2", "--json", str(out))
    assert p.returncode == 0, p.stderr
    why = json.loads(out.read_text())["unusable_objects"]["88001"]
    assert "from 2026-12-0" in why and "% of the window not screened" in why
    share = float(why.split("; ")[-1].split("%")[0])
    assert 50 <= share <= 60, why
    assert "88001: " in p.stdout and "not screened" in p.stdout


def test_kill_9_loop_leaves_a_consistent_store_and_no_process(tmp_path):
    """20 runs killed with SIGKILL at seeded moments spread over a whole run (loading,
    screening, risk, commit): the store passes SQLite's integrity check, holds only whole
    runs, and no worker outlives its run."""
    cfg = write_config(tmp_path / "c.toml", days=0.5, workers=2)
    store = tmp_path / "s.sqlite"
    t0 = time.monotonic()
    p = screener("run", "--config", cfg, "--store", str(store), "--quiet", "--no-exports")
    assert p.returncode == 0, p.stderr
    full_s = time.monotonic() - t0
    rng = random.Random(20261202)
    runs_before = 1
    for k in range(20):
        proc = subprocess.Popen([sys.executable, "-m", "screener.cli.main", "run", "--config", cfg,
                                 "--store", str(store), "--quiet", "--no-exports"],
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(rng.uniform(0.05, 1.1) * full_s)
        family = process_tree(proc.pid)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        t_end = time.monotonic() + 60
        while any(alive(q) for q in family) and time.monotonic() < t_end:
            time.sleep(0.2)
        assert not any(alive(q) for q in family), f"kill {k}: a worker outlived its run"
        c = sqlite3.connect(store)
        assert c.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        n_runs = c.execute("SELECT count(*) FROM runs").fetchone()[0]
        # every stored run is whole: its encounter count matches its rows
        for rid, n in c.execute("SELECT id, n_encounters FROM runs"):
            assert c.execute("SELECT count(*) FROM encounters WHERE run_id=?", (rid,)).fetchone()[0] == n
        c.close()
        assert n_runs >= runs_before
        runs_before = n_runs
