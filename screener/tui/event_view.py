"""One event in depth: geometry, both orbits, covariance, Pc by method, and five plots
(range around TCA, the encounter plane, the event's history across runs, its received CDMs,
Pc sensitivity to the hard-body radius and the covariance's size)."""

from __future__ import annotations

import math

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Static

from ..propagation.orbit import osculating
from ..risk.pc import chan_is_reliable, pc_chan
from ..risk.agreement import compare, rule_of
from ..risk.attention import best_source
from ..store import queries
from ..store.queries import thresholds_of
from ..store.received import received_for_event
from ..display import PC_DISPLAY_FLOOR, fmt_pc
from ..risk.series import PROXIMITY_SPEED_KM_S, ROWS, SERIES_PC_RULE, group
from .model import fmt_ago, summary_line
from .plots import history_lines, plane_plot, range_plot, received_plot, sensitivity_plot
from .widgets import CautionBar

PLOTS = ("range", "plane", "history", "received", "sensitivity")
NOT_YET = object()


def _orbit_line(state) -> str:
    """Osculating orbit at TCA; the period from Kepler's third law (propagation.orbit)."""
    o = osculating(state[:3], state[3:])
    if o.size is None:
        return f"unbound (hyperbolic) state, i {o.inclination_deg:.2f} deg"
    return (f"perigee {o.size.perigee_alt_km:.0f} km, apogee {o.size.apogee_alt_km:.0f} km, "
            f"i {o.inclination_deg:.2f} deg, period {o.size.period_s / 60.0:.2f} min")


def _method(d: dict) -> str:
    """The Pc method's name, without the Chan remark (the Chan line gives it once)."""
    return d.get("pc_method", "?").split(" (Chan not used")[0]


def series_text(d: dict, members, now_unix_s: float) -> list[str]:
    """What the pair's other passes in this window add: count, span, closest pass, and the
    proximity label for a slow recurring pair."""
    if len(members) <= 1:
        return ["series: this is the pair's only pass in the window"]
    closest = min(members, key=lambda r: r.miss_km)
    worst = max(members, key=lambda r: (r.pc, -r.miss_km))
    lines = [f"series: {len(members)} passes of this pair in the window, "
             f"{members[0].tca_utc[5:16].replace('T', ' ')}Z to {members[-1].tca_utc[5:16].replace('T', ' ')}Z "
             f"({sum(1 for r in members if r.tca_unix_s < now_unix_s)} past)",
             f"  closest {closest.miss_km * 1e3:.0f} m at {closest.tca_utc[5:19].replace('T', ' ')}Z; "
             f"series Pc {fmt_pc(worst.pc)} = the highest pass Pc"
             + (" (this pass)" if worst.id == d.get("encounter_id") else
                f" (at {worst.tca_utc[5:16].replace('T', ' ')}Z)"),
             f"  {SERIES_PC_RULE}"]
    if group(members, ROWS)[0].proximity:
        slow = sum(1 for r in members if r.relative_speed_km_s < PROXIMITY_SPEED_KM_S)
        gaps = [b.tca_unix_s - a.tca_unix_s for a, b in zip(members, members[1:])]
        gaps.sort()
        lines.append(f"  PROXIMITY PAIR (co-orbital): {slow} of {len(members)} passes slower than "
                     f"{PROXIMITY_SPEED_KM_S * 1e3:.0f} m/s, recurring every {gaps[len(gaps) // 2] / 60:.0f} "
                     f"min; minimum range over the window {closest.miss_km * 1e3:.0f} m")
    return lines


def trades_text(trades: list[dict]) -> list[str]:
    """The manoeuvre trades kept with this event (newest last)."""
    if not trades:
        return ["manoeuvre trades: none yet (m sizes a burn)"]
    out = [f"manoeuvre trades: {len(trades)}"]
    for t in trades[-3:]:
        burn = (f"{t['chosen_dv_m_s'] * 100:.2f} cm/s at {t['chosen_burn_utc'][5:16].replace('T', ' ')}Z"
                if t["chosen_dv_m_s"] is not None else "no burn met the target")
        made = (f", re-screen: {t['created_count']} created, {t['worsened_count']} worsened"
                if t["created_count"] is not None else "")
        out.append(f"  {t['created_utc'][:16].replace('T', ' ')}Z {t['target']}: {burn}{made}")
    return out


