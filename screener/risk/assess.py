"""One encounter's risk figures from states and covariances (any source)."""

from __future__ import annotations

import math

import numpy as np

from .encounter_plane import project, project_columns, ric_to_inertial_cov, ric_to_inertial_cov_many
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


def assess_many(items) -> list[dict]:
    """assess() for many encounters: items are its argument tuples.  The geometry, the
    quadrature, the maximum over the covariance size and the dilution test run as array
    operations over all of them (the same rules, so the same figures)."""
    if not items:
        return []
    r1, v1, c1, r2, v2, c2 = (np.array([it[k] for it in items], float) for k in range(6))
    return assess_columns(r1, v1, c1, r2, v2, c2, [it[6] for it in items], [it[7] for it in items])


def assess_columns(r1_km, v1_km_s, cov1_rtn_km2, r2_km, v2_km_s, cov2_rtn_km2,
                   hbr_m: list[float], sources: list[str]) -> list[dict]:
    """assess_many's figures from columns: states (n, 3), RTN covariances (n, 3, 3) (C-ordered
    arrays), hard-body radii and covariance-source names (lists of n)."""
    if not len(hbr_m):
        return []
    c = ric_to_inertial_cov_many(cov1_rtn_km2, r1_km, v1_km_s) + ric_to_inertial_cov_many(cov2_rtn_km2, r2_km, v2_km_s)
    rhos, ws = r2_km - r1_km, v2_km_s - v1_km_s
    xm, ym, sx, sy, miss_m = project_columns(rhos, ws, c)
    R = np.array(hbr_m, float)
    pc_ref = pc_quadrature_many(xm, ym, sx, sy, R)
    worst, _k = pc_max_scaled_many(xm, ym, sx, sy, R)
    dilution = pc_quadrature_many(xm, ym, sx * 0.9, sy * 0.9, R) > pc_ref
    chan_ok = chan_reliable_many(xm, ym, sx, sy, R)
    chan = np.zeros(len(xm))
    chan[chan_ok] = pc_chan_many(xm[chan_ok], ym[chan_ok], sx[chan_ok], sy[chan_ok], R[chan_ok])
    out = []
    rows = zip(xm.tolist(), ym.tolist(), sx.tolist(), sy.tolist(), miss_m.tolist(), hbr_m, sources,
               pc_ref.tolist(), chan.tolist(), worst.tolist(), dilution.tolist())
    for n, (x, y, sxn, syn, miss, hbr, source, ref, chan_pc, worst_n, dil) in enumerate(rows):
        pc, method = _chosen((x, y, sxn, syn, hbr), ref, chan_pc)
        out.append(_result_of(x, y, sxn, syn, miss, rhos[n], ws[n], hbr, source, pc, method, ref,
                              worst_n, dil))
    return out


def _result(g, rho, w, hbr_m, source, pc, method, pc_ref, worst, dilution) -> dict:
    return _result_of(g.xm_m, g.ym_m, g.sx_m, g.sy_m, g.miss_m, rho, w, hbr_m, source, pc, method,
                      pc_ref, worst, dilution)


def _result_of(xm, ym, sx, sy, miss_m, rho, w, hbr_m, source, pc, method, pc_ref, worst, dilution) -> dict:
    return {
        "pc": pc, "pc_method": method, "pc_quadrature": pc_ref,
        "log10_pc": float(np.log10(pc)) if pc > 0 else None,
        "pc_max": worst, "pc_max_any_shape": pc_max_line(miss_m, hbr_m),
        "dilution_region": dilution,
        "miss_km": math.sqrt(float(rho @ rho)), "relative_speed_km_s": math.sqrt(float(w @ w)),
        "sigma_major_m": max(sx, sy), "sigma_minor_m": min(sx, sy),
        "plane_xm_m": xm, "plane_ym_m": ym, "plane_sx_m": sx, "plane_sy_m": sy,
        "hbr_m": hbr_m, "covariance_source": source,
        "covariance_note": "objects' errors assumed uncorrelated (combined = sum)",
    }


def assess_cdm(cdm, hbr_m: float) -> dict:
    o1, o2 = cdm.objects
    out = assess(o1.r_km, o1.v_km_s, o1.cov_rtn_m[:3, :3] * 1e-6, o2.r_km, o2.v_km_s,
                 o2.cov_rtn_m[:3, :3] * 1e-6, hbr_m, "CDM covariance")
    out["tca"] = cdm.tca_text
    return out
