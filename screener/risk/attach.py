"""Attach risk figures (covariance source, Pc by method, max Pc, dilution, attention level)
to the screening engine's encounters."""

from __future__ import annotations

import math
from typing import Callable, Mapping, Sequence

import numpy as np

from ..gcpause import gc_paused
from ..screening.encounter import Encounter
from .assess import assess_many
from .attention import Thresholds
from .covariance import CovarianceSources
from .flags import encounter_flags

# Common practice: hard-body radius = sum of the two circumscribing-sphere radii.  With
# nothing configured each object is taken as a 5 m sphere, so the default HBR is 10 m.
DEFAULT_OBJECT_RADIUS_M = 5.0
# Short-encounter check (rough, from memory): the 2-D Pc assumes straight-line relative motion
# while the objects are within the combined 5-sigma region; doubtful when that takes longer
# than this, or when the pass is slower than 0.1 km/s.
SHORT_ENCOUNTER_MAX_S = 600.0
SLOW_PASS_KM_S = 0.1
ASSUMED_LABEL = "assumed covariance"


def _regimes(encounters: Sequence[Encounter]) -> list[str]:
    """The regime (OrbitSize.regime) of the osculating orbit at TCA of the primary and the
    secondary of every encounter, interleaved; unbound states count as HEO."""
    from ..propagation.orbit import regimes_many

    if not encounters:
        return []
    r = np.array([x for e in encounters for x in (e.primary_r_km, e.secondary_r_km)], float)
    v = np.array([x for e in encounters for x in (e.primary_v_km_s, e.secondary_v_km_s)], float)
    return regimes_many(r, v)


@gc_paused
def attach_risk(encounters: Sequence[Encounter], sources: CovarianceSources,
                radius_m: Callable[[str], float] | None = None,
                thresholds: Thresholds = Thresholds(),
                aliases: Mapping[str, Sequence[str]] | None = None,
                progress: Callable[[str, int, int], None] | None = None,
                path_not_sent: Sequence[bool] | None = None) -> None:
    """Fill e.risk for every encounter.  radius_m(object_id) gives each object's
    circumscribing-sphere radius (default DEFAULT_OBJECT_RADIUS_M); progress("risk", done,
    total) is called every few encounters.  path_not_sent[n]: encounter n has a relative
    path that was left out (pack_for_risk); if its Pc needs one, its record is marked
    PATH_PENDING instead."""
    radius_m = radius_m or (lambda _id: DEFAULT_OBJECT_RADIUS_M)
    aliases = aliases or {}
    total = len(encounters)
    staged = []
    regimes = _regimes(encounters)
    for n, e in enumerate(encounters):
        if progress and n % 500 == 0:
            progress("risk", n, total)
        tjd, tfr = e.tca_jd
        est = []
        for oid, regime, age in ((e.primary, regimes[2 * n], e.primary_age_days),
                                 (e.secondary, regimes[2 * n + 1], e.secondary_age_days)):
            est.append(sources.estimate(oid, regime, age, tjd, tfr, aliases.get(oid, ())))
        hbr_m = radius_m(e.primary) + radius_m(e.secondary)
        assumed_any = any(x.assumed for x in est)
        label = ASSUMED_LABEL if assumed_any else " + ".join(dict.fromkeys(x.source for x in est))
        staged.append((e, est, hbr_m, assumed_any,
                       (e.primary_r_km, e.primary_v_km_s, est[0].cov_rtn_km2, e.secondary_r_km,
                        e.secondary_v_km_s, est[1].cov_rtn_km2, hbr_m, label)))
    results = assess_many([x[4] for x in staged])
    sigma3d_max = (np.linalg.eigvalsh(np.array([x[1][0].cov_rtn_km2 + x[1][1].cov_rtn_km2 for x in staged]))
                   .max(axis=1).tolist() if staged else [])
    for n, ((e, est, hbr_m, assumed_any, _args), out) in enumerate(zip(staged, results)):
        if progress and n % 10 == 0:
            progress("risk", n, total)
        sigma3d_km = math.sqrt(sigma3d_max[n])
        t_enc_s = 2.0 * (5.0 * sigma3d_km + hbr_m / 1000.0) / max(e.relative_speed_km_s, 1e-9)
        short_ok = e.relative_speed_km_s >= SLOW_PASS_KM_S and t_enc_s <= SHORT_ENCOUNTER_MAX_S
        level, reason = thresholds.level(out["pc"], out["pc_max"], out["dilution_region"])
        out.update({
            "assumed_covariance": assumed_any,
            "primary_covariance": est[0].label(), "secondary_covariance": est[1].label(),
            "primary_sigma_rtn_km": est[0].sigma_rtn_km,
            "secondary_sigma_rtn_km": est[1].sigma_rtn_km,
            "primary_cov_rtn_km2": est[0].cov_rtn_km2.tolist(),
            "secondary_cov_rtn_km2": est[1].cov_rtn_km2.tolist(),
            "short_encounter_ok": short_ok,
            "encounter_duration_s": t_enc_s,
            "attention": level, "attention_reason": reason,
        })
        if not short_ok:
            out["pc_note"] = ("2-D short-encounter Pc doubtful: slow pass or long time in the "
                              "combined uncertainty region")
            if len(e.relative_path_km) >= 2:
                _path_pc(e, est[0].cov_rtn_km2, est[1].cov_rtn_km2, out, hbr_m, thresholds)
            elif path_not_sent is not None and path_not_sent[n]:
                out[PATH_PENDING] = True      # risk_in_workers completes it with the path
        out["flags"] = encounter_flags(assumed_any, bool(out["dilution_region"]), short_ok)
        e.risk = out


