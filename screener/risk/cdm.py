"""CCSDS Conjunction Data Message (CCSDS 508.0-B-1), KVN: write one per event, read back.

Keyword lists and units are from CCSDS 508.0-B-1 (from memory of the standard's tables 3-1 to
3-5; obligatory keywords only plus the optional ones written here).  Positions km, velocities
km/s, covariance in the object's RTN frame in m^2, m^2/s, m^2/s^2.
"""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np

from ..constants import MAX_RADIUS_KM
from ..errors import ParseError
from ..timeutil import parse_iso
from ..textfile import clean_text, read_text

HEADER = ("CCSDS_CDM_VERS", "CREATION_DATE", "ORIGINATOR", "MESSAGE_ID")
RELATIVE = ("TCA", "MISS_DISTANCE")
OBJECT_META = ("OBJECT", "OBJECT_DESIGNATOR", "CATALOG_NAME", "OBJECT_NAME",
               "INTERNATIONAL_DESIGNATOR", "EPHEMERIS_NAME", "COVARIANCE_METHOD", "MANEUVERABLE",
               "REF_FRAME")
STATE = ("X", "Y", "Z", "X_DOT", "Y_DOT", "Z_DOT")
COV_AXES = ("R", "T", "N", "RDOT", "TDOT", "NDOT")
COVARIANCE = tuple(f"C{COV_AXES[i]}_{COV_AXES[j]}" for i in range(6) for j in range(i + 1))
OBLIGATORY_PER_OBJECT = OBJECT_META + STATE + COVARIANCE
CDM_MIN_RADIUS_KM = 6378.137 + 50.0       # a state below 50 km altitude is no orbit
CDM_MAX_SPEED_KM_S = 20.0                 # above Earth escape speed at any altitude
_KVN = re.compile(r"^\s*([A-Z0-9_]+)\s*=\s*(.*?)\s*(\[[^\]]*\])?\s*$")


@dataclasses.dataclass
class CdmObject:
    fields: dict
    r_km: np.ndarray
    v_km_s: np.ndarray
    cov_rtn_m: np.ndarray     # 6x6 (m, m/s)


@dataclasses.dataclass
class Cdm:
    path: str
    header: dict
    relative: dict
    objects: list

    @property
    def tca_text(self) -> str:
        return self.relative["TCA"]

    @property
    def object1_designator(self) -> str:
        return self.objects[0].fields["OBJECT_DESIGNATOR"]

    @property
    def object2_designator(self) -> str:
        return self.objects[1].fields["OBJECT_DESIGNATOR"]


def _unit_of(key: str) -> str | None:
    """The unit CCSDS 508.0-B-1 gives a keyword's value (None: unitless or not checked)."""
    if key in ("X", "Y", "Z"):
        return "km"
    if key in ("X_DOT", "Y_DOT", "Z_DOT"):
        return "km/s"
    if key == "MISS_DISTANCE" or key.startswith("RELATIVE_POSITION_"):
        return "m"
    if key == "RELATIVE_SPEED" or key.startswith("RELATIVE_VELOCITY_"):
        return "m/s"
    if key in COVARIANCE:
        a, b = key[1:].split("_")
        dots = ("DOT" in a) + ("DOT" in b)
        return ("m**2", "m**2/s", "m**2/s**2")[dots]
    return None


def _parse_kvn(text: str, path: str):
    header, relative, objects = {}, {}, []
    current = None
    lineno_of, units = {}, {}
    for lineno, raw in enumerate(text.splitlines(), start=1):
        s = raw.strip()
        if not s or s.startswith("COMMENT"):
            continue
        m = _KVN.match(s)
        if not m:
            raise ParseError(f"not a KEY = value line: {s[:40]!r}", path, lineno, 1)
        key, value = m.group(1), m.group(2)
        if key == "OBJECT":
            current = {}
            objects.append(current)
        target = current if current is not None else (header if key in HEADER else relative)
        if key in target:
            raise ParseError(f"keyword {key} given twice (first at line "
                             f"{lineno_of[(len(objects), key)]})", path, lineno, 1)
        target[key] = value
        lineno_of[(len(objects), key)] = lineno
        if m.group(3):
            units[(len(objects), key)] = m.group(3)[1:-1].strip()
    return header, relative, objects, lineno_of, units


