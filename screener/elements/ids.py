"""Object identities in the trade's formats: catalog numbers (1-9 digits), alpha-5 catalog
numbers (a letter for the leading two digits, I and O unused), international designators
(COSPAR: launch year, launch number, piece letters, e.g. 2026-903A)."""

from __future__ import annotations

import re

ALPHA5_LETTERS = "ABCDEFGHJKLMNPQRSTUVWXYZ"   # 10..33; I and O are not used
CATALOG_NUMBER = re.compile(r"^[0-9]{1,9}$")
ALPHA5 = re.compile(r"^[A-HJ-NP-Z][0-9]{4}$")
INTERNATIONAL_DESIGNATOR = re.compile(r"^[0-9]{4}-[0-9]{3}[A-Z]{1,3}$")


def object_id_problem(text: str) -> str | None:
    """None for a valid id; else the reason (for a ParseError)."""
    if CATALOG_NUMBER.match(text) or ALPHA5.match(text) or INTERNATIONAL_DESIGNATOR.match(text):
        return None
    shown = text[:24] + ("..." if len(text) > 24 else "")
    return (f"object id {shown!r} is not a catalog number (digits), an alpha-5 number or an "
            f"international designator (YYYY-NNNA)")


def canonical_id(text: str) -> str:
    """The one id an object is known by everywhere: its catalog number in decimal digits
    without leading zeros ('00005' -> '5', alpha-5 'A0001' -> '100001'); any other id (an
    international designator, where no catalog number is known) unchanged."""
    t = text.strip()
    if CATALOG_NUMBER.match(t):
        return str(int(t))
    if ALPHA5.match(t.upper()):
        return str((10 + ALPHA5_LETTERS.index(t[0].upper())) * 10000 + int(t[1:]))
    return t


TLE_DESIGNATOR = re.compile(r"^([0-9]{2})([0-9]{3})([A-Z]{1,3})$")


def cospar_designator(text: str) -> str:
    """An international designator in its full form: the TLE's short form '26903A' becomes
    '2026-903A' (two-digit years 57-99 are 19xx, 00-56 are 20xx: common practice since the
    first launch in 1957); a full form or anything else is returned stripped, unchanged."""
    t = text.strip().upper()
    m = TLE_DESIGNATOR.match(t)
    if not m:
        return text.strip()
    yy = int(m.group(1))
    return f"{1900 + yy if yy >= 57 else 2000 + yy}-{m.group(2)}{m.group(3)}"


def tle_designator(text: str) -> str:
    """The TLE's 8-column short form of a designator ('2026-903A' -> '26903A')."""
    t = text.strip()
    if INTERNATIONAL_DESIGNATOR.match(t):
        return t[2:4] + t[5:]
    return t[:8]