def comparison_text(c: dict | None) -> list[str]:
    """Our screening against the latest received message (risk.agreement.compare)."""
    if not c:
        return []
    ratio = c["pc_ratio_received_to_ours"]
    line = (f"  latest vs ours: TCA {c['tca_diff_s']:+.1f} s, miss {c['miss_diff_km'] * 1e3:+.0f} m, "
            f"Pc theirs/ours x{ratio:.3g}" if ratio is not None else "")
    if c["disagrees"]:
        return [line, f"  DISAGREES with our screening: {c['disagreement']} ({c['rule']})"]
    return [line + " (agrees)"]


def received_text(msgs: list[dict], comparison: dict | None = None) -> list[str]:
    """The received CDMs joined to this event, oldest first: when each was made and how long
    before TCA, the sender's Pc and ours from its states and covariances, miss and the
    combined sigma in the encounter plane."""
    import json

    from ..timeutil import parse_iso

    if not msgs:
        return ["received CDMs: none for this event"]
    out = [f"received CDMs: {len(msgs)} (Pc ours from the message's own states and covariances)"]
    for m in msgs[-6:]:
        lead_h = (parse_iso(m["tca_utc"]) - parse_iso(m["creation_utc"])).total_seconds() / 3600.0
        data = json.loads(m["data_json"]) if m.get("data_json") else {}
        sig = data.get("sigma_major_m")
        theirs = fmt_pc(m["pc_sender"]) if m["pc_sender"] is not None else "-"
        out.append(f"  {m['creation_utc'][5:16].replace('T', ' ')}Z  {lead_h:5.1f} h before TCA  "
                   f"Pc theirs {theirs} ours {fmt_pc(m['pc'])}  miss {m['miss_km'] * 1e3:.0f} m"
                   + (f"  sigma {sig:.0f} m" if sig is not None else "") + f"  {m['originator']}")
    return out + comparison_text(comparison)


def alerts_text(alerts: list[dict]) -> list[str]:
    """The alerts that told of this pair (screener.alerts; newest three)."""
    if not alerts:
        return ["alerts: none sent for this pair"]
    out = [f"alerts: {len(alerts)} about this pair"]
    for a in alerts[-3:]:
        out.append(f"  {a['created_utc'][5:16].replace('T', ' ')}Z run {a['run_id']} rule {a['rule']} "
                   f"({a['trigger']}): {a['level']}, Pc {fmt_pc(a['pc'])}, "
                   + ("delivered" if a["delivered"] else "NOT delivered (tried again next run)"))
    return out


def facts_text(d: dict, now_unix_s: float, tca_unix_s: float, members=(), trades=(),
               received=(), best=None, comparison=None, alerts=()) -> str:
    """best: the level from the best covariance source (risk.attention.best_source), where
    received CDMs may have set it."""
    pc = d.get("pc") or 0.0
    xm, ym, sx, sy, hbr = (d.get(k) for k in ("plane_xm_m", "plane_ym_m", "plane_sx_m", "plane_sy_m", "hbr_m"))
    quad = d.get("pc_quadrature", 0.0)          # computed once, by the risk layer
    two_d = d.get("pc_2d", quad)
    lines = [
        f"TCA {d['tca']}  ({fmt_ago(tca_unix_s - now_unix_s)})",
        f"miss {d['miss_km'] * 1e3:.1f} m:  radial {d['radial_km'] * 1e3:.1f} m, in-track "
        f"{d['in_track_km'] * 1e3:.1f} m, cross-track {d['cross_track_km'] * 1e3:.1f} m",
        f"relative speed {fmt_speed_fine(d['relative_speed_km_s'])}, crossing angle "
        f"{d['crossing_angle_deg']:.1f} deg",
        *series_text(d, members, now_unix_s),
        "",
    ]
    for who in ("primary", "secondary"):
        desig = d.get(f"{who}_designator") or ""
        orbit = d.get(f"{who}_orbit") or "element set"
        src = d.get(f"{who}_source") or ""
        age = d.get(f"{who}_elset_age_days")
        lines += [
            f"{who:<9} {d[f'{who}_name'] or d[who]} ({d[who]}{', ' + desig if desig else ''})",
            f"  altitude at TCA {d[f'{who}_alt_km']:.1f} km; {orbit}"
            + (f" from {src}" if src else "") + (f", {age:.1f} d old" if age is not None else ""),
            f"  {_orbit_line(d[f'{who}_state_teme'])}",
            f"  covariance: {d.get(f'{who}_covariance', '?')}",
            f"  sigma radial/in-track/cross-track "
            f"{', '.join(f'{x * 1e3:.0f}' for x in d.get(f'{who}_sigma_rtn_km', []))} m",
        ]
    lines += ["", f"Pc {fmt_pc(pc, 2)}" + (f" (log10 {math.log10(pc):.2f})" if pc >= PC_DISPLAY_FLOOR else "")
              + f"  by {_method(d)}"]
    if "pc_2d" in d:
        lines.append(f"  Monte Carlo 99 %       {fmt_pc(d['pc_mc_lo99'])} to {fmt_pc(d['pc_mc_hi99'])}")
    lines.append(f"  2-D quadrature         {fmt_pc(quad)}" + ("  (short-encounter value, doubtful here)"
                                                          if "pc_2d" in d else ""))
    if None not in (xm, ym, sx, sy, hbr):
        ok, why = chan_is_reliable(xm, ym, sx, sy, hbr)
        lines.append(f"  Chan series            {fmt_pc(pc_chan(xm, ym, sx, sy, hbr))}"
                     + ("" if ok else f"  (not used: {why})"))
    lines += [
        f"  max 2-D Pc, covariance scaled   {fmt_pc(d.get('pc_max', 0.0))}  (bounds the 2-D value "
        f"{fmt_pc(two_d)}" + (", not the Monte Carlo Pc)" if "pc_2d" in d else ")"),
        f"  max 2-D Pc, any covariance shape {fmt_pc(d.get('pc_max_any_shape', 0.0))}",
        f"  hard-body radius {hbr:g} m; covariance source: {d.get('covariance_source', '?')}",
        f"  attention {d.get('attention', '?')}: {d.get('attention_reason', '')}",
    ]
    if best is not None and best.source == "received":
        lines[-1] = f"  attention {best.level}: {best.reason}; {best.said}"
    elif best is not None and received:
        lines.append(f"  level {best.said}")
    if d.get("assumed_covariance"):
        lines.append("  ASSUMED COVARIANCE: a regime model, not measured; treat this Pc as indicative")
    if d.get("dilution_region"):
        lines.append("  DILUTION REGION: Pc would rise if the uncertainty shrank; a low Pc here "
                     "does not mean the geometry is safe")
    if d.get("pc_note"):
        lines.append(f"  {d['pc_note']}")
    if d.get("volume_entry"):
        lines.append(f"  in the screening volume {d['volume_entry']} to {d['volume_exit']}")
    lines.append(f"trend {d.get('trend', '?')}, change since the previous run: {d.get('change', '?')}")
    lines += received_text(list(received), comparison)
    lines += trades_text(list(trades))
    lines += alerts_text(list(alerts))
    return "\n".join(lines)


