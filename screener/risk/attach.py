"""Attach risk figures (covariance source, Pc by method, max Pc, dilution, attention level)
to the screening engine's encounters."""

from __future__ import annotations

import dataclasses
import math
from operator import attrgetter
from types import SimpleNamespace
from typing import Callable, Mapping, Sequence

import numpy as np

from ..gcpause import gc_paused
from ..screening.encounter import Encounter
from .assess import assess_columns
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


@dataclasses.dataclass
class _Columns:
    """What the risk stage reads of each encounter, as columns: from Encounter objects
    (attach_risk) or straight from pack_for_risk's arrays in a worker (risk_of_chunk)."""
    primary: list[str]
    secondary: list[str]
    tca_jd: list[float]
    tca_fr: list[float]
    primary_age_days: list[float]
    secondary_age_days: list[float]
    relative_speed_km_s: list[float]
    profile_half_s: list[float]
    r1: np.ndarray          # (n, 3) primary position, km (C-ordered)
    v1: np.ndarray
    r2: np.ndarray
    v2: np.ndarray
    paths: list             # each encounter's relative path ((m, 3) or empty)

    @classmethod
    def of(cls, encounters: Sequence[Encounter]) -> "_Columns":
        tca = [e.tca_jd for e in encounters]
        return cls([e.primary for e in encounters], [e.secondary for e in encounters],
                   [t[0] for t in tca], [t[1] for t in tca],
                   [e.primary_age_days for e in encounters], [e.secondary_age_days for e in encounters],
                   [e.relative_speed_km_s for e in encounters], [e.profile_half_s for e in encounters],
                   *(np.array([getattr(e, f) for e in encounters], float).reshape(-1, 3)
                     for f in _PACKED_VECTORS),
                   [e.relative_path_km for e in encounters])

    @classmethod
    def unpacked(cls, packed: dict) -> "_Columns":
        num, lens, paths = packed["num"], packed["path_lens"], packed["paths"]
        ends = np.cumsum(lens).tolist()
        col = {f: num[:, k] for k, f in enumerate(_PACKED_SCALARS)}
        ns = len(_PACKED_SCALARS)
        vec = [np.ascontiguousarray(num[:, ns + 3 * i:ns + 3 * i + 3]) for i in range(len(_PACKED_VECTORS))]
        return cls([p for p, _s in packed["ids"]], [s for _p, s in packed["ids"]],
                   col["window_jd"].tolist(), (col["window_fr"] + col["tca_s"] / 86400.0).tolist(),
                   col["primary_age_days"].tolist(), col["secondary_age_days"].tolist(),
                   col["relative_speed_km_s"].tolist(), col["profile_half_s"].tolist(), *vec,
                   [paths[e - n:e] if n else () for e, n in zip(ends, lens.tolist())])

    def path_view(self, k: int) -> SimpleNamespace:
        """The fields _path_pc reads of encounter k."""
        return SimpleNamespace(primary_r_km=self.r1[k], primary_v_km_s=self.v1[k],
                               secondary_r_km=self.r2[k], secondary_v_km_s=self.v2[k],
                               relative_path_km=self.paths[k], profile_half_s=self.profile_half_s[k])


def _interleaved(a: Sequence, b: Sequence) -> list:
    return [x for pair in zip(a, b) for x in pair]


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
    records = _risk_records(_Columns.of(encounters), sources, radius_m, thresholds, aliases,
                            progress, path_not_sent)
    for e, out in zip(encounters, records):
        e.risk = out


