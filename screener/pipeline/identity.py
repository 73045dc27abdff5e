"""One identity per object across the inputs: the catalog number (alpha-5 decoded), with its
name, international designator and where its orbit came from.

An own-ship OEM usually names its object by international designator (OBJECT_ID); it is tied
to the catalog number of the element set (fleet first, then catalog) with that designator, so
the list, the exports, the CDMs and the per-object configuration all use one id.  A
configuration entry keyed by a designator or an alpha-5 number is moved to the canonical id;
an entry that matches no object is reported (an error under strict).
"""

from __future__ import annotations

import dataclasses
import os
from typing import Callable

from ..elements.ids import canonical_id
from ..errors import ConfigError

Warn = Callable[[str], None]


@dataclasses.dataclass(frozen=True)
class Identity:
    object_id: str
    name: str
    designator: str            # international designator (COSPAR), "" if unknown
    orbit: str                 # "element set" or "OEM"
    source: str                # file the orbit came from (base name)


def tie_oems(oems, primaries, catalog) -> None:
    """Give each OEM the catalog number of the element set with its designator (in place)."""
    by_designator: dict[str, str] = {}
    for rec in list(catalog) + list(primaries):     # fleet last: it wins a clash
        if rec.intl_designator:
            by_designator[rec.intl_designator] = rec.catalog_id
    for o in oems:
        if not o.catalog_id and o.intl_designator in by_designator:
            o.catalog_id = by_designator[o.intl_designator]


def identities(primaries, oems, catalog) -> dict[str, Identity]:
    out: dict[str, Identity] = {}
    for rec in [*catalog, *primaries]:        # the fleet's own set wins for an object in both
        out[rec.catalog_id] = Identity(rec.catalog_id, rec.name, rec.intl_designator, "element set",
                                       os.path.basename(rec.source.path))
    for o in oems:
        out[o.object_id] = Identity(o.object_id, o.object_name, o.intl_designator, "OEM",
                                    os.path.basename(o.path))
    return out


def _aliases(ids: dict[str, Identity]) -> dict[str, str]:
    """Any way a configuration may name an object -> its canonical id."""
    out = {}
    for oid, ident in ids.items():
        if ident.designator:
            out[ident.designator] = oid
        out[oid] = oid
    return out


def canonical_config(cfg, ids: dict[str, Identity], warn: Warn) -> None:
    """Re-key the configuration's per-object tables by canonical id (in place); report the
    entries that match no object of the inputs."""
    alias = _aliases(ids)
    unmatched = []
    for table, mapping in (("fleet.objects", cfg.members), ("catalog.objects", cfg.object_radius_m),
                           ("covariance.objects", cfg.covariance.objects)):
        for key in list(mapping):
            oid = alias.get(key) or alias.get(canonical_id(key))
            if oid is None:
                unmatched.append(f"{cfg.object_entries.get((table, key), cfg.path or 'configuration')}: "
                                 f"[{table}.\"{key}\"] matches no object in the inputs")
                continue
            if oid != key:
                mapping[oid] = mapping.pop(key)
    if unmatched and cfg.strict:
        raise ConfigError(unmatched[0] + (f" (and {len(unmatched) - 1} more)" if len(unmatched) > 1 else "")
                          + "; strict mode refuses it (fix the id or remove the entry)")
    for text in unmatched:
        warn(text + "; it is not applied")


def describe(encounters, ids: dict[str, Identity]) -> None:
    """Each encounter's designators and orbit sources, for the exports and CDMs (in place)."""
    for e in encounters:
        d = {}
        for who, oid in (("primary", e.primary), ("secondary", e.secondary)):
            ident = ids.get(oid)
            d[f"{who}_designator"] = ident.designator if ident else ""
            d[f"{who}_orbit"] = ident.orbit if ident else ""
            d[f"{who}_source"] = ident.source if ident else ""
        e.identity = d
