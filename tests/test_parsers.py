"""Element-set readers: malformed inputs, property tests, round trips, OEM interpolation.

Sources: TLE column layout and checksum rule (common practice, the NORAD two-line format);
CCSDS 502.0-B-3 (OMM/OEM keywords); sgp4's shipped SGP4-VER.TLE for valid real-format lines.
"""

from __future__ import annotations

import json
import os
from importlib.resources import files

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from screener.elements import ElementSet, load_elements, read_oem
from screener.elements.catalog import iter_file
from screener.elements.omm import iter_omm_csv, iter_omm_json, iter_omm_kvn, iter_omm_xml
from screener.elements.tle import iter_tle_text
from screener.errors import ParseError
from screener.propagation import OemTrajectory, Sgp4Batch

DEMO = os.path.join(os.path.dirname(__file__), "..", "demo_elements")
L1 = "1 00005U 58002B   00179.78495062  .00000023  00000-0  28098-4 0  4753"
L2 = "2 00005  34.2682 348.7242 1859667 331.7664  19.3264 10.82419157413667"
ONE_METRE_KM = 1e-3


def _errors(text, reader=iter_tle_text):
    return [x for x in reader(text, "f.tle") if isinstance(x, ParseError)]


def test_bad_checksum_names_file_line_column():
    bad = L1[:-1] + "0"
    (err,) = _errors(f"{bad}\n{L2}\n")
    assert (err.path, err.line, err.column) == ("f.tle", 1, 69) and "checksum" in err.reason


def test_non_ascii_digit_is_a_checksum_error_not_a_crash():
    """A superscript two passes str.isdigit but not int(); only ASCII digits count in the
    checksum (common practice: the format is ASCII), so the line is refused with its place."""
    bad = L1[:20] + "\u00b2" + L1[21:]
    (err,) = _errors(f"{bad}\n{L2}\n")
    assert (err.path, err.line) == ("f.tle", 1) and "checksum" in err.reason


def test_line_number_pairing():
    assert "not followed by line 2" in _errors(f"{L1}\n{L1}\n")[0].reason
    assert "line 2 without" in _errors(f"{L2}\n")[0].reason
    other = L2.replace("00005", "00006", 1)
    assert "does not match" in _errors(f"{L1}\n{other}\n")[0].reason


def test_non_numeric_field_and_truncation():
    bad = L2[:8] + " 3x.2682" + L2[16:]
    errs = _errors(f"{L1}\n{bad}\n")
    assert errs and errs[0].line == 2
    assert "truncated" in _errors(f"NAME\n{L1}\n")[0].reason


def test_eccentricity_and_mean_motion_checks():
    rec = ElementSet.from_tle(L1, L2)
    with pytest.raises(ParseError, match="mean motion"):
        ElementSet.from_omm({"EPOCH": "2026-12-01T00:00:00", "MEAN_MOTION": "-1",
                             "ECCENTRICITY": "0.1", "INCLINATION": "10", "RA_OF_ASC_NODE": "0",
                             "ARG_OF_PERICENTER": "0", "MEAN_ANOMALY": "0", "BSTAR": "0",
                             "NORAD_CAT_ID": "1"})
    with pytest.raises(ParseError, match="eccentricity"):
        ElementSet.from_omm({"EPOCH": "2026-12-01T00:00:00", "MEAN_MOTION": "15",
                             "ECCENTRICITY": "1.2", "INCLINATION": "10", "RA_OF_ASC_NODE": "0",
                             "ARG_OF_PERICENTER": "0", "MEAN_ANOMALY": "0", "BSTAR": "0",
                             "NORAD_CAT_ID": "1"})
    assert rec.eccentricity == pytest.approx(0.1859667)


