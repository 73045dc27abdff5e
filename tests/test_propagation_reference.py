"""Propagation layer against external references.

Sources:
- Vallado, Crawford, Hujsak & Kelso (2006), "Revisiting Spacetrack Report #3", AIAA 2006-6753:
  the verification element sets SGP4-VER.TLE and expected output tcppver.out, as shipped inside
  the `sgp4` package.
- skyfield's EarthSatellite and its ITRS frame (reference library).
- Kepler's third law; geostationary radius 42,164 km (handbook value).
"""

from __future__ import annotations

import math
from importlib.resources import files

import numpy as np
import pytest

from screener.constants import MU_EARTH_KM3_S2, MU_WGS72_KM3_S2, SIDEREAL_DAY_S
from screener.elements import ElementSet, Source
from screener.propagation import Sgp4Batch, semi_major_axis_km, period_s, teme_to_itrs_km

ONE_MM_KM = 1e-6
ONE_METRE_KM = 1e-3


def _verification_cases():
    tle = files("sgp4").joinpath("SGP4-VER.TLE").read_text().splitlines()
    out = files("sgp4").joinpath("tcppver.out").read_text().replace("\r", "").splitlines()
    expected: dict[int, list[list[float]]] = {}
    current = None
    for line in out:
        if line.endswith("xx"):
            current = int(line.split()[0])
            expected.setdefault(current, [])
        else:
            expected[current].append([float(x) for x in line.split()[:7]])
    cases = []
    it = iter(enumerate(tle, start=1))
    for lineno, l1 in it:
        if not l1.startswith("1 "):
            continue
        _, l2 = next(it)
        rec = ElementSet.from_tle(l1[:69], l2[:69], source=Source("SGP4-VER.TLE", lineno),
                                  verify_checksum=False)
        t0, t1, dt = (float(x) for x in l2[69:].split())
        cases.append((rec, t0, t1, dt, expected[int(rec.catalog_id.lstrip('0') or 0) if rec.catalog_id.isdigit() else rec.catalog_id]))
    return cases


def test_vallado_2006_verification_vectors_through_batch_interface():
    """Every tcppver.out state reproduced to 1e-6 km (positions) through Sgp4Batch; the error
    cases stop where the reference stops, with the codes sgp4's own test lists [1,1,6,6,4,3,6]."""
    errors_seen = []
    compared = 0
    for rec, t0, t1, dt, rows in _verification_cases():
        times_min = [row[0] for row in rows]
        batch = Sgp4Batch([rec])
        # all expected rows plus, where the reference stops early, the next step (an error)
        nxt = times_min[-1] + dt if times_min else t0
        query = np.array(times_min + ([nxt] if nxt <= t1 + 1e-9 or not rows else []))
        t_s = query * 60.0
        r, v, code = batch.states(rec.epoch_jd, rec.epoch_fr, t_s, gates=False)
        if code[0, 0] != 0:
            # tcppver.out repeats the previous data line where SGP4 fails at epoch
            errors_seen.append(int(code[0, 0]))
            assert np.isnan(r[0, 0]).all()
            continue
        for k, row in enumerate(rows):
            assert code[0, k] == 0, (rec.catalog_id, row[0])
            assert np.max(np.abs(r[0, k] - row[1:4])) < ONE_MM_KM, (rec.catalog_id, row[0])
            assert np.max(np.abs(v[0, k] - row[4:7])) < 1e-9 * 1e3, (rec.catalog_id, row[0])
            compared += 1
        extra = code[0, len(rows):]
        if len(extra) and extra[0] != 0:
            errors_seen.append(int(extra[0]))
            assert np.isnan(r[0, len(rows):]).all()
    assert compared > 500
    # the expected error list of the verification set (sgp4 package's own test, same data)
    assert sorted(errors_seen) == sorted([1, 1, 6, 6, 4, 3, 6])


