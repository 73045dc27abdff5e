"""An event known only from received CDMs (no pass of ours matches the pair and TCA): the
latest message's geometry and Pc, the messages over time and their trend, the level they set."""

from __future__ import annotations

import json

from textual.binding import Binding
from textual.widgets import Static

from ..display import fmt_pc
from ..store.received import thread_of_row
from .event_view import EventLayout, received_text
from .model import fmt_ago, summary_line
from .plots import received_plot


def received_facts(msgs: list[dict], thresholds, now_unix_s: float) -> str:
    """What the latest message says, what we make of it, and why this event is not ours."""
    m = msgs[-1]
    data = json.loads(m["data_json"]) if m.get("data_json") else {}
    rtn = data.get("relative_position_rtn") or {}
    level, why = thresholds.level(m["pc"], m["pc_max"], bool(m["dilution"]))
    theirs = fmt_pc(m["pc_sender"]) if m["pc_sender"] is not None else "not given"
    lines = [
        f"TCA {m['tca_utc']}  ({fmt_ago(m['tca_unix_s'] - now_unix_s)})",
        f"miss {m['miss_km'] * 1e3:.1f} m (from the message's states)"
        + (f":  radial {rtn['r_m']:.1f} m, in-track {rtn['t_m']:.1f} m, cross-track {rtn['n_m']:.1f} m"
           if {"r_m", "t_m", "n_m"} <= set(rtn) else ""),
        f"relative speed {data.get('relative_speed_km_s', 0.0):.3f} km/s",
        f"object 1 {m['object1_name'] or m['object1_id']} ({m['object1_id']}); object 2 "
        f"{m['object2_name'] or m['object2_id']} ({m['object2_id']})",
        "",
        f"Pc ours {fmt_pc(m['pc'], 2)} by {data.get('pc_method', '?')}, hard-body radius "
        f"{m['hbr_m']:g} m; sender's {theirs}"
        + (f" ({data['pc_sender_method']})" if data.get("pc_sender_method") else ""),
        f"  max 2-D Pc, covariance scaled {fmt_pc(m['pc_max'])}"
        + ("; DILUTION REGION: a low Pc here is not reassuring" if m["dilution"] else ""),
        f"  combined sigma in the encounter plane {data.get('sigma_major_m', 0.0):.0f} m x "
        f"{data.get('sigma_minor_m', 0.0):.0f} m (the message's own covariances)",
        f"  attention {level}: {why}; set by received CDM {m['message_id']} (no event of ours)",
        "",
        "RECEIVED ONLY: our screening has no pass of this pair within the event tolerance of "
        "this TCA. Check that both objects are in the catalog and the window, and compare the "
        "element sets' ages.",
        "",
    ]
    return "\n".join(lines + received_text(msgs))


class ReceivedScreen(EventLayout):
    BINDINGS = [
        Binding("escape,backspace", "back", "Back"),
        Binding("question_mark", "help", "Help"),
        Binding("w", "write", "Write CDM"),
        Binding("y", "copy", "Copy line", show=False),
        Binding("q", "app.quit", "Quit", show=False),
    ]

    def __init__(self, row_id: int, thresholds) -> None:
        super().__init__()
        self.row_id = row_id
        self.thresholds = thresholds
        self.msgs: list[dict] = []

    def on_mount(self) -> None:
        self.msgs = thread_of_row(self.app.open_store(), self.row_id)
        if not self.msgs:
            self.query_one("#event-title", Static).update("this received event is no longer in the store")
            return
        m = self.msgs[-1]
        level, _why = self.thresholds.level(m["pc"], m["pc_max"], bool(m["dilution"]))
        self.query_one("#event-title", Static).update(
            f"{m['object1_name'] or m['object1_id']} x {m['object2_name'] or m['object2_id']} | "
            f"{level} (received only) | Pc {fmt_pc(m['pc'])} | miss {m['miss_km'] * 1e3:.0f} m | "
            f"{m['tca_utc'][5:16].replace('T', ' ')}Z | {len(self.msgs)} received CDMs")
        self.query_one("#event-facts", Static).update(
            received_facts(self.msgs, self.thresholds, self.app.now_unix_s()))
        self._draw_plot()
        self.query_one("#event-body").focus()

    def on_resize(self) -> None:
        self.app.check_size()
        if self.msgs:
            self._draw_plot()

    def _draw_plot(self) -> None:
        w, _h = self.app.size
        self.query_one("#event-plot", Static).update(
            "\n".join(["plot: received CDMs"] + received_plot(self.msgs, w - 4, 14)))

    def action_back(self) -> None:
        self.app.pop_screen()

    def action_write(self) -> None:
        if self.msgs:
            self.app.write_received(self.msgs[-1]["message_id"])

    def action_copy(self) -> None:
        if not self.msgs:
            return
        m = self.msgs[-1]
        data = json.loads(m["data_json"]) if m.get("data_json") else {}
        level, _why = self.thresholds.level(m["pc"], m["pc_max"], bool(m["dilution"]))
        line = summary_line(m["object1_id"], m["object1_name"], m["object2_id"], m["object2_name"],
                            m["tca_utc"], m["miss_km"], float(data.get("relative_speed_km_s") or 0.0),
                            m["pc"], level, "received CDM")
        self.app.copy_to_clipboard(line)
        self.notify(f"copied: {line}", timeout=6, markup=False)

    def action_help(self) -> None:
        from .help import HelpScreen

        self.app.push_screen(HelpScreen("received-only event", [self, self.app]))
