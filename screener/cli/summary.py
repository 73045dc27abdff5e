"""Plain-text ranked summary of a screening (terminal and e-mail friendly)."""

from __future__ import annotations

from .. import CAUTION
from ..timeutil import iso_z


def ranked(encounters):
    return sorted(encounters, key=lambda e: (-(getattr(e, "pc", 0.0) or 0.0), e.miss_km))


def render(result, limit: int = 25) -> str:
    req = result.request
    encs = ranked(result.encounters)
    lines = [
        f"Screening window: {len(req.primaries) + len(req.primary_oems) or 'all'} primaries"
        f" vs {len(req.catalog)} objects, {req.duration_s / 86400:g} days, {req.volume.describe()}",
        f"Encounters: {len(encs)}   pairs bracketed: {result.stats.get('brackets', 0)}   "
        f"wall time: {result.stats.get('wall_s', 0):.1f} s",
    ]
    if result.unusable:
        lines.append(f"Objects with unusable states (skipped where unusable): {len(result.unusable)}")
    if encs:
        lines.append("")
        lines.append(f"{'#':>3} {'primary':<12} {'secondary':<12} {'TCA (UTC)':<24} {'miss km':>9} "
                     f"{'R km':>8} {'I km':>8} {'C km':>8} {'v km/s':>7}")
        for n, e in enumerate(encs[:limit], start=1):
            lines.append(f"{n:>3} {e.primary:<12.12} {e.secondary:<12.12} {iso_z(e.tca, 3):<24} "
                         f"{e.miss_km:9.3f} {e.radial_km:8.3f} {e.in_track_km:8.3f} "
                         f"{e.cross_track_km:8.3f} {e.relative_speed_km_s:7.3f}")
        if len(encs) > limit:
            lines.append(f"    ... {len(encs) - limit} more (use --json for all)")
    lines += ["", CAUTION]
    return "\n".join(lines)
