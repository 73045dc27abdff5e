"""The command line as a user runs it: real subprocesses on the demo data and on bad input."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

DEMO = os.path.join(os.path.dirname(__file__), "..", "demo_elements")


def run(*args):
    return subprocess.run([sys.executable, "-m", "screener.cli.main", *args],
                          capture_output=True, text=True, timeout=600)


def test_screen_writes_the_documented_json_fields(tmp_path):
    out = tmp_path / "enc.json"
    p = run("screen", "--catalog", os.path.join(DEMO, "catalog.tle"), "--primaries",
            os.path.join(DEMO, "fleet.json"), "--start", "2026-12-02T00:00:00Z", "--days", "1",
            "--radius-km", "5", "--json", str(out), "--workers", "1")
    assert p.returncode == 0, p.stderr
    doc = json.loads(out.read_text())
    assert doc["encounters"], "the engineered demo events are found"
    for e in doc["encounters"]:
        for key in ("primary", "secondary", "tca", "miss_km", "radial_km", "in_track_km",
                    "cross_track_km", "relative_speed_km_s"):
            assert key in e
        assert e["tca"].endswith("Z") and "." in e["tca"]
        assert isinstance(e["primary"], str) and e["primary"] != e["secondary"]
    assert "Advisory only" in p.stdout


@pytest.mark.parametrize("args,needle", [
    (["screen", "--catalog", "/nonexistent.tle", "--start", "2026-12-02T00:00:00Z"], "no such file"),
    (["screen", "--catalog", DEMO + "/catalog.tle", "--start", "yesterday"], "bad start time"),
    (["screen", "--catalog", DEMO + "/catalog.tle", "--start", "2026-12-02T00:00:00Z",
      "--days", "-1"], "--days"),
    (["screen", "--catalog", DEMO + "/catalog.tle", "--start", "2026-12-02T00:00:00Z",
      "--ric-km", "1,2"], "--ric-km"),
    (["screen", "--catalog", DEMO + "/catalog.tle", "--primaries", DEMO + "/larkspur-3.oem",
      "--start", "2026-12-10T00:00:00Z"], "does not contain the screening window"),
])
def test_bad_input_one_line_nonzero_no_traceback(args, needle):
    p = run(*args)
    assert p.returncode == 2
    assert needle in p.stderr and "Traceback" not in p.stderr


def test_strict_mode_names_file_and_line(tmp_path):
    bad = tmp_path / "bad.tle"
    bad.write_text("1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4750\n"
                   "2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667\n")
    p = run("screen", "--catalog", str(bad), "--start", "2000-06-28T00:00:00Z", "--strict")
    assert p.returncode == 2 and f"{bad}:1:69" in p.stderr and "checksum" in p.stderr


@pytest.mark.parametrize("args,needle", [
    (["--days", "inf"], "--days inf is outside"), (["--days", "1e9"], "--days 1e+09 is outside"),
    (["--days", "nan"], "--days nan is outside"), (["--workers", "0"], "--workers 0 is outside"),
    (["--workers", "-3"], "--workers -3 is outside"), (["--max-age-days", "-1"], "--max-age-days -1"),
    (["--radius-km", "0"], "--radius-km 0 is outside"), (["--hbr-m", "-5"], "--hbr-m -5"),
])
def test_every_numeric_option_is_range_checked(args, needle):
    """Each bad value: exit 2, one line, no traceback, nothing attempted (no memory plan for a
    billion-day window)."""
    p = run("screen", "--catalog", f"{DEMO}/catalog.tle", "--start", "2026-12-02T00:00:00Z",
                 *args)
    assert p.returncode == 2 and "Traceback" not in p.stderr
    lines = p.stderr.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0], p.stderr


def test_run_with_config_refuses_one_off_options(tmp_path):
    from .nightly import write_config

    cfg = write_config(tmp_path / "c.toml", days=0.3)
    p = run("run", "--config", cfg, "--store", str(tmp_path / "s.sqlite"), "--days", "9")
    assert p.returncode == 2 and "--days" in p.stderr and "configuration" in p.stderr
