"""Read element-set files (any supported format), report bad records, keep the newest per object."""

from __future__ import annotations

import dataclasses
import os
from typing import Iterable, Iterator

from ..errors import ParseError
from ..textfile import clean_text, read_bytes
from .omm import iter_omm_csv, iter_omm_json, iter_omm_kvn, iter_omm_xml
from .record import ElementSet
from .tle import iter_tle_text

ELEMENT_SUFFIXES = (".tle", ".txt", ".3le", ".2le", ".omm", ".kvn", ".xml", ".csv", ".json")


@dataclasses.dataclass
class LoadReport:
    records: list[ElementSet]
    errors: list[ParseError]
    superseded: list[tuple[ElementSet, ElementSet]]  # (dropped older, kept newer)
    history: dict[str, list[ElementSet]]             # every valid set per object, oldest first
    conflicts: list[tuple[ElementSet, ElementSet]] = dataclasses.field(default_factory=list)
    # (dropped, kept): same object, same epoch, different elements; the later in reading order
    # is kept (refused under strict)
    repeats: int = 0                                 # identical copies of a set, dropped

    def summary(self) -> str:
        parts = [f"{len(self.records)} element sets kept"]
        if self.errors:
            parts.append(f"{len(self.errors)} bad records skipped")
        if self.superseded:
            parts.append(f"{len(self.superseded)} older element sets superseded by newer epochs")
        if self.conflicts:
            parts.append(f"{len(self.conflicts)} conflicting element sets at the same epoch "
                         f"(the later one read was kept)")
        if self.repeats:
            parts.append(f"{self.repeats} identical repeated element sets dropped")
        return ", ".join(parts)


def sniff_format(text: str, path: str) -> str:
    head = text.lstrip()[:2000]
    ext = os.path.splitext(path)[1].lower()
    if head.startswith(("{", "[")) or ext == ".json":
        return "json"
    if head.startswith("<") or ext == ".xml":
        return "xml"
    if "CCSDS_OMM_VERS" in head or ext in (".omm", ".kvn"):
        return "kvn"
    first = head.splitlines()[0] if head else ""
    if ext == ".csv" or ("," in first and "EPOCH" in first.upper()):
        return "csv"
    return "tle"


def iter_file(path: str, text: str | None = None) -> Iterator[ElementSet | ParseError]:
    if text is None:
        try:
            raw = read_bytes(path, "element-set")
        except ParseError as exc:
            yield exc
            return
        if b"\x00" in raw:
            yield ParseError("binary file (NUL byte), not an element-set file", path,
                             raw[: raw.index(b"\x00")].count(b"\n") + 1)
            return
        text = raw.decode("utf-8", errors="replace")
    text = clean_text(text)
    fmt = sniff_format(text, path)
    reader = {"json": iter_omm_json, "xml": iter_omm_xml, "kvn": iter_omm_kvn,
              "csv": iter_omm_csv, "tle": iter_tle_text}[fmt]
    yield from reader(text, path)


def expand_paths(paths: Iterable[str]) -> list[str]:
    out: list[str] = []
    for p in paths:
        if os.path.isdir(p):
            for name in sorted(os.listdir(p)):
                full = os.path.join(p, name)
                if os.path.isfile(full) and name.lower().endswith(ELEMENT_SUFFIXES):
                    out.append(full)
        else:
            out.append(p)
    return out


def load_elements(paths: Iterable[str] | str, strict: bool = False) -> LoadReport:
    """Read files/folders.  strict: raise the first ParseError; else skip and report each."""
    if isinstance(paths, str):
        paths = [paths]
    errors: list[ParseError] = []
    by_id: dict[str, list[ElementSet]] = {}
    for path in expand_paths(paths):
        if not os.path.exists(path):
            err = ParseError("no such file or folder", path)
            if strict:
                raise err
            errors.append(err)
            continue
        for item in iter_file(path):
            if isinstance(item, ParseError):
                if strict:
                    raise item
                errors.append(item)
            else:
                by_id.setdefault(item.catalog_id, []).append(item)
    kept, superseded, history, conflicts, repeats = [], [], {}, [], 0
    for cat_id, sets in by_id.items():
        sets.sort(key=lambda r: (r.epoch_jd + r.epoch_fr))      # stable: reading order kept
        unique: list[ElementSet] = []
        for r in sets:
            if unique and _same_epoch(unique[-1], r):
                if _same_elements(unique[-1], r):
                    repeats += 1
                else:
                    if strict:
                        raise ParseError(f"object {cat_id}: conflicting element sets at the same "
                                         f"epoch (the other is at {unique[-1].source})",
                                         r.source.path, r.source.line)
                    conflicts.append((unique[-1], r))
                unique[-1] = r
            else:
                unique.append(r)
        history[cat_id] = unique
        newest = unique[-1]
        kept.append(newest)
        superseded += [(old, newest) for old in unique[:-1]]
    return LoadReport(kept, errors, superseded, history, conflicts, repeats)


def _same_epoch(a: ElementSet, b: ElementSet) -> bool:
    return abs((a.epoch_jd - b.epoch_jd) + (a.epoch_fr - b.epoch_fr)) * 86400.0 < 1e-3


_ELEMENT_FIELDS = ("mean_motion_rev_day", "eccentricity", "inclination_deg", "raan_deg",
                   "arg_perigee_deg", "mean_anomaly_deg", "bstar_per_earth_radius",
                   "ndot_rev_day2", "nddot_rev_day3")


def _same_elements(a: ElementSet, b: ElementSet) -> bool:
    return all(getattr(a, f) == getattr(b, f) for f in _ELEMENT_FIELDS)


def stale_records(records: Iterable[ElementSet], start_jd: float, start_fr: float,
                  max_age_days: float) -> list[tuple[ElementSet, float]]:
    """Element sets older than max_age_days at the screening start, with their age in days."""
    out = []
    for r in records:
        age = r.age_days_at(start_jd, start_fr)
        if age > max_age_days:
            out.append((r, age))
    return out
