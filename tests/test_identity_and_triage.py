"""One identity per object and triage by series, through the command line as a user runs it.

Sources for expected values: the TLE format (columns 10-17 hold the international designator
as two-digit launch year, launch number and piece; years 57-99 are 19xx, 00-56 20xx; alpha-5
numbers use a letter for the leading two digits, I and O skipped: common practice); CCSDS
508.0-B-1 for the CDM keywords (INTERNATIONAL_DESIGNATOR, EPHEMERIS_NAME, CATALOG_NAME);
the probability axioms for combining independent series.
"""

from __future__ import annotations

import csv
import glob
import json
import os

import pytest

from screener.risk import read_cdm

from .nightly import DEMO, screener, write_config

EXTRA = """
[fleet.objects."900000003"]
radius_m = 50.0

[fleet.objects."2026-902A"]
radius_m = 7.0

[catalog.objects."Z9006"]
radius_m = 3.0

[fleet.objects."900000099"]
radius_m = 1.0
"""


def _designator(tle_field: str) -> str:
    yy, rest = tle_field[:2], tle_field[2:].strip()
    return f"{1900 + int(yy) if int(yy) >= 57 else 2000 + int(yy)}-{rest}"


def _tle_line1(number: str) -> str:
    for line in open(os.path.join(DEMO, "catalog.tle")):
        if line.startswith(f"1 {number}"):
            return line
    raise AssertionError(number)


@pytest.fixture(scope="module")
def identified(tmp_path_factory):
    d = tmp_path_factory.mktemp("ids")
    cfg = write_config(d / "c.toml", days=3.0, extra=EXTRA, outputs=d / "out")
    p = screener("run", "--config", cfg, "--store", str(d / "s.sqlite"), "--json", str(d / "r.json"))
    assert p.returncode == 0, p.stderr
    return d, cfg, p, json.loads((d / "r.json").read_text())


def test_an_oem_primary_is_known_by_its_catalog_number(identified):
    _d, _cfg, _p, doc = identified
    mine = [e for e in doc["encounters"] if e["primary_name"] == "LARKSPUR-3"]
    assert mine and {e["primary"] for e in mine} == {"900000003"}
    assert all(e["primary_designator"] == "2026-903A" and e["primary_orbit"] == "OEM"
               and e["primary_source"] == "larkspur-3.oem" for e in mine)
    assert not any(e["primary"] == "2026-903A" or e["secondary"] == "2026-903A" for e in doc["encounters"])


def test_per_object_entries_apply_by_catalog_number_designator_or_alpha5(identified):
    _d, _cfg, p, doc = identified
    by = {}
    for e in doc["encounters"]:
        by.setdefault((e["primary"], e["secondary"]), e)
    # catalog default radius 5 m (write_config sets none): HBR = primary radius + 5 m
    assert {e["hbr_m"] for e in doc["encounters"] if e["primary"] == "900000003"} == {55.0}
    assert {e["hbr_m"] for e in doc["encounters"] if e["primary"] == "900000002"} == {12.0}
    assert by[("900000006", "339006")]["hbr_m"] == 5.0 + 3.0     # alpha-5 Z9006 = 339006
    # an entry naming no object is reported at its line, and not applied
    lines = open(_cfg).read().splitlines()
    line = next(k for k, t in enumerate(lines, start=1) if "900000099" in t)
    assert f"c.toml:{line}: [fleet.objects.\"900000099\"] matches no object" in p.stderr


def test_strict_refuses_an_entry_that_matches_nothing(tmp_path):
    cfg = write_config(tmp_path / "c.toml", days=0.5, extra=EXTRA)
    text = open(cfg).read().replace("workers = 1", "workers = 1\nstrict = true", 1)
    open(cfg, "w").write(text)
    p = screener("run", "--config", cfg, "--store", str(tmp_path / "s.sqlite"), "--quiet")
    assert p.returncode == 2 and "matches no object" in p.stderr and "strict" in p.stderr
    assert "Traceback" not in p.stderr and not os.path.exists(tmp_path / "s.sqlite-wal")


