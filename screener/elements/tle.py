"""Two-line and three-line element sets: parse, validate, format."""

from __future__ import annotations

import datetime as _dt
from typing import Iterator

from ..errors import ParseError
from ..textfile import clean_name
from ..timeutil import datetime_to_jd
from .ids import ALPHA5_LETTERS, canonical_id, cospar_designator, tle_designator
from .record import SGP4_MAX_SATNUM, ElementSet, Source, check_elements

def catalog_id_to_int(text: str) -> int | None:
    """'00005' -> 5, 'A0001' -> 100001 (alpha-5), '123456789' -> 123456789; None if neither."""
    t = text.strip()
    if t.isdigit():
        return int(t)
    c = canonical_id(t)
    return int(c) if c.isdigit() else None


def int_to_alpha5(n: int) -> str:
    if n < 100000:
        return f"{n:05d}"
    head, tail = divmod(n, 10000)
    return ALPHA5_LETTERS[head - 10] + f"{tail:04d}"


_MINUS_AS_ONE = bytes.maketrans(b"-", b"1")
_NOT_COUNTED = bytes(sorted(set(range(256)) - set(b"0123456789-")))


def checksum(line: str) -> int:
    """TLE checksum: sum of digits, minus signs count 1, modulo 10 (common practice).  Only
    ASCII digits count; the text is reduced to its digits and minus signs in C (bytes
    translate) rather than character by character."""
    kept = line[:68].encode("ascii", "replace").translate(_MINUS_AS_ONE, _NOT_COUNTED)
    return (sum(kept) - 48 * len(kept)) % 10


def _field(line: str, a: int, b: int, what: str, src: Source, kind=float):
    """Columns a..b (1-based, inclusive) as `kind`, or a ParseError naming the column."""
    text = line[a - 1:b]
    try:
        return kind(text.strip() or "0") if kind is not str else text
    except ValueError:
        raise ParseError(f"{what} is not numeric: {text!r}", src.path, src.line, a) from None


def _implied_decimal(text: str, what: str, src: Source, col: int) -> float:
    """' 12345-3' -> 0.12345e-3 (TLE 'assumed decimal point' exponent form)."""
    t = text.strip()
    if not t or t in ("00000-0", "00000+0", "+00000-0", "-00000-0", "00000 0"):
        return 0.0
    try:
        sign = -1.0 if t[0] == "-" else 1.0
        t = t.lstrip("+-")
        mant, exp = t[:-2], t[-2:]
        if exp[0] not in "+-":
            mant, exp = t, "+0"
        return sign * float("0." + mant.strip()) * 10.0 ** int(exp)
    except ValueError:
        raise ParseError(f"{what} is not numeric: {text!r}", src.path, src.line, col) from None


def _epoch(text: str, src: Source) -> tuple[float, float]:
    try:
        yy = int(text[:2])
        doy_text = text[2:].strip()
        whole_text, _, frac_text = doy_text.partition(".")
        whole_doy = int(whole_text)
        frac = float("0." + (frac_text or "0"))  # fraction parsed alone: no loss to the 3-digit day
    except ValueError:
        raise ParseError(f"epoch is not numeric: {text!r}", src.path, src.line, 19) from None
    if not (1 <= whole_doy <= 366):
        raise ParseError(f"epoch day-of-year {whole_doy} outside [1, 366]", src.path, src.line, 21)
    year = 1900 + yy if yy >= 57 else 2000 + yy  # common practice (Spacetrack convention)
    # keep the fraction to the microsecond, as written (8 decimals ~ 0.9 ms; 9+ kept as given)
    base = _dt.datetime(year, 1, 1, tzinfo=_dt.timezone.utc) + _dt.timedelta(days=whole_doy - 1)
    jd, _ = datetime_to_jd(base)
    return jd, frac


def parse_tle_pair(line1: str, line2: str, name: str = "", source: Source | None = None,
                   verify_checksum: bool = True) -> ElementSet:
    """Parse one element set.  `source` points at line 1; line 2 is the next line."""
    src1 = source or Source("<input>", 1)
    src2 = Source(src1.path, src1.line + 1)
    l1 = line1.rstrip("\r\n")
    l2 = line2.rstrip("\r\n")
    for ln, src, num in ((l1, src1, "1"), (l2, src2, "2")):
        if len(ln) < 68:
            raise ParseError(f"TLE line {num} is {len(ln)} characters long, expected 69",
                             src.path, src.line)
        if ln[0] != num or ln[1] != " ":
            raise ParseError(f"expected TLE line {num} here (starts with '{num} ')",
                             src.path, src.line, 1)
    cat1 = l1[2:7].strip()
    cat2 = l2[2:7].strip()
    if cat1 != cat2:
        raise ParseError(f"line 1 catalog number {cat1!r} does not match line 2 {cat2!r}",
                         src2.path, src2.line, 3)
    if catalog_id_to_int(cat1) is None:
        raise ParseError(f"catalog number {cat1!r} is neither digits nor alpha-5",
                         src1.path, src1.line, 3)
    if verify_checksum:
        for ln, src in ((l1, src1), (l2, src2)):
            if len(ln) < 69 or not ln[68].isdigit():
                raise ParseError("checksum digit missing in column 69", src.path, src.line, 69)
            if int(ln[68]) != checksum(ln):
                raise ParseError(f"bad checksum: column 69 says {ln[68]}, computed {checksum(ln)}",
                                 src.path, src.line, 69)
    jd, fr = _epoch(l1[18:32], src1)
    ecc_text = l2[26:33]
    if not ecc_text.strip().isdigit():
        raise ParseError(f"eccentricity is not numeric: {ecc_text!r}", src2.path, src2.line, 27)
    rec = ElementSet(
        catalog_id=canonical_id(cat1),
        name=clean_name(name),
        epoch_jd=jd,
        epoch_fr=fr,
        mean_motion_rev_day=_field(l2, 53, 63, "mean motion", src2),
        eccentricity=float("0." + ecc_text.strip()),
        inclination_deg=_field(l2, 9, 16, "inclination", src2),
        raan_deg=_field(l2, 18, 25, "right ascension of ascending node", src2),
        arg_perigee_deg=_field(l2, 35, 42, "argument of perigee", src2),
        mean_anomaly_deg=_field(l2, 44, 51, "mean anomaly", src2),
        bstar_per_earth_radius=_implied_decimal(l1[53:61], "B*", src1, 54),
        ndot_rev_day2=_field(l1, 34, 43, "first derivative of mean motion", src1),
        nddot_rev_day3=_implied_decimal(l1[44:52], "second derivative of mean motion", src1, 45),
        intl_designator=cospar_designator(l1[9:17]),
        classification=l1[7] if l1[7].strip() else "U",
        element_set_no=_field(l1, 65, 68, "element set number", src1, int),
        rev_at_epoch=_field(l2, 64, 68, "revolution number", src2, int),
        ephemeris_type=_field(l1, 63, 63, "ephemeris type", src1, int),
        source=src1,
        tle_lines=(l1, l2),
    )
    reason = check_elements(rec)
    if reason:
        col = 27 if "eccentricity" in reason else 53 if "mean motion" in reason else None
        raise ParseError(reason, src2.path, src2.line, col)
    return rec