@gc_paused
def risk_of_chunk(packed: dict, oems, configured, history, radii: dict,
                  thresholds: Thresholds) -> list[dict]:
    """Risk for a chunk of encounters in a worker process: everything it needs comes as plain
    data (pack_for_risk's arrays, the covariance sources' inputs, each object's radius), the
    risk dicts go back."""
    encounters = unpack_for_risk(packed)
    sources = CovarianceSources(oems=oems, configured=configured, history=history)
    attach_risk(encounters, sources, radius_m=lambda oid: radii[oid], thresholds=thresholds,
                path_not_sent=packed["path_not_sent"].tolist())
    return [e.risk for e in encounters]


# Set in a risk record made without the relative path that its encounter has and needs (a
# long pass that is not slow: pack_for_risk sends the paths of slow passes only)
PATH_PENDING = "_path_pending"


def complete_path_pc(e: Encounter, thresholds: Thresholds) -> None:
    """The along-path Pc of an encounter whose risk record was made without its path (marked
    PATH_PENDING); any other record is left as it is."""
    out = e.risk
    if out.pop(PATH_PENDING, False) and len(e.relative_path_km) >= 2:
        _path_pc(e, np.array(out["primary_cov_rtn_km2"]), np.array(out["secondary_cov_rtn_km2"]),
                 out, out["hbr_m"], thresholds)


# The numbers attach_risk reads of an encounter, in pack_for_risk's column order
_PACKED_SCALARS = ("window_jd", "window_fr", "tca_s", "relative_speed_km_s", "primary_age_days",
                   "secondary_age_days", "profile_half_s")
_PACKED_VECTORS = ("primary_r_km", "primary_v_km_s", "secondary_r_km", "secondary_v_km_s")


def pack_for_risk(encounters: Sequence[Encounter]) -> dict:
    """What attach_risk reads of each encounter (ids, TCA, states, ages, speed; the relative
    path of slow passes), as a few arrays: a worker's chunk pickles and loads in about a
    tenth of the time its Encounter objects take (0.2 against 2.4 s for 70,548 encounters,
    measured).  Only slow passes (under SLOW_PASS_KM_S) send their path: every encounter has
    one (61 points), 103 MB at 70,548 encounters, whose copy alone took 1.2 s, and a faster
    pass needs it only when its covariance is so large that it stays in the combined region
    for more than SHORT_ENCOUNTER_MAX_S; such a record comes back marked PATH_PENDING."""
    num = np.array([[getattr(e, f) for f in _PACKED_SCALARS]
                    + [x for f in _PACKED_VECTORS for x in getattr(e, f)] for e in encounters],
                   float).reshape(len(encounters), len(_PACKED_SCALARS) + 12)
    has_path = np.array([len(e.relative_path_km) >= 2 for e in encounters], bool)
    lens = np.array([len(e.relative_path_km) if e.relative_speed_km_s < SLOW_PASS_KM_S else 0
                     for e in encounters], int)
    paths = (np.concatenate([np.asarray(e.relative_path_km, float).reshape(-1, 3)
                             for e, n in zip(encounters, lens.tolist()) if n])
             if lens.any() else np.empty((0, 3)))
    return {"ids": [(e.primary, e.secondary) for e in encounters], "num": num,
            "path_lens": lens, "paths": paths, "path_not_sent": has_path & (lens == 0)}


