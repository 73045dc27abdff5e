"""Generates the hostile-input corpus (small, invented) used by test_hostile_inputs.py.

    python -m tests.hostile OUTDIR      # writes the files and prints what each one probes

Every case is a bad input an operator's system could hand us, or an attacker could: each
file is derived from the invented demo scenario with one thing broken.
"""

from __future__ import annotations

import json
import os
import re
import sys

DEMO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "demo_elements"))


def _fleet():
    with open(os.path.join(DEMO, "fleet.json")) as fh:
        return json.load(fh)


def _omm_case(field, value):
    one = dict(_fleet()[0])
    one[field] = value
    return json.dumps([one], allow_nan=True)


# (file name, text, what it probes)
def cases():
    out = []
    for field, value in (("BSTAR", float("nan")), ("RA_OF_ASC_NODE", float("inf")),
                         ("ARG_OF_PERICENTER", -float("inf")), ("MEAN_ANOMALY", 1e308),
                         ("MEAN_MOTION", float("nan")), ("MEAN_MOTION_DOT", 1e308),
                         ("BSTAR", 1e308), ("EPOCH", "2199-01-01T00:00:00"),
                         ("ELEMENT_SET_NO", float("inf")), ("REV_AT_EPOCH", float("nan")),
                         ("NORAD_CAT_ID", "=HYPERLINK(\"http://x\")")):
        tag = re.sub(r"[^a-z0-9]+", "_", (field + "-" + str(value)[:10]).lower())
        out.append((f"omm-{tag}.json", _omm_case(field, value), f"OMM {field} = {value}"))
    out.append(("omm-deep.json", "[" * 100_000 + "]" * 100_000, "JSON nested 100,000 deep"))
    esc = dict(_fleet()[0], OBJECT_NAME="EVIL\x1b[2J\x1b]0;owned\x07\u2028NAME\nCOLLISION_PROBABILITY = 0.0")
    out.append(("omm-escape-name.json", json.dumps([esc]), "terminal escapes and line breaks in a name"))
    markup = dict(_fleet()[0], OBJECT_NAME="[/][link=file:///etc/passwd]X[b]")
    out.append(("omm-markup-name.json", json.dumps([markup]), "textual markup in a name"))
    formula = dict(_fleet()[0], OBJECT_NAME="=cmd|' /C calc'!A0")
    out.append(("omm-formula-name.json", json.dumps([formula]), "spreadsheet formula in a name"))
    a = dict(_fleet()[0])
    b = dict(a, MEAN_ANOMALY=a["MEAN_ANOMALY"] + 10.0)
    out.append(("omm-conflict.json", json.dumps([a, b]), "same id and epoch, different elements"))
    return out


def oem_with_gap(hours_from=6.0, hours=2.0) -> str:
    """The demo OEM with `hours` of ephemeris lines removed, starting `hours_from` into it."""
    lines = open(os.path.join(DEMO, "larkspur-3.oem")).read().splitlines()
    out, k = [], 0
    for ln in lines:
        if ln[:4] == "2026" and " " in ln and ln.count(" ") >= 6:
            if hours_from * 60 <= k < (hours_from + hours) * 60:
                k += 1
                continue
            k += 1
        out.append(ln)
    return "\n".join(out) + "\n"


def oem_with_nan() -> str:
    lines = open(os.path.join(DEMO, "larkspur-3.oem")).read().splitlines()
    for i, ln in enumerate(lines):
        if ln.startswith("2026-12-02T03:00:00"):
            parts = ln.split()
            parts[2] = "nan"
            lines[i] = " ".join(parts)
            break
    return "\n".join(lines) + "\n"


def write(folder: str) -> list[tuple[str, str]]:
    os.makedirs(folder, exist_ok=True)
    made = []
    for name, text, what in cases():
        with open(os.path.join(folder, name), "w", encoding="utf-8") as fh:
            fh.write(text)
        made.append((name, what))
    for name, text, what in (("oem-gap.oem", oem_with_gap(), "two hours removed inside a segment"),
                             ("oem-nan.oem", oem_with_nan(), "a NaN state")):
        with open(os.path.join(folder, name), "w", encoding="utf-8") as fh:
            fh.write(text)
        made.append((name, what))
    return made


if __name__ == "__main__":
    for name, what in write(sys.argv[1] if len(sys.argv) > 1 else "hostile-corpus"):
        print(f"{name:32} {what}")
