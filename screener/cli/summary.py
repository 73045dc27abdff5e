"""Plain-text ranked summary of a screening (terminal and e-mail friendly)."""

from __future__ import annotations

import math

from .. import CAUTION
from ..risk.attach import cumulative_by_primary
from ..risk.attention import LEVEL_RANK, LEVELS
from ..timeutil import iso_z


def ranked(encounters):
    return sorted(encounters, key=lambda e: (-e.pc, e.miss_km))


def fmt_pc(pc: float) -> str:
    return f"{pc:9.2e}" if pc > 0 else f"{'0':>9}"


def fmt_log10(pc: float) -> str:
    return f"{math.log10(pc):6.1f}" if pc > 0 else f"{'-inf':>6}"


UNUSABLE_LISTED = 5


def render(result, limit: int = 25, thresholds=None, diff=None) -> str:
    req = result.request
    encs = ranked(result.encounters)
    lines = [
        f"Screening window: {len(req.primaries) + len(req.primary_oems) or 'all'} primaries"
        f" vs {len(req.catalog)} objects, {req.duration_s / 86400:g} days, {req.volume.describe()}",
        f"Encounters: {len(encs)}   pairs bracketed: {result.stats.get('brackets', 0)}   "
        f"wall time: {result.stats.get('wall_s', 0):.1f} s",
    ]
    if thresholds is not None:
        counts = {lv: sum(1 for e in encs if e.risk.get("attention") == lv) for lv in LEVELS}
        lines.append("Attention: " + "   ".join(f"{lv} {counts[lv]}" for lv in LEVELS)
                     + f"   [{thresholds.describe()}]")
    if result.unusable:
        lines.append(f"Objects not screened over part or all of the window: {len(result.unusable)}")
        items = sorted(result.unusable.items())
        for oid, why in items[:UNUSABLE_LISTED]:
            lines.append(f"  {oid}: {why}")
        if len(items) > UNUSABLE_LISTED:
            lines.append(f"  ... and {len(items) - UNUSABLE_LISTED} more (all in --json)")
    if diff is not None:
        lines.append(render_diff(diff))
    if encs:
        lines.append("")
        lines.append(f"{'#':>3} {'level':<7} {'Pc':>9} {'log10':>6} {'primary':<12} {'secondary':<12} "
                     f"{'TCA (UTC)':<24} {'miss km':>8} {'R km':>7} {'I km':>7} {'C km':>7} "
                     f"{'v km/s':>6} cov")
        for n, e in enumerate(encs[:limit], start=1):
            rk = e.risk
            flags = (("A" if rk.get("assumed_covariance") else "") + ("D" if rk.get("dilution_region") else "")
                     + ("S" if rk.get("short_encounter_ok") is False else ""))
            lines.append(f"{n:>3} {rk.get('attention', ''):<7} {fmt_pc(e.pc)} {fmt_log10(e.pc)} "
                         f"{e.primary:<12.12} {e.secondary:<12.12} {iso_z(e.tca, 3):<24} "
                         f"{e.miss_km:8.3f} {e.radial_km:7.3f} {e.in_track_km:7.3f} "
                         f"{e.cross_track_km:7.3f} {e.relative_speed_km_s:6.2f} {flags}")
        if len(encs) > limit:
            lines.append(f"    ... {len(encs) - limit} more (use --json for all)")
        lines.append("cov flags: A = Pc from assumed covariance (a regime model, not measured), "
                     "D = dilution region (Pc would rise if the uncertainty shrank: a low Pc is not reassuring), "
                     "S = slow or long encounter (the 2-D short-encounter Pc is doubtful)")
        cum = cumulative_by_primary(encs)
        if cum and len(cum) < 50:
            lines.append("")
            lines.append("Cumulative Pc per primary over the window, 1 - prod(1 - Pc_i):")
            for pid, p in cum.items():
                n_e = sum(1 for e in encs if e.primary == pid)
                worst = min((LEVEL_RANK.get(e.risk.get("attention"), 2) for e in encs if e.primary == pid))
                lines.append(f"  {pid:<12} {p:9.2e}  ({n_e} encounters, highest level {LEVELS[worst]})")
    lines += ["", CAUTION]
    return "\n".join(lines)


def render_diff(diff) -> str:
    if diff.previous_run_id is None:
        return "Since the previous run: none (first run of this name)"
    c = diff.counts()
    out = [f"Since run {diff.previous_run_id}: {c['new']} new, {c['escalated']} escalated, "
           f"{c['de_escalated']} de-escalated, {c['gone']} gone, {c['tca_shifts']} TCA shifts > 1 s"]
    for label, items in (("escalated", diff.escalated), ("new", diff.new), ("gone", diff.gone)):
        for it in [i for i in items if label != "new" or i["attention"] != "routine"][:10]:
            was = f" (was {it['was']})" if "was" in it else ""
            out.append(f"  {label:<10} {it['primary']} x {it['secondary']} TCA {it['tca']} "
                       f"{it['attention']}{was} miss {it['miss_km']:.3f} km Pc {it['pc']:.1e}")
    return "\n".join(out)