def test_teme_to_itrs_matches_skyfield_earthsatellite_to_one_metre():
    from skyfield.api import EarthSatellite, load
    from skyfield.framelib import itrs

    l1 = "1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4753"
    l2 = "2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667"
    ts = load.timescale(builtin=True)
    sat = EarthSatellite(l1, l2, "VER-5", ts)
    rec = ElementSet.from_tle(l1, l2)
    t_s = np.arange(0.0, 86400.0, 3600.0)
    t = ts.utc(2000, 6, 27, 0, 0, rec.epoch_fr * 86400.0 + t_s)
    want = sat.at(t).frame_xyz(itrs).km.T
    r, _, _ = Sgp4Batch([rec]).states(rec.epoch_jd, rec.epoch_fr, t_s)
    got = teme_to_itrs_km(r[0], rec.epoch_jd, rec.epoch_fr, t_s)
    assert np.max(np.linalg.norm(got - want, axis=1)) < ONE_METRE_KM


def test_kepler_third_law_geostationary_radius():
    """n^2 a^3 = mu: a one-sidereal-day circular orbit has a = 42,164 km (handbook value)."""
    n = 2 * math.pi / SIDEREAL_DAY_S
    a_iers = semi_major_axis_km(n, MU_EARTH_KM3_S2)   # IERS/WGS-84 mu
    a_wgs72 = semi_major_axis_km(n, MU_WGS72_KM3_S2)  # WGS-72 mu, as inside SGP4
    assert a_iers == pytest.approx(42164.0, abs=1.0)
    assert a_wgs72 == pytest.approx(42164.0, abs=1.0)
    assert period_s(a_iers, MU_EARTH_KM3_S2) == pytest.approx(SIDEREAL_DAY_S, rel=1e-12)


def test_sanity_gates_mark_decayed_states():
    """A re-entering object: states below 100 km altitude are marked unusable (common practice)."""
    l1 = "1 99001U 26001A   26335.00000000  .10000000  00000-0  50000-1 0  9990"
    l2 = "2 99001  51.6000  10.0000 0005000  90.0000 270.0000 16.30000000    10"
    rec = ElementSet.from_tle(l1, l2, verify_checksum=False)
    t_s = np.arange(0, 10 * 86400.0, 600.0)
    r, v, code = Sgp4Batch([rec]).states(rec.epoch_jd, rec.epoch_fr, t_s)
    assert code[0, 0] == 0
    assert (code[0] != 0).any()  # decays (SGP4 error or the 100 km gate) within ten days


def test_osculating_orbit_of_a_geostationary_state():
    """A circular state at a = 42,164.17 km (IERS mu) has the sidereal-day period, 86,164.09 s
    (handbook value, common practice), and zero eccentricity and inclination."""
    import math

    from screener.constants import MU_EARTH_KM3_S2
    from screener.propagation.orbit import osculating

    a = 42164.17
    v = math.sqrt(MU_EARTH_KM3_S2 / a)
    o = osculating([a, 0.0, 0.0], [0.0, v, 0.0])
    assert o.size.period_s == pytest.approx(86164.09, abs=1.0)
    assert o.eccentricity < 1e-9 and o.inclination_deg < 1e-9
    assert o.size.regime == "GEO"
    assert osculating([7000.0, 0, 0], [0, 12.0, 0]).size is None      # above escape speed


def _tle_exp(field: str) -> float:
    """TLE implied-decimal exponent field, e.g. ' 28098-4' -> 0.28098e-4."""
    f = field.strip()
    if not f:
        return 0.0
    sign = -1.0 if f[0] == "-" else 1.0
    f = f.lstrip("+-")
    return sign * float("0." + f[:-2]) * 10.0 ** int(f[-2:])