def fmt_speed_fine(v_km_s: float) -> str:
    return f"{v_km_s * 1e3:.1f} m/s" if v_km_s < 1.0 else f"{v_km_s:.3f} km/s"


class EventLayout(Screen):
    """The event screens' common layout: title, scrolling facts and plot, caution, footer."""

    def compose(self) -> ComposeResult:
        yield Static("", id="event-title", markup=False)
        with VerticalScroll(id="event-body"):
            yield Static("", id="event-facts", markup=False)
            yield Static("", id="event-plot", markup=False)
        yield CautionBar()
        yield Footer()


class EventScreen(EventLayout):
    BINDINGS = [
        Binding("escape,backspace", "back", "Back"),
        Binding("question_mark", "help", "Help"),
        # the plot keys are listed over the plot itself, so the footer keeps room for the rest
        Binding("1", "plot('range')", "Range plot", show=False),
        Binding("2", "plot('plane')", "Encounter plane plot", show=False),
        Binding("3", "plot('history')", "History plot", show=False),
        Binding("4", "plot('received')", "Received CDMs plot", show=False),
        Binding("5", "plot('sensitivity')", "Pc sensitivity plot", show=False),
        Binding("e", "export", "Export CDM"),
        Binding("m", "trade", "Burn"),      # the manoeuvre trade (tui/trade_view.py)
        Binding("w", "write_received", "Write received CDM"),
        Binding("y", "copy", "Copy line", show=False),
        Binding("q", "app.quit", "Quit", show=False),
    ]

    def __init__(self, encounter_id: int) -> None:
        super().__init__()
        self.encounter_id = encounter_id
        self.plot = "range"
        self.detail: dict = {}
        self.history: list[dict] = []
        self.members: list = []
        self.received: list[dict] = []
        self.best = None
        self.comparison: dict | None = None
        self.tca_unix_s = 0.0
        self._sens = NOT_YET          # Pc sensitivity curves, computed when plot 5 is first shown

    def on_mount(self) -> None:
        store = self.app.open_store()
        self.detail = queries.encounter_detail(store, self.encounter_id)
        self.history = queries.event_history(store, self.detail["event_id"])
        self.tca_unix_s = store.conn.execute("SELECT tca_unix_s FROM encounters WHERE id=?",
                                             (self.encounter_id,)).fetchone()[0]
        d = self.detail
        self.members = queries.series_members(store, d["run_id"], d["primary"], d["secondary"])
        self.received = received_for_event(store, d["event_id"])
        info = queries.run(store, d["run_id"])
        self.best = best_source(d.get("attention", "routine"), d.get("attention_reason", ""),
                                bool(d.get("assumed_covariance")),
                                self.received[-1] if self.received else None, thresholds_of(info))
        self.comparison = (compare(d, self.received[-1], rule_of(info.config))
                           if self.received else None)
        self.query_one("#event-title", Static).update(
            f"{d['primary_name'] or d['primary']} x {d['secondary_name'] or d['secondary']} | "
            f"{self.best.level}{' (received CDM)' if self.best.source == 'received' else ''} | Pc {fmt_pc(d.get('pc') or 0.0)} | miss {d['miss_km'] * 1e3:.0f} m"
            f" | {d['tca'][5:16].replace('T', ' ')}Z | event {d['event_id']}, run {d['run_id']}")
        self._facts()
        self._layout()
        self.query_one("#event-body").focus()

    def _facts(self) -> None:
        from ..risk.series import series_key
        from ..store.alerts import alerts_for_subject
        from ..store.trades import trades_for_event

        store = self.app.open_store()
        d = self.detail
        self.query_one("#event-facts", Static).update(
            facts_text(d, self.app.now_unix_s(), self.tca_unix_s, self.members,
                       trades_for_event(store, d["event_id"]) if store else (),
                       self.received, self.best, self.comparison,
                       alerts_for_subject(store, series_key(d["primary"], d["secondary"]))
                       if store else ()))

    def on_screen_resume(self) -> None:
        if self.detail:          # back from the trade screen: show the trade just kept
            self._facts()

    def on_resize(self) -> None:
        self.app.check_size()
        self._layout()

    def _layout(self) -> None:
        body = self.query_one("#event-body")
        body.set_class(self.app.size.width >= 150, "wide")
        self._draw_plot()

    def _draw_plot(self) -> None:
        w, h = self.app.size
        wide = w >= 150
        cols = (w // 2 - 4) if wide else w - 4
        rows = max(10, h - 8) if wide else 14
        d = self.detail
        if self.plot == "range":
            vol = None
            lines = range_plot(d.get("profile_half_s") or 60.0, d.get("range_profile_km") or [],
                               cols, rows, vol)
        elif self.plot == "plane":
            lines = plane_plot(d["plane_xm_m"], d["plane_ym_m"], d["plane_sx_m"], d["plane_sy_m"],
                               d["hbr_m"], cols, rows)
        elif self.plot == "received":
            lines = received_plot(self.received, cols, rows)
        elif self.plot == "sensitivity":
            lines = sensitivity_plot(self._sensitivity(), cols, rows + 4)
        else:
            lines = history_lines(self.history, cols, rows)
        keys = "   1 range 2 plane 3 history 4 CDMs 5 sensitivity"
        self.query_one("#event-plot", Static).update("\n".join([f"plot: {self.plot}{keys}"] + lines))

    def _sensitivity(self):
        """The event's Pc sensitivity curves, computed on first use (redraws reuse them)."""
        if self._sens is NOT_YET:
            from ..risk.sensitivity import of_encounter

            self._sens = of_encounter(self.detail)
        return self._sens

    def action_plot(self, which: str) -> None:
        self.plot = which
        self._draw_plot()
        if not self.query_one("#event-body").has_class("wide"):
            self.query_one("#event-body").scroll_to_widget(self.query_one("#event-plot"), animate=False)

    def action_back(self) -> None:
        self.app.pop_screen()

    def action_export(self) -> None:
        self.app.export_cdm(self.encounter_id)

    def action_write_received(self) -> None:
        if not self.received:
            self.notify("no received CDM for this event", severity="warning")
            return
        self.app.write_received(self.received[-1]["message_id"])

    def action_trade(self) -> None:
        from .trade_view import TradeScreen

        self.app.push_screen(TradeScreen(self.detail["event_id"]))

    def action_copy(self) -> None:
        d = self.detail
        line = summary_line(d["primary"], d["primary_name"], d["secondary"], d["secondary_name"],
                            d["tca"], d["miss_km"], d["relative_speed_km_s"], d.get("pc") or 0.0,
                            d.get("attention", "?"), d.get("covariance_source", "?"))
        self.app.copy_to_clipboard(line)
        self.notify(f"copied: {line}", timeout=6, markup=False)

    def action_help(self) -> None:
        from .help import HelpScreen

        self.app.push_screen(HelpScreen("event view", [self, self.app]))
