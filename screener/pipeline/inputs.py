"""Read a configuration's element sets and ephemerides; record what was read (with hashes)."""

from __future__ import annotations

import dataclasses
import hashlib
import os
from typing import Callable

from ..config import Config
from ..elements import ElementSet, Oem, load_elements, read_oem, stale_records
from ..elements.catalog import expand_paths
from ..errors import ScreenerError
from ..display import fmt_days, plural
from ..textfile import open_regular
from .identity import canonical_config, identities, tie_oems
from ..timeutil import iso_z, jd_to_datetime

MAX_LISTED = 20
STALE_LISTED = 5      # stale element sets are one warning line: the count and the oldest few
Warn = Callable[[str], None]


@dataclasses.dataclass
class Inputs:
    catalog: list[ElementSet]
    primaries: list[ElementSet]
    oems: list[Oem]
    history: dict[str, list[ElementSet]]
    files: list[dict]                     # {"path", "sha256", "bytes", "role", "elsets", ages}
    bad_records: int = 0
    ids: dict = dataclasses.field(default_factory=dict)   # object id -> identity.Identity


def file_digest(path: str) -> dict:
    h = hashlib.sha256()
    with open_regular(path) as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return {"path": os.path.abspath(path), "sha256": h.hexdigest(), "bytes": os.path.getsize(path)}


def _is_oem(path: str) -> bool:
    with open_regular(path) as fh:
        return "CCSDS_OEM_VERS" in fh.read(4096).decode("utf-8", "replace")


def _read(paths, strict: bool, what: str, warn: Warn):
    oems, others, files = [], [], []
    for p in paths:
        if not os.path.exists(p):
            raise ScreenerError(f"{p}: no such file or folder ({what})")
        if os.path.isfile(p) and _is_oem(p):
            oem = read_oem(p)
            for g in oem.gaps:
                warn(f"{p}:{g.line}: {g.duration_s / 60:.0f} min without ephemeris lines "
                     f"(from {iso_z(jd_to_datetime(g.start_jd, g.start_s / 86400.0), 0)}): a "
                     f"segment break, never interpolated across")
            oems.append(oem)
            files.append({**file_digest(p), "role": what})
            continue
        others.append(p)
    for f in expand_paths(others):
        files.append({**file_digest(f), "role": what})
    report = load_elements(others, strict=strict) if others else None
    if report:
        for err in report.errors[:MAX_LISTED]:
            warn(f"skipped: {err}")
        if len(report.errors) > MAX_LISTED:
            warn(f"... and {len(report.errors) - MAX_LISTED} more bad records")
        for dropped, kept in report.conflicts[:MAX_LISTED]:
            warn(f"{kept.catalog_id}: conflicting element sets at the same epoch: kept "
                 f"{kept.source}, dropped {dropped.source} (--strict refuses this)")
        if len(report.conflicts) > MAX_LISTED:
            warn(f"... and {len(report.conflicts) - MAX_LISTED} more conflicting element sets")
        for old, new in report.superseded[:3]:
            warn(f"{old.catalog_id}: element set at {old.source} superseded by newer epoch at {new.source}")
        if len(report.superseded) > 3:
            warn(f"... and {len(report.superseded) - 3} more older element sets superseded (kept as "
                 f"history for the covariance fit)")
        warn(f"{what}: {report.summary()}")
    records = report.records if report else []
    if not records and not oems:
        raise ScreenerError(f"no usable element sets in {', '.join(paths)} ({what})")
    return records, oems, report, files


def _as_of(report, as_of: str, warn: Warn) -> list[ElementSet]:
    """Newest set per object with an epoch at or before as_of (histories trimmed to match)."""
    from ..timeutil import datetime_to_jd, parse_start

    jd, fr = datetime_to_jd(parse_start(as_of))
    kept = []
    for oid, sets in report.history.items():
        sets[:] = [s for s in sets if (s.epoch_jd - jd) + (s.epoch_fr - fr) <= 0.0]
        if sets:
            kept.append(sets[-1])
    warn(f"catalog as of {as_of}: {plural(len(kept), 'object')} with an element set by then")
    return kept


def load_inputs(cfg: Config, jd0: float, fr0: float, warn: Warn) -> Inputs:
    catalog, cat_oems, cat_rep, files = _read(cfg.catalog_sources, cfg.strict, "catalog", warn)
    if cfg.catalog_as_of and cat_rep:
        catalog = _as_of(cat_rep, cfg.catalog_as_of, warn)
    if cat_oems:
        raise ScreenerError("OEM files belong to the fleet (own-ship ephemerides), not the catalog")
    primaries, oems, p_rep = [], [], None
    if cfg.fleet_files:
        primaries, oems, p_rep, p_files = _read(cfg.fleet_files, cfg.strict, "fleet", warn)
        files += p_files
    if oems:  # an own-ship ephemeris wins over an element set of the same object
        tie_oems(oems, primaries, catalog)
        oem_ids = {o.object_id for o in oems}
        dropped = [r for r in primaries if r.catalog_id in oem_ids]
        for r in dropped:
            warn(f"{r.catalog_id} {r.name}: using its OEM ephemeris instead of the element set")
        primaries = [r for r in primaries if r not in dropped]
    ids = identities(primaries, oems, catalog)
    canonical_config(cfg, ids, warn)
    stale = sorted(stale_records(primaries + catalog, jd0, fr0, cfg.max_elset_age_days),
                   key=lambda t: -t[1])
    if stale:
        shown = ", ".join(f"{rec.catalog_id} {rec.name} ({age:.1f} d)" for rec, age in stale[:STALE_LISTED])
        more = f" and {len(stale) - STALE_LISTED} more" if len(stale) > STALE_LISTED else ""
        warn(f"stale: {plural(len(stale), 'element set')} older than "
             f"{fmt_days(cfg.max_elset_age_days)} at the screening start, screened but check them: "
             f"{shown}{more}")
    history = {}
    for rep in (cat_rep, p_rep):
        if rep:
            history.update(rep.history)
    bad = sum(len(r.errors) for r in (cat_rep, p_rep) if r)
    file_ages(files, primaries + catalog, jd0, fr0)
    return Inputs(catalog, primaries, oems, history, files, bad, ids)


def file_ages(files: list[dict], records, jd0: float, fr0: float) -> None:
    """Each input file's count of element sets screened from it ("elsets") and their ages at
    the window start ("age_min_days", "age_max_days"), kept with the run (the report's inputs)."""
    ages: dict[str, list[float]] = {}
    for r in records:
        ages.setdefault(os.path.abspath(r.source.path), []).append(r.age_days_at(jd0, fr0))
    for f in files:
        got = ages.get(f["path"], [])
        f["elsets"] = len(got)
        if got:
            f["age_min_days"], f["age_max_days"] = min(got), max(got)