def read_cdm(path: str, text: str | None = None) -> Cdm:
    """A CDM in KVN or in XML (CCSDS 508.0-B-1; XML through defusedxml), every obligatory
    keyword, unit, number and covariance checked: a ParseError names file, line and keyword."""
    text = read_text(path, "CDM") if text is None else clean_text(text)
    if text.lstrip().startswith("<"):
        from .cdm_xml import parse_xml

        header, relative, objects, lineno_of, units = parse_xml(text, path)
    else:
        header, relative, objects, lineno_of, units = _parse_kvn(text, path)
    for (k, key), unit in units.items():
        want = _unit_of(key)
        if want is not None and unit.lower() != want.lower():
            where = f"OBJECT{k}: " if k else ""
            raise ParseError(f"{where}{key} is given in [{unit}], the standard's unit is [{want}]",
                             path, lineno_of.get((k, key)))
    for key in HEADER:
        if key not in header:
            raise ParseError(f"missing obligatory CDM keyword {key}", path, 1)
    for key in RELATIVE:
        if key not in relative:
            raise ParseError(f"missing obligatory CDM keyword {key}", path, 1)
    if len(objects) != 2:
        last = max(lineno_of.values(), default=1)
        raise ParseError(f"a CDM has two OBJECT sections, found {len(objects)} by the file's end "
                         f"(line {last}): truncated, or not a conjunction message", path, last)
    out = []
    for k, obj in enumerate(objects, start=1):
        for key in OBLIGATORY_PER_OBJECT:
            if key not in obj:
                raise ParseError(f"OBJECT{k}: missing obligatory CDM keyword {key}", path,
                                 lineno_of.get((k, "OBJECT"), 1))
        if obj["REF_FRAME"].upper() not in ("EME2000", "GCRF", "ITRF"):
            raise ParseError(f"OBJECT{k}: REF_FRAME {obj['REF_FRAME']} not one of EME2000, GCRF, ITRF",
                             path, lineno_of[(k, "REF_FRAME")])

        def num(key):
            try:
                x = float(obj[key])
            except ValueError:
                raise ParseError(f"OBJECT{k}: {key} is not numeric: {obj[key][:40]!r}", path,
                                 lineno_of[(k, key)]) from None
            if not math.isfinite(x):
                raise ParseError(f"OBJECT{k}: {key} is not a finite number: {obj[key]!r}", path,
                                 lineno_of[(k, key)])
            return x

        r = np.array([num(x) for x in STATE[:3]])
        v = np.array([num(x) for x in STATE[3:]])
        rmag, vmag = float(np.linalg.norm(r)), float(np.linalg.norm(v))
        if not (CDM_MIN_RADIUS_KM <= rmag <= MAX_RADIUS_KM):
            raise ParseError(f"OBJECT{k}: position magnitude {rmag:.1f} km is not an Earth orbit "
                             f"({CDM_MIN_RADIUS_KM:.0f} to {MAX_RADIUS_KM:.0f} km)", path,
                             lineno_of[(k, "X")])
        if vmag > CDM_MAX_SPEED_KM_S:
            raise ParseError(f"OBJECT{k}: speed {vmag:.1f} km/s is above {CDM_MAX_SPEED_KM_S:g} km/s",
                             path, lineno_of[(k, "X_DOT")])
        c = np.zeros((6, 6))
        c[np.tril_indices(6)] = [num(x) for x in COVARIANCE]
        c = c + np.tril(c, -1).T
        if np.linalg.eigvalsh(c[:3, :3]).min() < -1e-6 * max(1.0, np.abs(c[:3, :3]).max()):
            raise ParseError(f"OBJECT{k}: position covariance is not positive semi-definite",
                             path, lineno_of[(k, "CR_R")])
        bad = _not_psd(c)
        if bad:
            raise ParseError(f"OBJECT{k}: covariance (6x6, RTN) {bad}", path,
                             lineno_of[(k, "CR_R")])
        out.append(CdmObject(obj, r, v, c))
    try:
        miss = float(relative["MISS_DISTANCE"])
    except ValueError:
        miss = math.nan
    if not (math.isfinite(miss) and miss >= 0):
        raise ParseError(f"MISS_DISTANCE is not a non-negative number: {relative['MISS_DISTANCE'][:40]!r}",
                         path, lineno_of[(0, "MISS_DISTANCE")])
    for key in ("TCA", "CREATION_DATE"):
        src = relative if key == "TCA" else header
        try:
            parse_iso(src[key])
        except ValueError:
            raise ParseError(f"{key} is not a UTC date and time: {src[key][:40]!r}", path,
                             lineno_of[(0, key)]) from None
    return Cdm(path, header, relative, out)


PSD_TOL = 1e-6      # smallest eigenvalue of the correlation matrix allowed below zero (rounding)


def _not_psd(c: np.ndarray) -> str:
    """Why a 6x6 covariance is not a covariance ('' when it is): a negative variance, or a
    correlation matrix with an eigenvalue below -PSD_TOL (scale-free across m^2 and m^2/s^2;
    axes with zero variance must have zero covariances)."""
    d = np.diag(c)
    if (d < 0).any():
        return f"has a negative variance ({COV_AXES[int(np.argmin(d))]})"
    live = d > 0
    if np.abs(c[~live]).max(initial=0.0) > 0:
        return "has covariances on an axis with zero variance"
    s = 1.0 / np.sqrt(d[live])
    corr = c[np.ix_(live, live)] * s[:, None] * s[None, :]
    low = float(np.linalg.eigvalsh(corr).min()) if live.any() else 0.0
    if low < -PSD_TOL:
        return f"is not positive semi-definite (correlation eigenvalue {low:.2e})"
    return ""


def write_cdm(path: str, header: dict, relative: dict, objects: list[dict],
              comments: list[str] = ()) -> None:
    """objects: two dicts with OBJECT_META keys plus 'r_km', 'v_km_s', 'cov_rtn_m' (6x6).
    comments go after the header as COMMENT lines (the standard allows them there)."""
    lines = [f"{k:<36}= {header[k]}" for k in HEADER]
    lines += [f"COMMENT {c}" for c in comments]
    for k, v in relative.items():
        u = _unit_of(k)
        lines.append(f"{k:<36}= {v}" + (f" [{u}]" if u else ""))
    for obj in objects:
        for k in OBJECT_META:
            lines.append(f"{k:<36}= {obj[k]}")
        for k, x in zip(STATE, [*obj["r_km"], *obj["v_km_s"]]):
            lines.append(f"{k:<36}= {x:.9f} [{_unit_of(k)}]")
        c = np.asarray(obj["cov_rtn_m"])
        for name in COVARIANCE:
            a, b = name[1:].split("_")
            lines.append(f"{name:<36}= {c[COV_AXES.index(a), COV_AXES.index(b)]:.9e} [{_unit_of(name)}]")
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("\n".join(lines) + "\n")