OMM_KVN = """CCSDS_OMM_VERS = 3.0
CREATION_DATE = 2026-12-01T00:00:00
ORIGINATOR = TEST
OBJECT_NAME = SYN-A
OBJECT_ID = 2026-999A
CENTER_NAME = EARTH
REF_FRAME = TEME
TIME_SYSTEM = UTC
MEAN_ELEMENT_THEORY = SGP4
EPOCH = 2026-12-01T12:34:56.123456
MEAN_MOTION = 15.2 [rev/day]
ECCENTRICITY = 0.0012
INCLINATION = 53.0 [deg]
RA_OF_ASC_NODE = 10.0
ARG_OF_PERICENTER = 20.0
MEAN_ANOMALY = 30.0
NORAD_CAT_ID = 912345678
BSTAR = 0.0001
"""


def test_omm_json_items_keep_their_lines():
    """Each OMM object of a JSON list is read with the line it starts on (the list is read
    item by item): records equal to those of the json module's own reading (the reference
    library), lines as laid out here, also after strings with braces, brackets and escaped
    line breaks, and a list item that is not an object is refused at its own line.  A
    malformed list (trailing comma, text after it) gives json's message with its place."""
    fields = {k: v.split(" [")[0] for k, v in (l.split(" = ") for l in OMM_KVN.strip().splitlines())}
    odd = dict(fields, OBJECT_NAME='SAT {"[x]"}\\n', NORAD_CAT_ID="912345679")
    text = ("[\n" + json.dumps(fields) + ",\n\n  " + json.dumps(odd, indent=1) + ",\n"
            + "  [1, {\"a\": 2}],\n" + json.dumps(fields) + "\n]\n")
    got = list(iter_omm_json(text, "a.json"))
    want = [ElementSet.from_omm(f) for f in json.loads(text) if isinstance(f, dict)]
    recs = [g for g in got if not isinstance(g, ParseError)]
    assert [r.catalog_id for r in recs] == [w.catalog_id for w in want]
    assert [r.name for r in recs] == [w.name for w in want]
    assert [r.source.line for r in recs] == [2, 4, 5 + len(json.dumps(odd, indent=1).splitlines())]
    bad = [g for g in got if isinstance(g, ParseError)]
    assert len(bad) == 1 and "not an object" in str(bad[0]) and bad[0].line == 4 + len(
        json.dumps(odd, indent=1).splitlines())
    for broken in ("[" + json.dumps(fields) + ",]", "[" + json.dumps(fields) + "] x"):
        err = list(iter_omm_json(broken, "b.json"))
        assert len(err) == 1 and isinstance(err[0], ParseError) and "malformed JSON" in str(err[0])


def test_omm_kvn_keeps_microseconds_and_large_catalog_numbers():
    (rec,) = list(iter_omm_kvn(OMM_KVN, "a.omm"))
    assert rec.catalog_id == "912345678" and rec.sgp4_satnum == 0  # placeholder for SGP4
    assert rec.epoch.microsecond == 123456
    r, _, code = Sgp4Batch([rec]).states(rec.epoch_jd, rec.epoch_fr, np.array([0.0, 60.0]))
    assert (code == 0).all()


def test_omm_missing_keyword_and_bad_epoch():
    text = OMM_KVN.replace("BSTAR = 0.0001\n", "")
    (err,) = list(iter_omm_kvn(text, "a.omm"))
    assert isinstance(err, ParseError) and "BSTAR" in err.reason and err.line == 1
    (err,) = list(iter_omm_kvn(OMM_KVN.replace("2026-12-01T12", "2026-13-01T12"), "a.omm"))
    assert "EPOCH" in err.reason


def test_omm_json_numbers_or_strings_and_csv_and_xml():
    fields = {k: v for k, v in (l.split(" = ") for l in OMM_KVN.strip().splitlines())}
    fields = {k: v.split(" [")[0] for k, v in fields.items()}
    as_str = json.dumps([fields])
    as_num = json.dumps([{k: (float(v) if k in ("MEAN_MOTION", "BSTAR") else v) for k, v in fields.items()}])
    a = list(iter_omm_json(as_str, "a.json"))[0]
    b = list(iter_omm_json(as_num, "a.json"))[0]
    assert a.mean_motion_rev_day == b.mean_motion_rev_day == 15.2
    csv_text = ",".join(fields) + "\n" + ",".join(fields.values()) + "\n"
    c = list(iter_omm_csv(csv_text, "a.csv"))[0]
    assert c.catalog_id == "912345678"
    xml = "<ndm><omm><body><segment><data><meanElements>" + "".join(
        f"<{k}>{v}</{k}>" for k, v in fields.items()) + "</meanElements></data></segment></body></omm></ndm>"
    d = list(iter_omm_xml(xml, "a.xml"))[0]
    assert d.epoch == a.epoch


