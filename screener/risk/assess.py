"""One encounter's risk figures from states and covariances (any source)."""

from __future__ import annotations

import math

import numpy as np

from .encounter_plane import project, project_many, ric_to_inertial_cov, ric_to_inertial_cov_many
from .pc import (chan_is_reliable, chan_reliable_many, in_dilution_region, pc_chan, pc_chan_many,
                 pc_max_line, pc_max_scaled, pc_max_scaled_many, pc_quadrature, pc_quadrature_many)


def assess(r1_km, v1_km_s, cov1_rtn_km2, r2_km, v2_km_s, cov2_rtn_km2, hbr_m: float,
           covariance_source: str) -> dict:
    """Covariances are 3x3 position blocks in each object's own RTN frame (km^2)."""
    g, rho, w = _geometry(r1_km, v1_km_s, cov1_rtn_km2, r2_km, v2_km_s, cov2_rtn_km2)
    args = (g.xm_m, g.ym_m, g.sx_m, g.sy_m, hbr_m)
    pc_ref = pc_quadrature(*args)
    pc, method = _chosen(args, pc_ref)
    worst, _ = pc_max_scaled(*args)
    return _result(g, rho, w, hbr_m, covariance_source, pc, method, pc_ref, worst,
                   in_dilution_region(*args))


def _geometry(r1_km, v1_km_s, cov1_rtn_km2, r2_km, v2_km_s, cov2_rtn_km2):
    r1, v1, r2, v2 = (np.asarray(x, float) for x in (r1_km, v1_km_s, r2_km, v2_km_s))
    c = ric_to_inertial_cov(cov1_rtn_km2, r1, v1) + ric_to_inertial_cov(cov2_rtn_km2, r2, v2)
    rho, w = r2 - r1, v2 - v1
    return project(rho, w, c), rho, w


def _chosen(args, pc_ref: float | None = None, chan_pc: float | None = None) -> tuple[float, str]:
    """The Pc every output reports: Chan's series where it is reliable, else the quadrature
    (either given when already computed for many encounters at once)."""
    ok, why = chan_is_reliable(*args)
    if ok:
        return (pc_chan(*args) if chan_pc is None else chan_pc), "Chan series"
    pc_ref = pc_quadrature(*args) if pc_ref is None else pc_ref
    return pc_ref, f"2-D quadrature (Chan not used: {why})"


def pc_2d(r1_km, v1_km_s, cov1_rtn_km2, r2_km, v2_km_s, cov2_rtn_km2, hbr_m: float) -> float:
    """assess()'s Pc alone (for searches that need many of them)."""
    g, _rho, _w = _geometry(r1_km, v1_km_s, cov1_rtn_km2, r2_km, v2_km_s, cov2_rtn_km2)
    return _chosen((g.xm_m, g.ym_m, g.sx_m, g.sy_m, hbr_m))[0]


def geometry_many(items) -> tuple[list, np.ndarray, np.ndarray]:
    """_geometry for many encounters in array operations: (plane geometries, rho, w)."""
    r1, v1, c1, r2, v2, c2 = (np.array([it[k] for it in items], float) for k in range(6))
    c = ric_to_inertial_cov_many(c1, r1, v1) + ric_to_inertial_cov_many(c2, r2, v2)
    rho, w = r2 - r1, v2 - v1
    return project_many(rho, w, c), rho, w


def assess_many(items) -> list[dict]:
    """assess() for many encounters: items are its argument tuples.  The geometry, the
    quadrature, the maximum over the covariance size and the dilution test run as array
    operations over all of them (the same rules, so the same figures)."""
    if not items:
        return []
    geos, rhos, ws = geometry_many(items)
    xm, ym, sx, sy, R = (np.array(v) for v in zip(*[(g.xm_m, g.ym_m, g.sx_m, g.sy_m, it[6])
                                                     for g, it in zip(geos, items)]))
    pc_ref = pc_quadrature_many(xm, ym, sx, sy, R)
    worst, _k = pc_max_scaled_many(xm, ym, sx, sy, R)
    dilution = pc_quadrature_many(xm, ym, sx * 0.9, sy * 0.9, R) > pc_ref
    chan_ok = chan_reliable_many(xm, ym, sx, sy, R)
    chan = np.zeros(len(xm))
    chan[chan_ok] = pc_chan_many(xm[chan_ok], ym[chan_ok], sx[chan_ok], sy[chan_ok], R[chan_ok])
    out = []
    for n, (g, it) in enumerate(zip(geos, items)):
        hbr_m, source = it[6], it[7]
        pc, method = _chosen((g.xm_m, g.ym_m, g.sx_m, g.sy_m, hbr_m), float(pc_ref[n]), float(chan[n]))
        out.append(_result(g, rhos[n], ws[n], hbr_m, source, pc, method, float(pc_ref[n]),
                           float(worst[n]), bool(dilution[n])))
    return out


def _result(g, rho, w, hbr_m, source, pc, method, pc_ref, worst, dilution) -> dict:
    return {
        "pc": pc, "pc_method": method, "pc_quadrature": pc_ref,
        "log10_pc": float(np.log10(pc)) if pc > 0 else None,
        "pc_max": worst, "pc_max_any_shape": pc_max_line(g.miss_m, hbr_m),
        "dilution_region": dilution,
        "miss_km": math.sqrt(float(rho @ rho)), "relative_speed_km_s": math.sqrt(float(w @ w)),
        "sigma_major_m": max(g.sx_m, g.sy_m), "sigma_minor_m": min(g.sx_m, g.sy_m),
        "plane_xm_m": g.xm_m, "plane_ym_m": g.ym_m, "plane_sx_m": g.sx_m, "plane_sy_m": g.sy_m,
        "hbr_m": hbr_m, "covariance_source": source,
        "covariance_note": "objects' errors assumed uncorrelated (combined = sum)",
    }


def assess_cdm(cdm, hbr_m: float) -> dict:
    o1, o2 = cdm.objects
    out = assess(o1.r_km, o1.v_km_s, o1.cov_rtn_m[:3, :3] * 1e-6, o2.r_km, o2.v_km_s,
                 o2.cov_rtn_m[:3, :3] * 1e-6, hbr_m, "CDM covariance")
    out["tca"] = cdm.tca_text
    return out
