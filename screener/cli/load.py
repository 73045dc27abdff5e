"""Shared CLI helpers: read inputs, report problems on stderr, build a screening request."""

from __future__ import annotations

import os
import sys

from ..elements import load_elements, read_oem, stale_records
from ..errors import ScreenerError
from ..screening import ScreeningRequest, Volume
from ..timeutil import datetime_to_jd, parse_start

MAX_LISTED = 20


def warn(msg: str) -> None:
    print(f"screener: {msg}", file=sys.stderr)


def read_sets(paths, strict: bool, what: str):
    """Element sets and OEMs from files/folders; OEM files are recognised by their header."""
    oems, others = [], []
    for p in paths:
        if os.path.isfile(p):
            with open(p, "rb") as fh:
                head = fh.read(4096).decode("utf-8", "replace")
            if "CCSDS_OEM_VERS" in head:
                oems.append(read_oem(p))
                continue
        elif not os.path.exists(p):
            raise ScreenerError(f"{p}: no such file or folder ({what})")
        others.append(p)
    report = load_elements(others, strict=strict) if others else None
    if report:
        for err in report.errors[:MAX_LISTED]:
            warn(f"skipped: {err}")
        if len(report.errors) > MAX_LISTED:
            warn(f"... and {len(report.errors) - MAX_LISTED} more bad records")
        for old, new in report.superseded[:MAX_LISTED]:
            warn(f"{old.catalog_id}: element set at {old.source} superseded by newer epoch at {new.source}")
        warn(f"{what}: {report.summary()}")
    records = report.records if report else []
    if not records and not oems:
        raise ScreenerError(f"no usable element sets in {', '.join(paths)} ({what})")
    return records, oems, report


def parse_volume(radius_km: float | None, ric_km: str | None) -> Volume:
    if ric_km:
        try:
            r, i, c = (float(x) for x in ric_km.split(","))
        except ValueError:
            raise ScreenerError(f"--ric-km wants three numbers R,I,C in km, got {ric_km!r}") from None
        return Volume.ellipsoid(r, i, c)
    r = 5.0 if radius_km is None else radius_km
    if not r > 0:
        raise ScreenerError("--radius-km must be positive")
    return Volume.sphere(r)


def build_request(args) -> ScreeningRequest:
    start = parse_start(args.start)
    jd0, fr0 = datetime_to_jd(start)
    if not (args.days > 0):
        raise ScreenerError("--days must be positive")
    catalog, cat_oems, _ = read_sets(args.catalog, args.strict, "catalog")
    if cat_oems:
        raise ScreenerError("OEM files go with --primaries (own-ship ephemerides), not --catalog")
    primaries, oems = [], []
    if args.primaries:
        primaries, oems, _ = read_sets(args.primaries, args.strict, "primaries")
    if oems:  # an own-ship ephemeris wins over an element set of the same object
        oem_ids = {o.object_id for o in oems}
        dropped = [r for r in primaries if r.catalog_id in oem_ids or r.intl_designator in oem_ids]
        for r in dropped:
            warn(f"{r.catalog_id} {r.name}: using its OEM ephemeris instead of the element set")
        primaries = [r for r in primaries if r not in dropped]
    for rec, age in stale_records(primaries + catalog, jd0, fr0, args.max_age_days):
        warn(f"stale: {rec.catalog_id} {rec.name} element set is {age:.1f} days old at the "
             f"screening start (limit {args.max_age_days:g}); screened, but check it")
    return ScreeningRequest(catalog=catalog, primaries=primaries, primary_oems=oems, jd0=jd0,
                            fr0=fr0, duration_s=args.days * 86400.0,
                            volume=parse_volume(args.radius_km, args.ric_km), workers=args.workers)
