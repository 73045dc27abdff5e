"""Object identities in the trade's formats: catalog numbers (1-9 digits), alpha-5 catalog
numbers (a letter for the leading two digits, I and O unused), international designators
(COSPAR: launch year, launch number, piece letters, e.g. 2026-903A)."""

from __future__ import annotations

import re

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
