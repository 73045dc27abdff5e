"""Read element-set files (any supported format), report bad records, keep the newest per object."""

from __future__ import annotations

import dataclasses
import os
from typing import Iterable, Iterator

from ..errors import ParseError
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

    def summary(self) -> str:
        parts = [f"{len(self.records)} element sets kept"]
        if self.errors:
            parts.append(f"{len(self.errors)} bad records skipped")
        if self.superseded:
            parts.append(f"{len(self.superseded)} older duplicates superseded by newer epochs")
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
            with open(path, "rb") as fh:
                raw = fh.read()
        except OSError as exc:
            yield ParseError(f"cannot read file: {exc.strerror}", path)
            return
        text = raw.decode("utf-8", errors="replace")
        if "\x00" in text:
            yield ParseError("binary file (NUL byte), not an element-set file", path, 1)
            return
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
    kept, superseded, history = [], [], {}
    for cat_id, sets in by_id.items():
        sets.sort(key=lambda r: (r.epoch_jd, r.epoch_fr))
        history[cat_id] = sets
        newest = sets[-1]
        kept.append(newest)
        superseded += [(old, newest) for old in sets[:-1]]
    return LoadReport(kept, errors, superseded, history)


def stale_records(records: Iterable[ElementSet], start_jd: float, start_fr: float,
                  max_age_days: float) -> list[tuple[ElementSet, float]]:
    """Element sets older than max_age_days at the screening start, with their age in days."""
    out = []
    for r in records:
        age = r.age_days_at(start_jd, start_fr)
        if age > max_age_days:
            out.append((r, age))
    return out