def _risk_records(c: _Columns, sources: CovarianceSources, radius_m, thresholds: Thresholds,
                  aliases, progress, path_not_sent) -> list[dict]:
    """attach_risk's records, from columns.  The regimes, the assumed covariances, the 2-D
    figures and the covariance figures of the records run as array operations over the whole
    chunk; what stays per encounter is assembling its record (and the slow passes' Monte
    Carlo)."""
    from ..propagation.orbit import regimes_many

    radius_m = radius_m or (lambda _id: DEFAULT_OBJECT_RADIUS_M)
    total = len(c.primary)
    if not total:
        return []
    if progress:
        progress("risk", 0, total)
    # the osculating orbit's regime of each object at TCA, primary and secondary interleaved
    regimes = regimes_many(np.stack([c.r1, c.r2], axis=1).reshape(-1, 3),
                           np.stack([c.v1, c.v2], axis=1).reshape(-1, 3))
    tjd = _interleaved(c.tca_jd, c.tca_jd)
    tfr = _interleaved(c.tca_fr, c.tca_fr)
    est = sources.estimate_many(_interleaved(c.primary, c.secondary), regimes,
                                _interleaved(c.primary_age_days, c.secondary_age_days), tjd, tfr,
                                aliases)
    hbr = [radius_m(p) + radius_m(s) for p, s in zip(c.primary, c.secondary)]
    src, lab = est.source, est.label
    assumed_any = (est.assumed[0::2] | est.assumed[1::2]).tolist()
    label = [ASSUMED_LABEL if assumed_any[n] else " + ".join(dict.fromkeys(src[2 * n:2 * n + 2]))
             for n in range(total)]
    cov1 = np.ascontiguousarray(est.cov_rtn_km2[0::2])
    cov2 = np.ascontiguousarray(est.cov_rtn_km2[1::2])
    results = assess_columns(c.r1, c.v1, cov1, c.r2, c.v2, cov2, hbr, label)
    sigma3d_max = np.linalg.eigvalsh(cov1 + cov2).max(axis=1).tolist()
    sigma = [tuple(x) for x in est.sigma_rtn_km.tolist()]
    cov_lists = est.cov_rtn_km2.tolist()
    for n, out in enumerate(results):
        if progress and n % 10 == 0:
            progress("risk", n, total)
        speed, hbr_m = c.relative_speed_km_s[n], hbr[n]
        sigma3d_km = math.sqrt(sigma3d_max[n])
        t_enc_s = 2.0 * (5.0 * sigma3d_km + hbr_m / 1000.0) / max(speed, 1e-9)
        short_ok = speed >= SLOW_PASS_KM_S and t_enc_s <= SHORT_ENCOUNTER_MAX_S
        level, reason = thresholds.level(out["pc"], out["pc_max"], out["dilution_region"])
        out.update({
            "assumed_covariance": assumed_any[n],
            "primary_covariance": lab[2 * n], "secondary_covariance": lab[2 * n + 1],
            "primary_sigma_rtn_km": sigma[2 * n],
            "secondary_sigma_rtn_km": sigma[2 * n + 1],
            "primary_cov_rtn_km2": cov_lists[2 * n],
            "secondary_cov_rtn_km2": cov_lists[2 * n + 1],
            "short_encounter_ok": short_ok,
            "encounter_duration_s": t_enc_s,
            "attention": level, "attention_reason": reason,
        })
        if not short_ok:
            out["pc_note"] = ("2-D short-encounter Pc doubtful: slow pass or long time in the "
                              "combined uncertainty region")
            if len(c.paths[n]) >= 2:
                _path_pc(c.path_view(n), cov1[n], cov2[n], out, hbr_m, thresholds)
            elif path_not_sent is not None and path_not_sent[n]:
                out[PATH_PENDING] = True      # risk_in_workers completes it with the path
        out["flags"] = encounter_flags(assumed_any[n], bool(out["dilution_region"]), short_ok)
    return results


@gc_paused
def risk_of_chunk(packed: dict, oems, configured, history, radii: dict,
                  thresholds: Thresholds) -> list[dict]:
    """Risk for a chunk of encounters in a worker process: everything it needs comes as plain
    data (pack_for_risk's arrays, the covariance sources' inputs, each object's radius), the
    risk dicts go back."""
    sources = CovarianceSources(oems=oems, configured=configured, history=history)
    return _risk_records(_Columns.unpacked(packed), sources, lambda oid: radii[oid], thresholds,
                         None, None, packed["path_not_sent"].tolist())


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
    scalars = attrgetter(*_PACKED_SCALARS)
    num = np.array([(*scalars(e), *e.primary_r_km, *e.primary_v_km_s, *e.secondary_r_km,
                     *e.secondary_v_km_s) for e in encounters],
                   float).reshape(len(encounters), len(_PACKED_SCALARS) + 12)
    n_path = [len(e.relative_path_km) for e in encounters]
    has_path = np.array(n_path, int) >= 2
    lens = np.array([n if e.relative_speed_km_s < SLOW_PASS_KM_S else 0
                     for e, n in zip(encounters, n_path)], int)
    paths = (np.concatenate([np.asarray(e.relative_path_km, float).reshape(-1, 3)
                             for e, n in zip(encounters, lens.tolist()) if n])
             if lens.any() else np.empty((0, 3)))
    return {"ids": [(e.primary, e.secondary) for e in encounters], "num": num,
            "path_lens": lens, "paths": paths, "path_not_sent": has_path & (lens == 0)}


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