def test_cdm_names_designators_ephemeris_and_catalog(identified):
    d, _cfg, _p, _doc = identified
    p = screener("export", "--store", str(d / "s.sqlite"), "--out", str(d / "all"), "--cdm", "all")
    assert p.returncode == 0, p.stderr
    seen = set()
    for path in glob.glob(str(d / "all" / "cdm" / "*.cdm")):
        cdm = read_cdm(path)
        for k, obj in enumerate(cdm.objects):
            f = obj.fields
            assert f["INTERNATIONAL_DESIGNATOR"] != "UNKNOWN"
            if k == 0 and f["OBJECT_DESIGNATOR"] != "900000003":
                assert f["CATALOG_NAME"] == "fleet.json" and f["EPHEMERIS_NAME"] == "NONE"
            elif f["OBJECT_DESIGNATOR"] == "900000003":
                assert f["INTERNATIONAL_DESIGNATOR"] == "2026-903A"
                assert f["EPHEMERIS_NAME"] == "larkspur-3.oem" and f["CATALOG_NAME"] == "larkspur-3.oem"
                seen.add("oem")
            elif f["OBJECT_DESIGNATOR"].startswith("339"):
                n = int(f["OBJECT_DESIGNATOR"]) - 330000          # Z = 33 in alpha-5
                want = _designator(_tle_line1(f"Z{n:04d}")[9:17])
                assert f["INTERNATIONAL_DESIGNATOR"] == want and f["EPHEMERIS_NAME"] == "NONE"
                assert f["CATALOG_NAME"] == "catalog.tle"
                seen.add("tle")
            else:
                assert f["CATALOG_NAME"] == "catalog.tle"
    assert seen == {"oem", "tle"}


def test_the_same_object_as_alpha5_tle_and_numeric_omm_is_screened_once(tmp_path):
    """DEB-007 given twice: as the catalog's TLE (alpha-5 Z9006) and as an OMM with
    NORAD_CAT_ID 339006 at the same epoch: one object, the same encounters as the TLE alone."""
    from screener.elements import load_elements
    from screener.elements.omm import omm_fields

    rec = next(r for r in load_elements([os.path.join(DEMO, "catalog.tle")]).records
               if r.name == "DEB-007")
    fields = omm_fields(rec)
    assert fields["NORAD_CAT_ID"] == "339006"
    (tmp_path / "dup.json").write_text(json.dumps([fields]))
    runs = {}
    for label, extra in (("tle", []), ("both", [str(tmp_path / "dup.json")])):
        out = tmp_path / f"{label}.json"
        p = screener("screen", "--catalog", os.path.join(DEMO, "catalog.tle"), *extra,
                     "--primaries", os.path.join(DEMO, "fleet.json"), "--start",
                     "2026-12-04T12:00:00Z", "--days", "1", "--json", str(out), "--workers", "1")
        assert p.returncode == 0, p.stderr
        runs[label] = sorted((e["primary"], e["secondary"], e["tca"][:19])
                             for e in json.loads(out.read_text())["encounters"])
    assert runs["both"] == runs["tle"]
    assert sum(1 for _p, s, _t in runs["tle"] if s == "339006") == 1


def test_exports_carry_the_same_flags_and_series_as_the_tui(identified):
    d, _cfg, _p, doc = identified
    run_dir = glob.glob(str(d / "out" / "run-*"))[0]
    rows = list(csv.DictReader(open(os.path.join(run_dir, "encounters.csv"))))
    assert rows
    for r in rows:
        assert ("S" in r["flags"]) == (r["short_encounter_ok"] == "False")
        assert ("D" in r["flags"]) == (r["dilution_region"] == "True")
        assert int(r["series_count"]) >= 1 and r["series"] == f"{r['primary']}x{r['secondary']}"
    exported = json.load(open(os.path.join(run_dir, "encounters.json")))
    slow = [g for g in exported["series"] if g["proximity"]]
    assert slow and all(g["count"] >= 3 for g in slow), "the demo's co-orbital pair is one series"
    report = open(os.path.join(run_dir, "report.html")).read()
    assert "series Pc = the highest Pc" in report and "cumulative Pc" in report


