"""The manoeuvre trade of one event: burn options by time and direction (the smallest
delta-v meeting the target in each), a plot of Pc against delta-v, and a re-screen of the
picked burn against the run's catalog in a background worker (x cancels)."""

from __future__ import annotations

import datetime as dt
import os
import threading

from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from .. import MANEUVER_CAUTION
from ..display import fmt_pc
from ..maneuver.compare import cleared_text
from .plots import trade_plot
from .widgets import CautionBar

COLUMNS = ("burn UTC", "lead", "dir", "delta-v", "new miss", "radial", "new Pc", "meets")
TARGET_MISS_KM = 1.0


class TradeCancelled(Exception):
    pass


def option_cells(o, ev) -> tuple:
    a = o.approach
    return (ev.iso(o.burn_s, 0)[5:16].replace("T", " "),
            f"{(ev.tca_s - o.burn_s) / ev.primary_period_s:.1f} orb", o.direction,
            f"{o.dv_m_s * 100:.2f} cm/s", f"{a.miss_km * 1000:.0f} m", f"{a.ric_km[0] * 1000:.0f} m",
            fmt_pc(o.pc), "yes" if o.meets else "no")


def rescreen_lines(out: dict) -> list[str]:
    fate = cleared_text(out["cleared"])
    lines = [f"re-screen: {len(out['encounters'])} encounters against {out['catalog_objects']:,} "
             f"objects from the burn ({out['window_days']:.2f} d); the event: {fate}"]
    for key, word in (("created", "NEW"), ("worsened", "WORSE")):
        for e in out[key]:
            lines.append(f"  {word}: {e['secondary_name'] or e['secondary']} {e['tca'][5:16].replace('T', ' ')}Z "
                         f"miss {e['miss_km'] * 1000:.0f} m Pc {fmt_pc(e['pc'])} {e['attention']}")
    if not out["created"] and not out["worsened"]:
        lines.append("  no encounter created or worsened by this burn")
    return lines


