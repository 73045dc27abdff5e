"""A one-page plain-text report of a run, suitable for e-mail: one row per series
(a pair's passes in the window, ranked by its worst pass), then each spacecraft's risk."""

from __future__ import annotations

import datetime as dt

from .. import CAUTION
from ..display import fmt_pc, fmt_speed, plural
from ..risk.attention import LEVELS
from ..risk.flags import legend_text
from ..risk.series import CUMULATIVE_RULE, SERIES_PC_RULE, cumulative_by_primary, series_by_primary
from ..timeutil import parse_iso

TOP_N = 15
HEAD = ("#", "level", "Pc", "primary", "secondary", "secondary id", "worst TCA (UTC)", "miss km",
        "rel v", "flags", "passes", "trend")


def _when(e: dict, now: dt.datetime) -> str:
    return e["tca"][:19].replace("T", " ") + (" (past)" if parse_iso(e["tca"]) < now else "")


def _rows(series, now, limit: int = TOP_N):
    for n, g in enumerate(series[:limit], start=1):
        e = g.worst
        yield (str(n), LEVELS[g.level_rank], fmt_pc(g.pc), e.get("primary_name") or e["primary"],
               e.get("secondary_name") or e["secondary"], e["secondary"], _when(e, now),
               f"{e['miss_km']:.3f}", fmt_speed(e["relative_speed_km_s"]), e.get("flags", ""),
               str(g.count), e.get("trend", ""))


def _fleet(series) -> list[str]:
    cum = cumulative_by_primary(series)
    per = series_by_primary(series)
    out = []
    for pid in sorted(cum, key=lambda p: -cum[p]):
        mine = per[pid]
        w = mine[0].worst
        out.append(f"{w.get('primary_name') or pid} ({pid}): cumulative Pc {fmt_pc(cum[pid])}, "
                   f"{len(mine)} series, worst {LEVELS[mine[0].level_rank]} with "
                   f"{w.get('secondary_name') or w['secondary']} at {w['tca'][:19]}Z")
    return out


def run_facts(run: dict, series, n_encounters: int) -> list[str]:
    """The run's header lines, the same in the text and the HTML report."""
    counts = {lv: sum(1 for g in series if LEVELS[g.level_rank] == lv) for lv in LEVELS}
    return [f"made {run['started_utc']}; window {run['window_start_utc']} + {run['window_days']:g} d, "
            f"{run['volume']}, {run['mode']}",
            f"{run['n_primaries']} primaries, {run['n_secondaries']} secondaries, "
            f"{plural(n_encounters, 'encounter')} in {len(series)} series",
            "series by attention: " + ", ".join(f"{lv} {counts[lv]}" for lv in LEVELS),
            SERIES_PC_RULE, "flags: " + legend_text()]


def render_report(run: dict, series, n_encounters: int, diff_text: str = "",
                  now: dt.datetime | None = None, received_text: str = "") -> str:
    """The plain-text report (the HTML one: html_report.py).  received_text: what received
    CDMs add (received_lines), shown after the ranked table."""
    now = now or dt.datetime.now(dt.timezone.utc)
    title = f"screener run {run['id']} - {run['name']}"
    facts = run_facts(run, series, n_encounters)
    if diff_text:
        facts += diff_text.splitlines()
    fleet = _fleet(series)
    widths = [3, 7, 7, 12, 12, 12, 27, 8, 9, 5, 6, 10]
    lines = [title, CAUTION, ""] + facts + ["", " ".join(h.ljust(w) for h, w in zip(HEAD, widths))]
    lines += [" ".join(c[:w].ljust(w) for c, w in zip(r, widths)).rstrip() for r in _rows(series, now)]
    if len(series) > TOP_N:
        lines.append(f"... {len(series) - TOP_N} more series in the JSON/CSV exports")
    if received_text:
        lines += [""] + received_text.splitlines()
    lines += ["", f"Per spacecraft ({CUMULATIVE_RULE}):"] + [f"  {f}" for f in fleet]
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"


def received_lines(encs: list[dict], only: list[dict]) -> str:
    """What received CDMs add to a run: the events they join (latest message, the level the
    best source sets), the disagreements, the events known only from them.  encs and only as
    exports.write.run_encounters and received_only_events give them; "" when there are none."""
    both = [e for e in encs if e.get("received")]
    if not both and not only:
        return ""
    seen, rows = set(), []
    for e in both:                       # one line per event (its worst pass first: encs are ranked)
        if e["event_id"] in seen:
            continue
        seen.add(e["event_id"])
        last = e["received"][-1]
        theirs = fmt_pc(last["pc_sender"]) if last["pc_sender"] is not None else "-"
        cmp_ = e.get("received_comparison") or {}
        rows.append(f"  {e['primary_name'] or e['primary']} x {e['secondary_name'] or e['secondary']}"
                    f": {len(e['received'])} msg, latest {last['message_id']} Pc ours "
                    f"{fmt_pc(last['pc'])} theirs {theirs}; level {e['attention']}, "
                    f"{e['attention_set_by']}"
                    + (f"; DISAGREES: {cmp_['disagreement']}" if cmp_.get("disagrees") else ""))
    for o in only:
        rows.append(f"  RECEIVED ONLY {o['object1_name'] or o['object1']} x "
                    f"{o['object2_name'] or o['object2']} TCA {o['tca'][:19]}Z miss "
                    f"{o['miss_km'] * 1e3:.0f} m Pc ours {fmt_pc(o['pc'])}: level {o['attention']}; "
                    f"{len(o['received'])} msg, no event of ours")
    n_dis = sum(1 for e in both if (e.get("received_comparison") or {}).get("disagrees")
                and e.get("worst_of_series", True))
    head = (f"Received CDMs: {plural(len(seen), 'event')} of ours with messages, "
            f"{plural(len(only), 'event')} only in them, {n_dis} disagreeing")
    return "\n".join([head] + rows)