def test_fail_on_act_counts_series_not_passes(tmp_path):
    cfg = write_config(tmp_path / "c.toml", days=3.0)
    p = screener("run", "--config", cfg, "--store", str(tmp_path / "s.sqlite"), "--quiet",
                 "--fail-on-act")
    assert p.returncode == 3
    assert "series at the act level" in p.stderr


def test_init_config_paths_work_literally_from_another_folder(tmp_path):
    """The README's first step: paths given relative to the working folder end up relative to
    the configuration's own folder, so the run finds them."""
    import shutil
    import subprocess
    import sys

    work = tmp_path / "work"
    (work / "data").mkdir(parents=True)
    for f in ("fleet.json", "catalog.tle"):
        shutil.copy(os.path.join(DEMO, f), work / "data" / f)
    run = lambda *a: subprocess.run([sys.executable, "-m", "screener.cli.main", *a], cwd=work,  # noqa: E731
                                    capture_output=True, text=True, timeout=600)
    p = run("init-config", "conf/nightly.toml", "--fleet", "data/fleet.json", "--catalog", "data/catalog.tle")
    assert p.returncode == 0, p.stderr
    text = (work / "conf" / "nightly.toml").read_text()
    assert '"../data/fleet.json"' in text
    text = text.replace('start = "today"', 'start = "2026-12-02T00:00:00Z"').replace(
        "window_days = 3.0", "window_days = 0.2")
    (work / "conf" / "nightly.toml").write_text(text)
    p = run("run", "--config", "conf/nightly.toml", "--store", "s.sqlite", "--quiet", "--no-exports")
    assert p.returncode == 0, p.stderr
    p = run("init-config", "other.toml", "--fleet", "nope.json")
    assert p.returncode == 2 and "nope.json" in p.stderr and "Traceback" not in p.stderr


def test_tui_reports_a_bad_config_before_it_starts(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[run]\nwindow_days = -1\n")
    p = screener("tui", "--store", str(tmp_path / "s.sqlite"), "--config", str(bad), timeout=60)
    assert p.returncode == 2 and "bad.toml" in p.stderr and "Traceback" not in p.stderr


def test_risk_cdm_gives_level_slow_warning_and_the_senders_pc(identified, tmp_path):
    """`screener risk --cdm` on exported CDMs: the attention level (default thresholds, common
    practice), a warning for a pass slower than 0.1 km/s, the message's own
    COLLISION_PROBABILITY beside ours, and a bad value named at its own line."""
    d, *_ = identified
    if not (d / "all").exists():
        assert screener("export", "--store", str(d / "s.sqlite"), "--out", str(d / "all"),
                        "--cdm", "all").returncode == 0
    kinds = set()
    for path in sorted(glob.glob(str(d / "all" / "cdm" / "*.cdm"))):
        out = tmp_path / "r.json"
        p = screener("risk", "--cdm", path, "--json", str(out))
        assert p.returncode == 0, p.stderr
        r = json.loads(out.read_text())
        kv = dict(line.split("=", 1) for line in open(path) if "=" in line and not line.startswith("COMMENT"))
        kv = {k.strip(): v.split("[")[0].strip() for k, v in kv.items()}
        assert r["attention"] in ("act", "watch", "routine") and f"attention {r['attention']}" in p.stdout
        assert r["pc_sender"] == pytest.approx(float(kv["COLLISION_PROBABILITY"]), rel=1e-12)
        assert "the message's own Pc" in p.stdout
        slow = float(kv["RELATIVE_SPEED"]) < 100.0          # m/s
        assert ("warning: slow encounter" in p.stdout) == slow
        kinds.add("slow" if slow else "fast")
    assert kinds == {"slow", "fast"}
    text = open(path).read().splitlines()
    k = next(n for n, t in enumerate(text) if t.startswith("CT_R"))
    text[k] = "CT_R = oops [m**2]"
    bad = tmp_path / "bad.cdm"
    bad.write_text("\n".join(text) + "\n")
    p = screener("risk", "--cdm", str(bad))
    assert p.returncode == 2 and f"bad.cdm:{k + 1}:" in p.stderr and "CT_R" in p.stderr