def test_xml_entities_refused():
    bomb = '<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "aaaa">]><omm>&a;</omm>'
    (err,) = list(iter_omm_xml(bomb, "b.xml"))
    assert isinstance(err, ParseError) and "refused" in err.reason


def test_duplicates_keep_newest_and_say_so(tmp_path):
    rec = ElementSet.from_tle(L1, L2)
    import dataclasses
    newer = dataclasses.replace(rec, epoch_fr=rec.epoch_fr + 0.1, tle_lines=None)
    l1, l2 = newer.to_tle()
    p = tmp_path / "dup.tle"
    p.write_text(f"{L1}\n{L2}\n{l1}\n{l2}\n")
    rep = load_elements(str(p))
    assert len(rep.records) == 1 and len(rep.superseded) == 1
    assert rep.records[0].epoch_fr == pytest.approx(newer.epoch_fr, abs=1e-8)


def test_strict_mode_raises_first_error(tmp_path):
    p = tmp_path / "x.tle"
    p.write_text(f"{L1[:-1]}0\n{L2}\n")
    with pytest.raises(ParseError):
        load_elements(str(p), strict=True)
    assert len(load_elements(str(p)).errors) == 1


def test_tle_round_trip_on_verification_set():
    """record -> TLE -> record gives the same fields; the canonical lines come back verbatim."""
    lines = files("sgp4").joinpath("SGP4-VER.TLE").read_text().splitlines()
    exact = 0
    for k, l1 in enumerate(lines):
        if not l1.startswith("1 "):
            continue
        l1, l2 = l1[:69], lines[k + 1][:69]
        rec = ElementSet.from_tle(l1, l2, verify_checksum=False)
        o1, o2 = rec.to_tle()
        back = ElementSet.from_tle(o1, o2)
        for f in ("mean_motion_rev_day", "eccentricity", "inclination_deg", "raan_deg",
                  "arg_perigee_deg", "mean_anomaly_deg", "bstar_per_earth_radius", "epoch_fr"):
            assert getattr(back, f) == pytest.approx(getattr(rec, f), rel=1e-9, abs=1e-12), f
        exact += (o1, o2) == (l1, l2)
    assert exact >= 10


def test_demo_catalog_round_trips_verbatim():
    text = open(os.path.join(DEMO, "catalog.tle")).read().splitlines()
    recs = [r for r in iter_tle_text("\n".join(text[:301]), "catalog.tle")]
    assert all(not isinstance(r, ParseError) for r in recs)
    for r in recs:
        assert r.to_tle() == r.tle_lines


def _count(name):
    from .conftest import FUZZ_COUNTS

    FUZZ_COUNTS[name] = FUZZ_COUNTS.get(name, 0) + 1


_ANY_FLOAT = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-10**30, 10**30),
                       st.text(max_size=12))


@settings(max_examples=300, deadline=None)
@given(st.dictionaries(st.sampled_from(["MEAN_MOTION", "ECCENTRICITY", "INCLINATION", "RA_OF_ASC_NODE",
                                        "ARG_OF_PERICENTER", "MEAN_ANOMALY", "BSTAR",
                                        "MEAN_MOTION_DOT", "MEAN_MOTION_DDOT", "ELEMENT_SET_NO",
                                        "REV_AT_EPOCH", "NORAD_CAT_ID", "OBJECT_NAME"]),
                       _ANY_FLOAT, max_size=6))