def _exp_field(x: float) -> str:
    """0.12345e-3 -> ' 12345-3' (8 columns)."""
    if x == 0.0:
        return " 00000-0"
    sign = "-" if x < 0 else " "
    x = abs(x)
    exp = 0
    while x >= 1.0:
        x /= 10.0
        exp += 1
    while x < 0.1:
        x *= 10.0
        exp -= 1
    mant = round(x * 1e5)
    if mant >= 100000:
        mant //= 10
        exp += 1
    return f"{sign}{mant:05d}{'-' if exp < 0 else '+'}{abs(exp)}"


def _tle_number(catalog_id: str) -> str:
    """The TLE's 5-column number: zero-padded digits, alpha-5 from 100000 up."""
    n = catalog_id_to_int(catalog_id)
    return catalog_id if n is None or n > SGP4_MAX_SATNUM else int_to_alpha5(n)


def format_tle(rec: ElementSet) -> tuple[str, str]:
    """Format a record as two TLE lines with checksums."""
    from ..timeutil import jd_to_datetime

    t = jd_to_datetime(rec.epoch_jd, 0.0)
    doy = (t - _dt.datetime(t.year, 1, 1, tzinfo=_dt.timezone.utc)).days + 1 + rec.epoch_fr
    ndot = f"{rec.ndot_rev_day2:.8f}".replace("0.", ".", 1)
    ndot = (" " + ndot) if not ndot.startswith("-") else ndot
    cat = _tle_number(rec.catalog_id)
    l1 = (f"1 {cat:>5s}{rec.classification} {tle_designator(rec.intl_designator):<8s} "
          f"{t.year % 100:02d}{doy:012.8f} {ndot:>10s} {_exp_field(rec.nddot_rev_day3)} "
          f"{_exp_field(rec.bstar_per_earth_radius)} {rec.ephemeris_type:d} {rec.element_set_no:4d}")
    ecc = f"{rec.eccentricity:.7f}"[2:]
    l2 = (f"2 {cat:>5s} {rec.inclination_deg:8.4f} {rec.raan_deg:8.4f} {ecc} "
          f"{rec.arg_perigee_deg:8.4f} {rec.mean_anomaly_deg:8.4f} {rec.mean_motion_rev_day:11.8f}"
          f"{rec.rev_at_epoch:5d}")
    return l1 + str(checksum(l1)), l2 + str(checksum(l2))


def iter_tle_text(text: str, path: str) -> Iterator[ElementSet | ParseError]:
    """Yield records or ParseErrors from TLE text (2-line and 3-line sets, mixed)."""
    lines = text.splitlines()
    i = 0
    n = len(lines)
    while i < n:
        raw = lines[i]
        s = raw.strip()
        if not s or s.startswith("#"):
            i += 1
            continue
        if raw.startswith("1 "):
            name, l1_index = "", i
        elif raw.startswith("2 "):
            yield ParseError("TLE line 2 without a line 1 before it", path, i + 1, 1)
            i += 1
            continue
        else:
            name = s[2:] if s.startswith("0 ") else s
            l1_index = i + 1
            if l1_index >= n or not lines[l1_index].startswith("1 "):
                if l1_index >= n:
                    yield ParseError("file ends after a name line (truncated element set)",
                                     path, i + 1)
                else:
                    yield ParseError("name line is not followed by TLE line 1", path, i + 2, 1)
                i += 1
                continue
        l2_index = l1_index + 1
        if l2_index >= n:
            yield ParseError("file ends after TLE line 1 (truncated element set)", path,
                             l1_index + 1)
            return
        if not lines[l2_index].startswith("2 "):
            yield ParseError("TLE line 1 is not followed by line 2", path, l2_index + 1, 1)
            i = l2_index
            continue
        try:
            yield parse_tle_pair(lines[l1_index], lines[l2_index], name=name,
                                 source=Source(path, l1_index + 1))
        except ParseError as exc:
            yield exc
        i = l2_index + 1
