"""The CDM reader in-process: every refusal names the file, the line and the keyword.

Source: CCSDS 508.0-B-1 KVN rules (obligatory keywords, one KEY = value per line, two OBJECT
sections, units in brackets), from memory of the standard; Chan's case 1 geometry as the
valid base message (see test_readme_claims.py)."""

from __future__ import annotations

import numpy as np
import pytest

from screener.errors import ParseError
from screener.risk.cdm import read_cdm

from .test_hostile_inputs import _cdm_text


def _line_of(text, key, nth=1):
    seen = 0
    for k, ln in enumerate(text.splitlines(), start=1):
        if ln.split("=")[0].strip() == key:
            seen += 1
            if seen == nth:
                return k
    raise KeyError(key)


def test_valid_message_values():
    text = _cdm_text()
    cdm = read_cdm("ok.cdm", text=text)
    assert cdm.path == "ok.cdm" and cdm.tca_text == "2026-12-02T06:00:00.000"
    assert cdm.header["MESSAGE_ID"] == "CHAN_CASE_1" and cdm.relative["MISS_DISTANCE"] == "10.000"
    assert cdm.object1_designator == "90001" and cdm.object2_designator == "90002"
    a, b = cdm.objects
    assert np.allclose(a.r_km, [7000.0, 0.0, 0.0]) and np.allclose(b.v_km_s, [10.0, 7.5, 0.0])
    assert a.cov_rtn_m[1, 1] == pytest.approx(312.5) and a.cov_rtn_m[2, 2] == pytest.approx(1250.0)
    assert a.cov_rtn_m[0, 1] == a.cov_rtn_m[1, 0] == 0.0
    assert a.fields["REF_FRAME"] == "GCRF" and b.fields["OBJECT_NAME"] == "TEST-SECONDARY"


@pytest.mark.parametrize("key,value,needle", [
    ("X", "nan", "OBJECT1: X is not a finite number"),
    ("Y_DOT", "abc", "OBJECT1: Y_DOT is not numeric"),
    ("CT_T", "inf", "OBJECT1: CT_T is not a finite number"),
    ("X", "-1e6", "OBJECT1: position magnitude 1000000.0 km is not an Earth orbit (6428 to 500000 km)"),
    ("X_DOT", "30", "OBJECT1: speed 30.9 km/s is above 20 km/s"),
    ("REF_FRAME", "TOD", "OBJECT1: REF_FRAME TOD not one of EME2000, GCRF, ITRF"),
    ("MISS_DISTANCE", "-3", "MISS_DISTANCE is not a non-negative number"),
    ("TCA", "yesterday", "TCA is not a UTC date and time"),
    ("CREATION_DATE", "2026-13-45", "CREATION_DATE is not a UTC date and time"),
])
def test_bad_values_name_file_line_and_keyword(key, value, needle):
    text = _cdm_text(**{key: value})
    with pytest.raises(ParseError) as exc:
        read_cdm("bad.cdm", text=text)
    assert exc.value.path == "bad.cdm"
    assert exc.value.line == _line_of(text, key), (exc.value.line, needle)
    assert needle in exc.value.reason, exc.value.reason


def test_missing_and_repeated_keywords():
    text = _cdm_text()
    cut = "\n".join(ln for ln in text.splitlines() if not ln.startswith("CN_N")) + "\n"
    with pytest.raises(ParseError, match="OBJECT1: missing obligatory CDM keyword CN_N") as exc:
        read_cdm("m.cdm", text=cut)
    assert exc.value.line == _line_of(cut, "OBJECT")
    with pytest.raises(ParseError, match="missing obligatory CDM keyword MESSAGE_ID"):
        read_cdm("m.cdm", text=text.replace("MESSAGE_ID", "MESSAGE_XX"))
    with pytest.raises(ParseError, match="missing obligatory CDM keyword TCA"):
        read_cdm("m.cdm", text=text.replace("\nTCA ", "\nTCB "))
    one = text[: text.index("OBJECT                              = OBJECT2")]
    with pytest.raises(ParseError, match="two OBJECT sections, found 1"):
        read_cdm("m.cdm", text=one)
    dup = text.replace("ORIGINATOR", "ORIGINATOR                          = X\nORIGINATOR", 1)
    with pytest.raises(ParseError, match=r"keyword ORIGINATOR given twice \(first at line 3\)") as exc:
        read_cdm("d.cdm", text=dup)
    assert exc.value.line == 4


def test_not_kvn_and_not_psd():
    text = _cdm_text()
    lines = text.splitlines()
    lines[5] = "this is not kvn"
    with pytest.raises(ParseError, match="not a KEY = value line: 'this is not kvn'") as exc:
        read_cdm("k.cdm", text="\n".join(lines))
    assert (exc.value.line, exc.value.column) == (6, 1)
    bad = text.replace("CT_R                                = 0.000000e+00", "CT_R                                = 5.0e+03", 1)
    with pytest.raises(ParseError, match="OBJECT1: position covariance is not positive semi-definite") as exc:
        read_cdm("p.cdm", text=bad)
    assert exc.value.line == _line_of(bad, "CR_R")


def test_comments_blank_lines_and_control_characters():
    text = _cdm_text().replace("TEST-PRIMARY", "TEST\x1bPRIMARY")
    text = "COMMENT a comment\n\n" + text
    cdm = read_cdm("c.cdm", text=text)
    assert cdm.objects[0].fields["OBJECT_NAME"] == "TEST?PRIMARY"
