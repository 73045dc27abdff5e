"""One event in depth: geometry, both orbits, covariance, Pc by method, and three plots
(range around TCA, the encounter plane, the event's history across runs)."""

from __future__ import annotations

import math

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Static

from ..propagation.orbit import osculating
from ..risk.pc import chan_is_reliable, pc_chan
from ..store import queries
from .model import fmt_pc, fmt_until, summary_line
from .plots import history_lines, plane_plot, range_plot
from .widgets import CautionBar

PLOTS = ("range", "plane", "history")


def _orbit_line(state) -> str:
    """Osculating orbit at TCA; the period from Kepler's third law (propagation.orbit)."""
    o = osculating(state[:3], state[3:])
    if o.size is None:
        return f"unbound (hyperbolic) state, i {o.inclination_deg:.2f} deg"
    return (f"perigee {o.size.perigee_alt_km:.0f} km, apogee {o.size.apogee_alt_km:.0f} km, "
            f"i {o.inclination_deg:.2f} deg, period {o.size.period_s / 60.0:.2f} min")


def facts_text(d: dict, now_unix_s: float, tca_unix_s: float) -> str:
    pc = d.get("pc") or 0.0
    xm, ym, sx, sy, hbr = (d.get(k) for k in ("plane_xm_m", "plane_ym_m", "plane_sx_m", "plane_sy_m", "hbr_m"))
    chan_line = ""
    if None not in (xm, ym, sx, sy, hbr):
        ok, why = chan_is_reliable(xm, ym, sx, sy, hbr)
        chan = pc_chan(xm, ym, sx, sy, hbr)
        chan_line = f"  Chan series          {fmt_pc(chan)}" + ("" if ok else f"  (not used: {why})")
    quad = d.get("pc_quadrature", 0.0)          # computed once, by the risk layer
    lines = [
        f"TCA {d['tca']}  ({fmt_until(tca_unix_s - now_unix_s)} from now)",
        f"miss {d['miss_km'] * 1e3:.1f} m:  radial {d['radial_km'] * 1e3:.1f} m, in-track "
        f"{d['in_track_km'] * 1e3:.1f} m, cross-track {d['cross_track_km'] * 1e3:.1f} m",
        f"relative speed {d['relative_speed_km_s']:.3f} km/s, crossing angle {d['crossing_angle_deg']:.1f} deg",
        "",
        f"primary   {d['primary']} {d['primary_name']}",
        f"  altitude at TCA {d['primary_alt_km']:.1f} km; element set {d['primary_elset_age_days']:.1f} d old",
        f"  {_orbit_line(d['primary_state_teme'])}",
        f"  covariance: {d.get('primary_covariance', '?')}",
        f"  sigma R/I/C {', '.join(f'{x * 1e3:.0f}' for x in d.get('primary_sigma_rtn_km', []))} m",
        f"secondary {d['secondary']} {d['secondary_name']}",
        f"  altitude at TCA {d['secondary_alt_km']:.1f} km; element set {d['secondary_elset_age_days']:.1f} d old",
        f"  {_orbit_line(d['secondary_state_teme'])}",
        f"  covariance: {d.get('secondary_covariance', '?')}",
        f"  sigma R/I/C {', '.join(f'{x * 1e3:.0f}' for x in d.get('secondary_sigma_rtn_km', []))} m",
        "",
        f"Pc {fmt_pc(pc)} (log10 {math.log10(pc):.2f})  by {d.get('pc_method', '?')}" if pc > 0 else
        f"Pc 0 by {d.get('pc_method', '?')}",
        f"  2-D quadrature       {fmt_pc(quad)}",
    ]
    if "pc_2d" in d:
        lines.insert(-1, f"  along-path MC 99 %   {fmt_pc(d['pc_mc_lo99'])} to {fmt_pc(d['pc_mc_hi99'])}"
                         f"  (2-D short-encounter value {fmt_pc(d['pc_2d'])})")
    if chan_line:
        lines.append(chan_line)
    lines += [
        f"  max Pc (size scaled) {fmt_pc(d.get('pc_max', 0.0))}   any shape {fmt_pc(d.get('pc_max_any_shape', 0.0))}",
        f"  hard-body radius {hbr:g} m; covariance source: {d.get('covariance_source', '?')}",
        f"  attention {d.get('attention', '?')}: {d.get('attention_reason', '')}",
    ]
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
    return "\n".join(lines)


class EventScreen(Screen):
    BINDINGS = [
        Binding("escape,backspace", "back", "Back"),
        Binding("1", "plot('range')", "Range plot"),
        Binding("2", "plot('plane')", "Encounter plane"),
        Binding("3", "plot('history')", "History"),
        Binding("e", "export", "Export CDM"),
        Binding("y", "copy", "Copy line"),
        Binding("question_mark", "help", "Help"),
        Binding("q", "app.quit", "Quit", show=False),
    ]

    def __init__(self, encounter_id: int) -> None:
        super().__init__()
        self.encounter_id = encounter_id
        self.plot = "range"
        self.detail: dict = {}
        self.history: list[dict] = []
        self.tca_unix_s = 0.0

    def compose(self) -> ComposeResult:
        yield Static("", id="event-title", markup=False)
        with VerticalScroll(id="event-body"):
            yield Static("", id="event-facts", markup=False)
            yield Static("", id="event-plot", markup=False)
        yield CautionBar()
        yield Footer()

    def on_mount(self) -> None:
        store = self.app.open_store()
        self.detail = queries.encounter_detail(store, self.encounter_id)
        self.history = queries.event_history(store, self.detail["event_id"])
        self.tca_unix_s = store.conn.execute("SELECT tca_unix_s FROM encounters WHERE id=?",
                                             (self.encounter_id,)).fetchone()[0]
        d = self.detail
        self.query_one("#event-title", Static).update(
            f"event {d['event_id']}: {d['primary']} {d['primary_name']} x {d['secondary']} "
            f"{d['secondary_name']} | {d.get('attention', '?')} | Pc {fmt_pc(d.get('pc') or 0.0)} | "
            f"miss {d['miss_km'] * 1e3:.0f} m | run {d['run_id']}")
        self.query_one("#event-facts", Static).update(facts_text(d, self.app.now_unix_s(), self.tca_unix_s))
        self._layout()
        self.query_one("#event-body").focus()

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
        else:
            lines = history_lines(self.history, cols, rows)
        keys = "  [1 range | 2 plane | 3 history]"
        self.query_one("#event-plot", Static).update("\n".join([f"plot: {self.plot}{keys}"] + lines))

    def action_plot(self, which: str) -> None:
        self.plot = which
        self._draw_plot()
        if not self.query_one("#event-body").has_class("wide"):
            self.query_one("#event-body").scroll_to_widget(self.query_one("#event-plot"), animate=False)

    def action_back(self) -> None:
        self.app.pop_screen()

    def action_export(self) -> None:
        self.app.export_cdm(self.encounter_id)

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
