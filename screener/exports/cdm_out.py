"""One CCSDS CDM (508.0-B-1, KVN) per event from a stored encounter.

States go out in GCRF (rotated from TEME with skyfield), position covariance in each object's
RTN frame in m^2 as the standard gives it.  Velocity covariance terms are not estimated by
screener; they are written as zero and a COMMENT says so.
"""

from __future__ import annotations

import datetime as dt
import re

import numpy as np

from .. import CAUTION, __version__
from ..propagation.frames import gcrf_to_teme_matrices
from ..risk.cdm import write_cdm
from ..screening.ric import ric_basis
from ..textfile import clean_name
from ..timeutil import datetime_to_jd, iso_z, parse_iso


def _safe(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", text)


def pc_method_keyword(pc_method: str) -> str | None:
    """COLLISION_PROBABILITY_METHOD for the method that produced the stored Pc, or None when
    the standard's list has no value for it (the Monte Carlo along the relative path): the
    keyword is optional and is then left out, with a COMMENT naming the method."""
    if pc_method.startswith("Chan series"):
        return "CHAN-1997"
    if pc_method.startswith("2-D quadrature"):
        return "FOSTER-1992"
    return None


def _catalog_name(e: dict, who: str) -> str:
    """CATALOG_NAME: the input file the object's orbit was read from (the operator's catalog
    or fleet file), else SCREENER for encounters stored before sources were recorded."""
    src = e.get(f"{who}_source") or ""
    return _safe(src) if src else "SCREENER"


def cdm_for_encounter(e: dict, maneuverable: dict | None = None, originator: str = "SCREENER"):
    """(header, relative, objects) for write_cdm from an encounter's stored fields."""
    maneuverable = maneuverable or {}
    tca = parse_iso(e["tca"])
    jd, fr = datetime_to_jd(tca)
    M = gcrf_to_teme_matrices(jd, fr, np.array([0.0]))[0]   # GCRF -> TEME
    now = dt.datetime.now(dt.timezone.utc)
    header = {"CCSDS_CDM_VERS": "1.0", "CREATION_DATE": iso_z(now, 3)[:-1],
              "ORIGINATOR": originator,
              "MESSAGE_ID": _safe(f"{e['primary']}_{e['secondary']}_{e['tca']}")}
    s1, s2 = np.asarray(e["primary_state_teme"], float), np.asarray(e["secondary_state_teme"], float)
    rho, w = s2[:3] - s1[:3], s2[3:] - s1[3:]
    B = ric_basis(s1[:3], s1[3:])
    rel = {"TCA": e["tca"][:-1] if e["tca"].endswith("Z") else e["tca"],
           "MISS_DISTANCE": f"{e['miss_km'] * 1e3:.3f}",
           "RELATIVE_SPEED": f"{e['relative_speed_km_s'] * 1e3:.3f}"}
    for ax, x in zip("RTN", B @ rho * 1e3):
        rel[f"RELATIVE_POSITION_{ax}"] = f"{x:.3f}"
    for ax, x in zip("RTN", B @ w * 1e3):
        rel[f"RELATIVE_VELOCITY_{ax}"] = f"{x:.3f}"
    if e.get("pc") is not None:
        rel["COLLISION_PROBABILITY"] = f"{e['pc']:.4e}"
        keyword = pc_method_keyword(e.get("pc_method", ""))
        if keyword is not None:
            rel["COLLISION_PROBABILITY_METHOD"] = keyword
    objects = []
    for k, (who, s) in enumerate((("primary", s1), ("secondary", s2)), start=1):
        cov = np.zeros((6, 6))
        cov[:3, :3] = np.asarray(e.get(f"{who}_cov_rtn_km2") or np.zeros((3, 3))) * 1e6
        src = e.get(f"{who}_covariance", "")
        objects.append({
            "OBJECT": f"OBJECT{k}", "OBJECT_DESIGNATOR": _safe(e[who]),
            "CATALOG_NAME": _catalog_name(e, who),
            "OBJECT_NAME": clean_name(e.get(f"{who}_name") or "") or "UNKNOWN",
            "INTERNATIONAL_DESIGNATOR": e.get(f"{who}_designator") or "UNKNOWN",
            "EPHEMERIS_NAME": (_safe(e.get(f"{who}_source") or "") or "OEM")
                              if e.get(f"{who}_orbit") == "OEM" else "NONE",
            "COVARIANCE_METHOD": "DEFAULT" if "assumed" in src else "CALCULATED",
            "MANEUVERABLE": {True: "YES", False: "NO"}.get(maneuverable.get(e[who]), "N/A"),
            "REF_FRAME": "GCRF",
            "r_km": M.T @ s[:3], "v_km_s": M.T @ s[3:], "cov_rtn_m": cov,
        })
    comments = [f"screener {__version__}; {CAUTION}",
                f"Pc {e.get('pc', 0):.4e} by {e.get('pc_method', '?')}; covariance source: "
                f"{e.get('covariance_source', '?')}; hard-body radius {e.get('hbr_m', 0):g} m",
                "velocity covariance terms are not estimated by screener and are written as zero"]
    return header, rel, objects, comments


def write_event_cdm(folder: str, e: dict, maneuverable: dict | None = None) -> str:
    import os

    header, rel, objects, comments = cdm_for_encounter(e, maneuverable)
    path = os.path.join(folder, f"{header['MESSAGE_ID']}.cdm")
    write_cdm(path, header, rel, objects, comments=comments)
    return path
