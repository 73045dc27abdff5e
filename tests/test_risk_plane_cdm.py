"""Encounter-plane projection (a case constructed by hand) and a CDM round trip.

Sources: the encounter-plane construction (common practice: the plane normal to the relative
velocity at TCA); CCSDS 508.0-B-1 keyword names and order, as listed in screener.risk.cdm
(from memory of the standard's tables).
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from screener.risk import assess, assess_cdm, project, read_cdm, write_cdm
from screener.risk.cdm import COVARIANCE, HEADER, OBJECT_META, STATE
from screener.risk.pc import pc_quadrature


def test_projection_known_by_hand():
    # relative velocity along z: the plane is x-y; miss 100 m along x; covariance diag in km^2
    rho = np.array([0.1, 0.0, 0.0])
    w = np.array([0.0, 0.0, 10.0])
    cov = np.diag([0.05**2, 0.02**2, 9.0])          # the z (along-w) term must drop out
    g = project(rho, w, cov)
    assert g.miss_m == pytest.approx(100.0)
    assert sorted([g.sx_m, g.sy_m]) == pytest.approx([20.0, 50.0])
    assert abs(g.xm_m) + abs(g.ym_m) == pytest.approx(100.0)   # the miss lies on the 50 m axis
    assert pc_quadrature(g.xm_m, g.ym_m, g.sx_m, g.sy_m, 10.0) == pytest.approx(
        pc_quadrature(0.0, 100.0, 20.0, 50.0, 10.0), rel=1e-9)


def _event(tmp_path):
    r1 = np.array([6900.0, 0.0, 0.0]); v1 = np.array([0.0, 7.6, 0.0])
    r2 = r1 + np.array([0.0, 0.0, 0.3]); v2 = np.array([0.0, -7.0, 3.0])
    c1 = np.diag([0.05, 0.4, 0.05]) ** 2
    c2 = np.diag([0.1, 0.8, 0.1]) ** 2
    full = []
    for c in (c1, c2):
        m = np.zeros((6, 6)); m[:3, :3] = c * 1e6; m[3:, 3:] = np.eye(3) * 1e-4
        full.append(m)
    objs = []
    for k, (r, v, m) in enumerate(((r1, v1, full[0]), (r2, v2, full[1])), start=1):
        objs.append({"OBJECT": f"OBJECT{k}", "OBJECT_DESIGNATOR": f"90000000{k}",
                     "CATALOG_NAME": "SYNTHETIC", "OBJECT_NAME": f"SYN-{k}",
                     "INTERNATIONAL_DESIGNATOR": f"2026-99{k}A", "EPHEMERIS_NAME": "NONE",
                     "COVARIANCE_METHOD": "CALCULATED", "MANEUVERABLE": "NO", "REF_FRAME": "EME2000",
                     "r_km": r, "v_km_s": v, "cov_rtn_m": m})
    path = tmp_path / "event.cdm"
    write_cdm(str(path), {"CCSDS_CDM_VERS": "1.0", "CREATION_DATE": "2026-12-01T00:00:00.000",
                          "ORIGINATOR": "SCREENER", "MESSAGE_ID": "TEST-1"},
              {"TCA": "2026-12-02T06:30:00.000", "MISS_DISTANCE": "300.0"}, objs)
    want = assess(r1, v1, c1, r2, v2, c2, 20.0, "test")
    return path, want


def test_cdm_round_trip_recomputes_the_same_pc(tmp_path):
    path, want = _event(tmp_path)
    got = assess_cdm(read_cdm(str(path)), 20.0)
    assert got["pc"] == pytest.approx(want["pc"], rel=1e-8)
    assert got["miss_km"] == pytest.approx(0.3)


def test_cdm_keywords_present_in_order(tmp_path):
    path, _ = _event(tmp_path)
    keys = [l.split("=")[0].strip() for l in path.read_text().splitlines()]
    per_object = list(OBJECT_META + STATE + COVARIANCE)
    expected = list(HEADER) + ["TCA", "MISS_DISTANCE"] + per_object + per_object
    assert keys == expected


def test_cdm_missing_keyword_and_cli(tmp_path):
    path, _ = _event(tmp_path)
    bad = tmp_path / "bad.cdm"
    bad.write_text("\n".join(l for l in path.read_text().splitlines() if not l.startswith("TCA")))
    p = subprocess.run([sys.executable, "-m", "screener.cli.main", "risk", "--cdm", str(bad)],
                       capture_output=True, text=True)
    assert p.returncode == 2 and "TCA" in p.stderr and "Traceback" not in p.stderr
    out = tmp_path / "r.json"
    p = subprocess.run([sys.executable, "-m", "screener.cli.main", "risk", "--cdm", str(path),
                        "--hbr-m", "20", "--json", str(out)], capture_output=True, text=True)
    assert p.returncode == 0, p.stderr
    import json
    doc = json.loads(out.read_text())
    for key in ("pc", "pc_method", "miss_km", "relative_speed_km_s", "pc_max"):
        assert key in doc
