"""Plain-text ranked summary of a screening (terminal and e-mail friendly): one row per series
(a pair's passes in the window), then each spacecraft's worst series and cumulative risk."""

from __future__ import annotations

from .. import CAUTION
from ..display import fmt_log10, fmt_pc, fmt_speed, plural
from ..risk.attention import LEVELS
from ..risk.flags import legend_text, with_proximity
from ..risk.series import (CUMULATIVE_RULE, ENGINE, SERIES_PC_RULE, cumulative_by_primary, group,
                           series_by_primary)
from ..timeutil import iso_z

UNUSABLE_LISTED = 5


def ranked(encounters):
    return sorted(encounters, key=lambda e: (-e.pc, e.miss_km))


def series_flags(g) -> str:
    return with_proximity(g.worst.risk.get("flags", ""), g.proximity)


def _passes(g) -> str:
    if g.count == 1:
        return "1"
    first, last = g.members[0].tca, g.members[-1].tca
    return f"{g.count} ({first:%m-%d %H:%M} to {last:%m-%d %H:%M})"


def render(result, limit: int = 25, thresholds=None, diff=None) -> str:
    req = result.request
    encs = result.encounters
    series = group(encs, ENGINE)
    names = {}
    for e in encs:
        names[e.primary], names[e.secondary] = e.primary_name, e.secondary_name
    n_prim = len(req.primaries) + len(req.primary_oems)
    lines = [
        f"Screening window: {plural(n_prim, 'primary', 'primaries') if n_prim else 'all objects'}"
        f" vs {plural(len(req.catalog), 'object')}, {req.duration_s / 86400:g} "
        f"{'day' if req.duration_s == 86400 else 'days'}, {req.volume.describe()}",
        f"Encounters: {len(encs)} in {plural(len(series), 'series', 'series')} (a series is one "
        f"pair's passes in the window)   pairs bracketed: {result.stats.get('brackets', 0)}   "
        f"wall time: {result.stats.get('wall_s', 0):.1f} s",
    ]
    if thresholds is not None:
        counts = {lv: sum(1 for g in series if LEVELS[g.level_rank] == lv) for lv in LEVELS}
        lines.append("Series by attention: " + "   ".join(f"{lv} {counts[lv]}" for lv in LEVELS)
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
    if series:
        lines.append("")
        lines.append(f"{'#':>3} {'level':<7} {'Pc':>7} {'log10':>5} {'primary':<12} {'secondary':<12} "
                     f"{'id':<9} {'worst TCA (UTC)':<24} {'miss km':>7} {'R km':>6} {'I km':>6} "
                     f"{'C km':>6} {'rel v':>9} {'flg':<4} passes")
        for n, g in enumerate(series[:limit], start=1):
            e = g.worst
            lines.append(f"{n:>3} {LEVELS[g.level_rank]:<7} {fmt_pc(g.pc):>7} {fmt_log10(g.pc):>5} "
                         f"{e.primary_name or e.primary:<12.12} {e.secondary_name or e.secondary:<12.12} "
                         f"{e.secondary:<9.9} {iso_z(e.tca, 3):<24} {e.miss_km:7.3f} "
                         f"{e.radial_km:6.3f} {e.in_track_km:6.3f} {e.cross_track_km:6.3f} "
                         f"{fmt_speed(e.relative_speed_km_s):>9} {series_flags(g):<4} {_passes(g)}")
        if len(series) > limit:
            lines.append(f"    ... {len(series) - limit} more series (use --json for all)")
        lines.append("flags: " + legend_text())
        lines.append(SERIES_PC_RULE[0].upper() + SERIES_PC_RULE[1:] + "; the row shows the worst pass.")
        lines += render_fleet(series, names)
    lines += ["", CAUTION]
    return "\n".join(lines)


def render_fleet(series, names: dict) -> list[str]:
    """Each primary: its series by level, its worst series and its cumulative risk."""
    cum = cumulative_by_primary(series)
    if not cum or len(cum) >= 50:
        return []
    per = series_by_primary(series)
    out = ["", f"Per spacecraft; {CUMULATIVE_RULE}:"]
    for pid in sorted(cum, key=lambda p: -cum[p]):
        mine = per[pid]
        worst = mine[0]
        counts = "  ".join(f"{lv} {sum(1 for g in mine if g.level_rank == k)}" for k, lv in enumerate(LEVELS))
        out.append(f"  {names.get(pid) or pid:<12.12} {pid:<10} cumulative Pc {fmt_pc(cum[pid]):>7}  "
                   f"{counts}  worst: {names.get(worst.secondary) or worst.secondary} "
                   f"{iso_z(worst.worst.tca, 0)} Pc {fmt_pc(worst.pc)}")
    return out


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
                       f"{it['attention']}{was} miss {it['miss_km']:.3f} km Pc {fmt_pc(it['pc'])}")
    return "\n".join(out)