def _omm_fields_from_tle(l1: str, l2: str) -> dict:
    """OMM keywords (CCSDS 502.0-B-3) from the TLE columns, parsed here without screener."""
    import datetime as dt

    yy = int(l1[18:20])
    year = 2000 + yy if yy < 57 else 1900 + yy
    t = dt.datetime(year, 1, 1) + dt.timedelta(days=float(l1[20:32]) - 1.0)
    return {"OBJECT_NAME": "VER", "NORAD_CAT_ID": l1[2:7].strip(),
            "EPOCH": t.strftime("%Y-%m-%dT%H:%M:%S.%f"),
            "MEAN_MOTION": l2[52:63], "ECCENTRICITY": "0." + l2[26:33].strip(),
            "INCLINATION": l2[8:16], "RA_OF_ASC_NODE": l2[17:25], "ARG_OF_PERICENTER": l2[34:42],
            "MEAN_ANOMALY": l2[43:51], "BSTAR": _tle_exp(l1[53:61]),
            "MEAN_MOTION_DOT": float(l1[33:43]), "MEAN_MOTION_DDOT": _tle_exp(l1[44:52])}


def test_omm_born_sets_reproduce_the_vallado_2006_vectors():
    """The same verification element sets given as OMM keywords (so they go through sgp4init,
    not twoline2rv) reproduce tcppver.out to 1 cm: OMM-born sets use WGS-72 as the TLEs do
    (a WGS-84 initialisation would be off by ~100 m)."""
    compared = 0
    tle = files("sgp4").joinpath("SGP4-VER.TLE").read_text().splitlines()
    pairs = [(a, b) for a, b in zip(tle, tle[1:]) if a.startswith("1 ") and b.startswith("2 ")]
    by_id = {}
    for rec, t0, t1, dt, rows in _verification_cases():
        by_id[rec.catalog_id] = rows
    for l1, l2 in pairs:
        sid = l1[2:7].strip()
        rec_tle = ElementSet.from_tle(l1[:69], l2[:69], verify_checksum=False)
        rows = by_id.get(rec_tle.catalog_id)
        if not rows:
            continue
        rec = ElementSet.from_omm(_omm_fields_from_tle(l1, l2))
        times_min = np.array([row[0] for row in rows[:12]])
        # the OMM epoch is the TLE's to the microsecond: propagate from the TLE's own epoch
        dt_s = ((rec_tle.epoch_jd - rec.epoch_jd) + (rec_tle.epoch_fr - rec.epoch_fr)) * 86400.0
        r, _, code = Sgp4Batch([rec]).states(rec.epoch_jd, rec.epoch_fr, times_min * 60.0 + dt_s,
                                             gates=False)
        for k, row in enumerate(rows[:12]):
            if code[0, k] != 0:
                break
            assert np.max(np.abs(r[0, k] - row[1:4])) < 1e-5, (sid, row[0])
            compared += 1
    assert compared > 200


def test_geodetic_height_against_skyfield_wgs84():
    """Altitudes shown for encounters: our WGS-84 geodetic conversion against skyfield's
    wgs84 (reference library) for states of a verification satellite, to 1 m and 1e-6 deg."""
    from skyfield.api import EarthSatellite, load, wgs84

    from screener.propagation.frames import geodetic, height_km

    l1 = "1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4753"
    l2 = "2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667"
    ts = load.timescale(builtin=True)
    sat = EarthSatellite(l1, l2, "VER-5", ts)
    rec = ElementSet.from_tle(l1, l2)
    t_s = np.arange(0.0, 86400.0, 1800.0)
    r, _, _ = Sgp4Batch([rec]).states(rec.epoch_jd, rec.epoch_fr, t_s)
    lat, lon, h = geodetic(r[0], rec.epoch_jd, rec.epoch_fr, t_s)
    t = ts.utc(2000, 6, 27, 0, 0, rec.epoch_fr * 86400.0 + t_s)
    sub = wgs84.geographic_position_of(sat.at(t))
    assert np.max(np.abs(h - sub.elevation.km)) < ONE_METRE_KM
    assert np.max(np.abs(lat - sub.latitude.degrees)) < 1e-6
    dlon = (lon - sub.longitude.degrees + 180.0) % 360.0 - 180.0
    assert np.max(np.abs(dlon)) < 1e-6
    # the height straight from TEME positions (no frame rotation) is the same height
    assert np.max(np.abs(height_km(r[0]) - sub.elevation.km)) < ONE_METRE_KM