class TradeScreen(Screen):
    BINDINGS = [
        Binding("enter", "rescreen", "Re-screen burn", priority=True),
        Binding("x", "cancel", "Cancel"),
        Binding("t", "toggle_target", "Target"),
        Binding("escape,backspace", "back", "Back"),
        Binding("question_mark", "help", "Help"),
        Binding("q", "app.quit", "Quit", show=False),
    ]

    def __init__(self, event_id: int) -> None:
        super().__init__()
        self.event_id = event_id
        self.ctx = None
        self.trade = None
        self.model = None
        self.target_kind = "pc"
        self._cancel: threading.Event | None = None
        self._result_lines: list[str] = []

    def compose(self) -> ComposeResult:
        yield Static("", id="trade-title", markup=False)
        yield Static("", id="trade-status", markup=False)
        yield DataTable(id="trade-table", cursor_type="row", zebra_stripes=False)
        with VerticalScroll(id="trade-body"):
            yield Static("", id="trade-result", markup=False)
            yield Static("", id="trade-plot", markup=False)
            yield Static(MANEUVER_CAUTION, id="trade-caution", markup=False)
        yield CautionBar()
        yield Footer()

    def on_mount(self) -> None:
        self.query_one(DataTable).add_columns(*COLUMNS)
        self._start_trade()

    # ----- the trade
    def _start_trade(self) -> None:
        if self._cancel is not None:
            self.notify("busy: x cancels the work under way", severity="warning")
            return
        self._cancel = threading.Event()
        self.query_one(DataTable).clear()
        self._status("computing the trade ... (x cancels)")
        self._trade_worker(self.target_kind, self._cancel)

    @work(thread=True, exclusive=True, group="trade")
    def _trade_worker(self, kind: str, cancel: threading.Event) -> None:
        from ..errors import ScreenerError
        from ..pipeline import maneuver_run as mr
        from ..store import Store

        def progress(stage, done, total):
            if cancel.is_set():
                raise TradeCancelled()
            self.app.call_from_thread(self._status, f"computing the trade: {done}/{total} burn "
                                                    f"options (x cancels)")
        try:
            store = Store(self.app.store_path, create=False)
            try:
                ctx = mr.event_from_store(store, self.event_id)
            finally:
                store.close()
            model = mr.model_of(ctx)
            target = (mr.parse_target(TARGET_MISS_KM, None, None, 0.0) if kind == "miss" else
                      mr.parse_target(None, ctx.cfg.thresholds.watch_pc, None, 0.0))
            trade = mr.plan(ctx, target, model=model, progress=progress)
        except TradeCancelled:
            self.app.call_from_thread(self._done, "trade cancelled")
        except ScreenerError as exc:
            self.app.call_from_thread(self._done, f"trade failed: {exc}")
        else:
            self.app.call_from_thread(self._show_trade, ctx, trade, model)

    def _show_trade(self, ctx, trade, model) -> None:
        self.ctx, self.trade, self.model = ctx, trade, model
        ev = ctx.event
        self.query_one("#trade-title", Static).update(
            f"Trade: {ev.primary_name or ev.primary_id} x {ev.secondary_name or ev.secondary_id} | "
            f"TCA {ev.iso(ev.tca_s, 0)[5:16].replace('T', ' ')}Z | miss {ev.miss_km * 1000:.0f} m | "
            f"Pc {fmt_pc(ev.pc)} | target {trade.target.describe()}")
        table = self.query_one(DataTable)
        table.clear()
        for k, o in enumerate(trade.options):
            table.add_row(*option_cells(o, ev), key=str(k))
        ch = trade.chosen
        if ch is not None:
            table.move_cursor(row=trade.options.index(ch))
            text = (f"smallest: {ch.dv_m_s * 100:.2f} cm/s {ch.direction} "
                    f"{(ev.tca_s - ch.burn_s) / ev.primary_period_s:.1f} orbits before TCA; "
                    f"Enter re-screens the highlighted burn")
        else:
            text = " ".join(trade.notes) or "no burn meets the target"
        table.focus()
        self._done(text)
        self._draw()

    def _draw(self) -> None:
        if self.trade is None or not self.trade.options:
            self.query_one("#trade-plot", Static).update("\n".join(self.trade.notes) if self.trade else "")
            return
        row = self.query_one(DataTable).cursor_row
        pick = self.trade.options[min(max(row, 0), len(self.trade.options) - 1)]
        mine = [(pts, b == pick.burn_s) for (b, d), pts in self.trade.curves.items()
                if d == pick.direction]
        # start the delta-v axis a little before the first burn that moves Pc by 10 %
        base = self.trade.baseline.pc if self.trade.baseline else 0.0
        moved = [dv for pts, _s in mine for dv, pc, _m in pts if abs(pc - base) > 0.1 * base]
        lo = min(moved) / 3.0 if moved else 0.0
        curves = [([(dv, pc) for dv, pc, _m in pts if dv >= lo], sel) for pts, sel in mine]
        w, h = self.app.size
        self.query_one(DataTable).styles.height = max(6, min(len(self.trade.options) + 1, h // 3))
        target = self.trade.target.value if self.trade.target.kind == "pc" else None
        lines = trade_plot(curves, w - 4, max(8, h - 14), target, pick.dv_m_s)
        self.query_one("#trade-plot", Static).update("\n".join(lines))
        self.query_one("#trade-result", Static).update("\n".join(self._result_lines))

    def on_data_table_row_highlighted(self, _event) -> None:
        self._draw()

    def on_resize(self) -> None:
        self.app.check_size()
        self._draw()

    # ----- the re-screen of the highlighted burn
    def action_rescreen(self) -> None:
        if self.trade is None or not self.trade.options:
            return
        if self._cancel is not None:
            self.notify("busy: x cancels the work under way", severity="warning")
            return
        pick = self.trade.options[self.query_one(DataTable).cursor_row]
        self._cancel = threading.Event()
        self._status(f"re-screening {pick.dv_m_s * 100:.2f} cm/s {pick.direction} against the "
                     f"catalog ... (x cancels)")
        self._rescreen_worker(pick, self._cancel)

    @work(thread=True, exclusive=True, group="trade")
    def _rescreen_worker(self, pick, cancel: threading.Event) -> None:
        from ..errors import ScreenerError
        from ..pipeline import maneuver_run as mr
        from ..screening import Cancelled
        from ..store import Store
        from ..store.trades import save_trade
        from ..workers import spawn_pool

        def progress(stage, done, total):
            self.app.call_from_thread(self._status, f"re-screening: {stage} {done}/{total} "
                                                    f"(x cancels)")

        warnings: list[str] = []
        # the engine runs in a worker process: SGP4's array propagation holds the GIL
        pool = spawn_pool(1)
        try:
            text, oem = mr.burn_oem(self.ctx, pick, self.model)
            out = mr.trade_output(self.trade, pick)
            out["rescreen"] = mr.rescreen(self.ctx, oem, pick.burn_s, 1, warnings.append, progress,
                                          cancel=cancel, executor=pool)
            folder = os.path.join(os.path.dirname(os.path.abspath(self.app.store_path)), "maneuvers")
            os.makedirs(folder, exist_ok=True)
            stamp = dt.datetime.now(dt.timezone.utc).strftime("%Y%m%dT%H%M%SZ")
            path = os.path.join(folder, f"event-{self.event_id}-{stamp}.oem")
            with open(path, "w", encoding="utf-8") as fh:
                fh.write(text)
            store = Store(self.app.store_path)
            try:
                out["trade_id"] = save_trade(store, out, path)
            finally:
                store.close()
        except Cancelled:
            self.app.call_from_thread(self._done, "re-screen cancelled; nothing stored")
        except (ScreenerError, OSError) as exc:
            self.app.call_from_thread(self._done, f"re-screen failed: {exc}")
        else:
            lines = rescreen_lines(out["rescreen"]) + [f"kept as trade {out['trade_id']}; OEM {path}"]
            lines += [f"  note: {w}" for w in warnings]
            self.app.call_from_thread(self._show_rescreen, lines)
        finally:
            pool.shutdown(wait=False, cancel_futures=True)

    def _show_rescreen(self, lines: list[str]) -> None:
        self._result_lines = lines
        self._done(lines[0])
        self._draw()

    # ----- small actions
    def _status(self, text: str) -> None:
        self.query_one("#trade-status", Static).update(text)

    def _done(self, text: str) -> None:
        self._cancel = None
        self._status(text)

    def action_cancel(self) -> None:
        if self._cancel is None:
            self.notify("nothing is running")
            return
        self._cancel.set()
        self._status("cancelling ...")

    def action_toggle_target(self) -> None:
        self.target_kind = "miss" if self.target_kind == "pc" else "pc"
        self._result_lines = []
        self._start_trade()

    def action_back(self) -> None:
        if self._cancel is not None:
            self._cancel.set()
        self.app.pop_screen()

    def action_help(self) -> None:
        from .help import HelpScreen

        self.app.push_screen(HelpScreen("manoeuvre trade", [self, self.app]))