def unpack_for_risk(packed: dict) -> list[Encounter]:
    """Encounters carrying the fields attach_risk reads (the others are left empty)."""
    num, lens, paths = packed["num"], packed["path_lens"], packed["paths"]
    ends = np.cumsum(lens)
    ns = len(_PACKED_SCALARS)
    nan = float("nan")
    out = []
    for k, (pid, sid) in enumerate(packed["ids"]):
        row = num[k].tolist()
        sc = dict(zip(_PACKED_SCALARS, row[:ns]))
        vec = {f: tuple(row[ns + 3 * i:ns + 3 * i + 3]) for i, f in enumerate(_PACKED_VECTORS)}
        path = paths[ends[k] - lens[k]:ends[k]] if lens[k] else ()
        out.append(Encounter(primary=pid, primary_name="", secondary=sid, secondary_name="",
                             miss_km=nan, radial_km=nan, in_track_km=nan, cross_track_km=nan,
                             crossing_angle_deg=nan, relative_path_km=path, **sc, **vec))
    return out


def _path_pc(e: Encounter, cov1_rtn_km2, cov2_rtn_km2, out: dict, hbr_m: float,
             thresholds: Thresholds) -> None:
    """Slow/long encounter: Pc by Monte Carlo along the relative path replaces the 2-D Pc
    (which is kept as pc_2d).  The covariances are each object's 3x3 RTN position block."""
    from .encounter_plane import ric_to_inertial_cov
    from .pc_path import PATH_MC_SAMPLES, pc_path_resolved

    c = (ric_to_inertial_cov(cov1_rtn_km2, e.primary_r_km, e.primary_v_km_s)
         + ric_to_inertial_cov(cov2_rtn_km2, e.secondary_r_km, e.secondary_v_km_s))
    mc, resolved = pc_path_resolved(np.array(e.relative_path_km), c, hbr_m / 1000.0,
                                    (thresholds.watch_pc, thresholds.act_pc))
    out["pc_2d"], out["pc_2d_method"] = out["pc"], out["pc_method"]
    out["pc"] = mc.pc
    out["log10_pc"] = float(np.log10(mc.pc)) if mc.pc > 0 else None
    out["pc_mc_lo99"], out["pc_mc_hi99"] = mc.lo99, mc.hi99
    span = f"+-{e.profile_half_s:.0f} s"
    how = ("" if mc.samples <= PATH_MC_SAMPLES else
           "; importance-sampled around the hard-body tube after the first batch")
    if mc.samples == 0:
        out["pc_method"] = (f"Monte Carlo along the relative path not drawn ({span}): the path "
                            f"stays so far from the hard-body tube in units of the covariance "
                            f"that Pc is below {mc.hi99:.1e} (rigorous upper bound)")
    else:
        out["pc_method"] = (f"Monte Carlo along the relative path ({span}, {mc.samples:,} samples, "
                            f"99 % interval {mc.lo99:.1e} to {mc.hi99:.1e}; errors held fixed over "
                            f"the path{how})")
    out["pc_mc_resolved"] = resolved
    if resolved:
        level, reason = thresholds.level(out["pc"], out["pc_max"], out["dilution_region"])
    else:
        # the interval still straddles a threshold at the sample cap: rank by what the data
        # cannot exclude, the 99 % upper bound
        level, reason = thresholds.level(mc.hi99, out["pc_max"], out["dilution_region"])
        reason = (f"Monte Carlo Pc {mc.pc:.1e} cannot separate it from a threshold after "
                  f"{mc.samples:,} samples; level set by its 99 % upper bound: {reason}")
    out["attention"], out["attention_reason"] = level, reason