def test_omm_fields_of_any_value_give_a_finite_record_or_a_parse_error(changes):
    """Hostile numbers (NaN, infinities, 1e308, huge integers, text) in any OMM keyword: the
    reader yields a ParseError or a record whose every number is finite (CCSDS 502.0-B-3)."""
    import json as _json
    import math as _math

    _count("OMM keyword values")
    base = _json.load(open(os.path.join(DEMO, "fleet.json")))[0]
    base.update(changes)
    text = _json.dumps([base], allow_nan=True)
    for item in iter_omm_json(text, "fuzz.json"):
        if isinstance(item, ElementSet):
            for f in ("mean_motion_rev_day", "eccentricity", "inclination_deg", "raan_deg",
                      "arg_perigee_deg", "mean_anomaly_deg", "bstar_per_earth_radius",
                      "ndot_rev_day2", "nddot_rev_day3"):
                assert _math.isfinite(getattr(item, f)), f
        else:
            assert isinstance(item, ParseError)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["X", "Y", "Z", "X_DOT", "CR_R", "CT_T", "CN_N", "TCA",
                                           "MISS_DISTANCE", "CREATION_DATE", "OBJECT", "REF_FRAME"]),
                          _ANY_FLOAT), max_size=4))
def test_cdm_with_any_values_is_read_or_refused(changes):
    from .test_hostile_inputs import _cdm_text
    from screener.risk import read_cdm

    _count("CDM keyword values")
    text = _cdm_text()
    for key, value in changes:
        text = text.replace(f"\n{key} ", f"\n{key} = {value}\n{key}_WAS ", 1)
    try:
        read_cdm("fuzz.cdm", text=text)
    except ParseError:
        pass


@settings(max_examples=300, deadline=None)
@given(st.binary(max_size=600))
def test_any_bytes_yield_records_or_parse_errors(blob):
    _count("bytes->all readers")
    text = blob.decode("utf-8", errors="replace")
    for reader in (iter_tle_text, iter_omm_kvn, iter_omm_xml, iter_omm_csv, iter_omm_json):
        for item in reader(text, "fuzz"):
            assert isinstance(item, (ElementSet, ParseError))
    try:
        read_oem("fuzz.oem", text=text)
    except ParseError:
        pass


@settings(max_examples=150, deadline=None)
@given(st.text(alphabet="0123456789 .-+U12AZ\n", max_size=300))
def test_tle_like_text_yields_records_or_parse_errors(text):
    _count("TLE-like text")
    for item in iter_tle_text(L1 + "\n" + text, "fuzz"):
        assert isinstance(item, (ElementSet, ParseError))


def test_oem_interpolation_under_one_metre_against_generating_states():
    oem = read_oem(os.path.join(DEMO, "larkspur-3.oem"))
    fleet = [r for r in iter_file(os.path.join(DEMO, "fleet.json")) if r.name == "LARKSPUR-3"][0]
    traj = OemTrajectory(oem)
    seg = oem.segments[0]
    jd0 = seg.start_jd
    t = seg.t_s[0] + np.arange(30.0, 3 * 86400.0, 97.0)   # between the 60 s nodes
    r, _, code = traj.states(jd0, 0.0, t)
    _, want, _ = None, *Sgp4Batch([fleet]).states(jd0, 0.0, t)[:1], None
    assert (code == 0).all()
    assert np.max(np.linalg.norm(r - want[0], axis=1)) < ONE_METRE_KM


def test_oem_refuses_extrapolation():
    oem = read_oem(os.path.join(DEMO, "larkspur-3.oem"))
    traj = OemTrajectory(oem)
    from screener.errors import PropagationError
    with pytest.raises(PropagationError, match="usable span"):
        traj.states(oem.segments[0].start_jd, 0.0, np.array([10 * 86400.0]), strict=True)


def test_oem_errors_name_the_line(tmp_path):
    text = open(os.path.join(DEMO, "larkspur-3.oem")).read().splitlines()
    text[20] = text[20].replace(".", "x", 2)
    with pytest.raises(ParseError) as exc:
        read_oem("bad.oem", "\n".join(text))
    assert exc.value.line == 21
    with pytest.raises(ParseError, match="META_STOP"):
        read_oem("cut.oem", "\n".join(text[:10]))
