"""A CDM written from an encounter, checked in-process against independent references.

Sources: skyfield's EarthSatellite.at(t).position / velocity (GCRS, its own TEME -> GCRS
path) for the states labelled REF_FRAME = GCRF; the RTN basis written out here (R = r/|r|,
N = r x v/|r x v|, T = N x R; Vallado) for RELATIVE_POSITION_R/T/N and RELATIVE_VELOCITY_*;
CCSDS 508.0-B-1's COLLISION_PROBABILITY_METHOD values (from memory of the standard) for the
method keyword; plain sgp4 (twoline2rv) for the TEME states of two verification satellites
of Vallado et al. (2006).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest
from sgp4.api import WGS72, Satrec

from screener.exports.cdm_out import cdm_for_encounter, write_event_cdm
from screener.risk.cdm import read_cdm

# two of the verification set's element sets (SGP4-VER.TLE, shipped in the sgp4 package)
TLE_A = ("1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4753",
         "2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667")
TLE_B = ("1 06251U 62025E   06176.82412014  .00008885  00000-0  12808-3 0  3985",
         "2 06251  58.0579  54.0425 0030035 139.1568 221.1854 15.56387291  6774")
TCA = dt.datetime(2006, 6, 26, 3, 4, 5, 678000, tzinfo=dt.timezone.utc)


def _teme(tle, t):
    from screener.timeutil import datetime_to_jd

    jd, fr = datetime_to_jd(t)
    e, r, v = Satrec.twoline2rv(*tle, WGS72).sgp4(jd, fr)
    assert e == 0
    return np.array(r), np.array(v)


def _encounter(pc_method="Chan series"):
    ra, va = _teme(TLE_A, TCA)
    rb, vb = _teme(TLE_B, TCA)
    return {
        "primary": "00005", "secondary": "06251", "primary_name": "VER-A", "secondary_name": "VER-B",
        "tca": TCA.strftime("%Y-%m-%dT%H:%M:%S.%f") + "Z",
        "miss_km": float(np.linalg.norm(rb - ra)), "relative_speed_km_s": float(np.linalg.norm(vb - va)),
        "primary_state_teme": [*ra, *va], "secondary_state_teme": [*rb, *vb],
        "pc": 1.234e-5, "pc_method": pc_method, "hbr_m": 10.0, "covariance_source": "configured",
        "primary_cov_rtn_km2": np.diag([1e-4, 4e-3, 2e-4]).tolist(),
        "secondary_cov_rtn_km2": np.diag([4e-4, 1e-2, 9e-4]).tolist(),
        "primary_covariance": "configured", "secondary_covariance": "assumed covariance (LEO)",
    }


def test_states_are_gcrf_per_skyfield(tmp_path):
    from skyfield.api import EarthSatellite, load

    ts = load.timescale(builtin=True)
    path = write_event_cdm(str(tmp_path), _encounter())
    cdm = read_cdm(path)
    for obj, tle in zip(cdm.objects, (TLE_A, TLE_B)):
        assert obj.fields["REF_FRAME"] == "GCRF"
        at = EarthSatellite(*tle, "x", ts).at(ts.from_datetime(TCA))
        assert np.linalg.norm(obj.r_km - at.position.km) < 1e-3          # 1 m
        assert np.linalg.norm(obj.v_km_s - at.velocity.km_per_s) < 1e-6  # 1 mm/s


def test_relative_rtn_parts_and_covariance_units(tmp_path):
    e = _encounter()
    _, rel, objects, _ = cdm_for_encounter(e)
    r, v = np.array(e["primary_state_teme"][:3]), np.array(e["primary_state_teme"][3:])
    rho = np.array(e["secondary_state_teme"][:3]) - r
    w = np.array(e["secondary_state_teme"][3:]) - v
    R = r / np.linalg.norm(r)
    N = np.cross(r, v)
    N /= np.linalg.norm(N)
    T = np.cross(N, R)
    for ax, u in zip("RTN", (R, T, N)):
        assert float(rel[f"RELATIVE_POSITION_{ax}"]) == pytest.approx(rho @ u * 1e3, abs=1e-3)
        assert float(rel[f"RELATIVE_VELOCITY_{ax}"]) == pytest.approx(w @ u * 1e3, abs=1e-3)
    assert float(rel["MISS_DISTANCE"]) == pytest.approx(np.linalg.norm(rho) * 1e3, abs=1e-3)
    # covariance in m^2 in each object's own RTN frame, as the standard gives it
    assert objects[0]["cov_rtn_m"][1, 1] == pytest.approx(4e-3 * 1e6)
    assert objects[1]["cov_rtn_m"][2, 2] == pytest.approx(9e-4 * 1e6)
    assert objects[0]["COVARIANCE_METHOD"] == "CALCULATED"
    assert objects[1]["COVARIANCE_METHOD"] == "DEFAULT"


@pytest.mark.parametrize("method,keyword", [
    ("Chan series", "CHAN-1997"),
    ("2-D quadrature (Chan not used: covariance aspect ratio 31.0 above 20)", "FOSTER-1992"),
    ("Monte Carlo along the relative path (+-1800 s, 50,000 samples, ...)", None),
])
def test_method_keyword_names_the_method_used(method, keyword):
    _, rel, _, comments = cdm_for_encounter(_encounter(method))
    assert rel.get("COLLISION_PROBABILITY_METHOD") == keyword
    assert float(rel["COLLISION_PROBABILITY"]) == pytest.approx(1.234e-5, rel=1e-4)
    assert any(method in c for c in comments)


def test_frame_rotations_for_many_times_come_in_chunks_with_the_same_matrices(monkeypatch):
    """Long time lists go through skyfield in chunks (its nutation arrays grow with the number
    of times): the matrices equal skyfield's for the whole list in one call."""
    from screener.propagation import frames

    t_s = np.linspace(0.0, 3 * 86400.0, 5000)
    chunked = frames.teme_to_itrs_matrices(2461376.5, 0.0, t_s)
    monkeypatch.setattr(frames, "FRAME_CHUNK_TIMES", 10**9)
    whole = frames.teme_to_itrs_matrices(2461376.5, 0.0, t_s)
    assert chunked.shape == (5000, 3, 3)
    assert np.max(np.abs(chunked - whole)) < 1e-15
