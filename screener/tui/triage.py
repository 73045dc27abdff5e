"""The triage screen: the latest run's encounters, ranked, with sort, filters and search;
starts background screenings; exports and copies the selected event."""

from __future__ import annotations

import os
import threading

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import Footer, Input, Static

from ..risk.attention import LEVELS
from ..risk.agreement import rule_of
from ..store import queries
from ..store.queries import thresholds_of
from ..store.received import with_received
from ..workers import ENGINE_MODULES, spawn_pool
from .encounter_list import ColumnHeader, EncounterList
from .model import RunView, summary_line
from .widgets import CautionBar


def run_line(info, counts: dict, width: int) -> str:
    """Series by level, then which run this is: its name, when it was made, the window and
    (where the configuration pinned one) the catalog's as-of time."""
    made = info.started_utc[5:16].replace("T", " ")
    text = (" ".join(f"{lv} {counts[lv]}" for lv in LEVELS) + " series"
            + f" | run {info.id} {info.name}, made {made}Z"
            + f" | window {info.window_start_utc[5:16].replace('T', ' ')}Z +{info.window_days:g}d")
    as_of = info.config.get("catalog_as_of")
    if as_of:
        text += f" | catalog as of {as_of}"
    if width >= 140:
        text += f" | {info.mode}, {info.volume}"
    return text


def stored_text(out) -> str:
    """The status line after a background screening was stored."""
    from ..display import plural
    from ..risk.series import ENGINE, group

    c = out.diff.counts()
    n = len(out.result.encounters)
    since = (f"since run {out.diff.previous_run_id}: {c['new']} new, {c['escalated']} escalated, "
             f"{c['gone']} gone" if out.diff.previous_run_id is not None else "first run of this name")
    return (f"run {out.run_id} stored: {plural(n, 'pass', 'passes')} in "
            f"{plural(len(group(out.result.encounters, ENGINE)), 'series', 'series')}; {since}")


def one_line(r) -> str:
    """The one-line event summary that y copies."""
    return summary_line(r.primary_id, r.primary_name, r.secondary_id, r.secondary_name, r.tca_utc,
                        r.miss_km, r.relative_speed_km_s, r.pc, r.attention, r.covariance_source)


class TriageScreen(Screen):
    BINDINGS = [
        Binding("question_mark", "help", "Help"),
        Binding("f", "fleet", "Fleet"),
        Binding("a", "model('toggle_grouped')", "Series/passes"),
        Binding("l", "model('cycle_level')", "Level"),
        Binding("p", "model('cycle_primary')", "Primary"),
        Binding("t", "model('cycle_window')", "TCA window", show=False),
        Binding("s", "model('cycle_sort')", "Sort", show=False),
        Binding("v", "model('flip')", "Reverse sort", show=False),
        Binding("slash", "search", "Search"),
        Binding("escape", "clear", "Clear filters", show=False),
        Binding("n", "new_run", "New screening", show=False),
        Binding("x", "cancel_run", "Cancel screening", show=False),
        Binding("e", "export", "Export CDM", show=False),
        Binding("y", "copy", "Copy line", show=False),
        Binding("left_square_bracket", "run_step(-1)", "Older run", show=False),
        Binding("right_square_bracket", "run_step(1)", "Newer run", show=False),
        Binding("q", "app.quit", "Quit"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.run_info = None
        self.model: RunView | None = None
        self._cancel: threading.Event | None = None

    def compose(self) -> ComposeResult:
        yield Static("", id="run-line", markup=False)
        yield Static("", id="filter-line", markup=False)
        yield Input(placeholder="search ids and names; Enter or Esc returns to the list", id="search")
        yield ColumnHeader(id="columns")
        yield EncounterList(id="encounters")
        yield Static("", id="status", markup=False)
        yield CautionBar()
        yield Footer()

    def on_mount(self) -> None:
        self.query_one("#search", Input).display = False
        self.load_run(None)
        self.query_one(EncounterList).focus()

    def on_resize(self) -> None:
        self.app.check_size()

    # ----- data
    def load_run(self, run_id: int | None) -> None:
        store = self.app.open_store()
        lst = self.query_one(EncounterList)
        if store is None:
            self.run_info, self.model = None, RunView([], self.app.now_unix_s())
            lst.set_model(self.model, self.app.now_unix_s())
            if os.path.exists(self.app.store_path):
                text = (f"{self.app.store_path} is not a usable screener store "
                        f"({self.app.store_problem or 'unreadable'}). Give another with --store.")
            else:
                text = (f"No store at {self.app.store_path}. Start a screening with n (needs "
                        f"--config), or run `screener run --config FILE`.")
            self.query_one("#run-line", Static).update(Text(text))
            self._update_filter_line()
            return
        info = queries.run(store, run_id)
        if info is None:
            self.run_info, self.model = None, RunView([], self.app.now_unix_s())
            lst.set_model(self.model, self.app.now_unix_s())
            self.query_one("#run-line", Static).update(f"The store {store.path} holds no runs yet.")
            self._update_filter_line()
            return
        rows = with_received(store, queries.encounter_rows(store, info.id), thresholds_of(info),
                             info.config.get("members", {}), info.window_start_unix_s,
                             rule_of(info.config))
        self.run_info = info
        old = self.model
        self.model = RunView(rows, self.app.now_unix_s())
        if old is not None and old.rows:
            self.model.sort, self.model.reverse, self.model.filters = old.sort, old.reverse, old.filters
            self.model.refresh()
        lst.set_model(self.model, self.app.now_unix_s())
        self._update_run_line()
        self._update_filter_line()

    def _update_run_line(self) -> None:
        info, m = self.run_info, self.model
        if info is None or m is None:
            return
        all_series = m.series if not any(vars(m.filters).values()) else None
        if all_series is None:
            from ..risk.series import ROWS, group

            all_series = group(m.rows, ROWS)
        counts = {lv: sum(1 for g in all_series if LEVELS[g.level_rank] == lv) for lv in LEVELS}
        self.query_one("#run-line", Static).update(run_line(info, counts, self.app.size.width))

    def _update_filter_line(self) -> None:
        m = self.model
        text = (f"{m.describe_rows()} | {m.filters.describe(m.names)} | sort {m.describe_sort()}"
                if m else "")
        if m and m.filters.primary:
            from ..display import fmt_pc

            p = m.filters.primary
            text = (f"{m.names.get(p) or p} cumulative Pc {fmt_pc(m.cumulative(p))} over "
                    f"{sum(1 for g in m.series if g.primary == p)} series | " + text)
        self.query_one("#filter-line", Static).update(text)

    def _changed(self) -> None:
        self.query_one(EncounterList).model_changed()
        self._update_filter_line()
        self._update_run_line()

    # ----- list actions
    def action_model(self, op: str) -> None:
        """Sort and filter keys: one RunView operation each (see BINDINGS)."""
        getattr(self.model, op)()
        self._changed()

    def action_expand(self, open_: bool) -> None:
        """Show (or hide) every pass of the series under the cursor, below its head row."""
        lst = self.query_one(EncounterList)
        it = lst.current_item
        if it is None or it.series is None or not self.model.grouped:
            return
        key = it.series.key
        if it.series.count == 1:
            if open_:
                self.notify("this series has one pass", timeout=3)
            return
        if (key in self.model.expanded) != open_:
            self.model.toggle_expanded(key)
            lst.model_changed()
            lst._move_to(self.model.position_of_series(key))
            self._update_filter_line()

    def action_fleet(self) -> None:
        from .fleet_view import FleetScreen

        if self.model is None or not self.model.rows:
            self.notify("no run to summarise", severity="warning")
            return

        def chosen(primary):
            if primary is not None:
                self.model.set_primary(primary)
                self._changed()

        self.app.push_screen(FleetScreen(self.model.rows, self.model.names), chosen)

    def action_search(self) -> None:
        box = self.query_one("#search", Input)
        box.display = True
        box.value = self.model.filters.search
        box.focus()

    @on(Input.Changed, "#search")
    def _search_changed(self, event: Input.Changed) -> None:
        self.model.set_search(event.value)
        self._changed()

    @on(Input.Submitted, "#search")
    def _search_done(self, event: Input.Submitted) -> None:
        self._close_search()

    def _close_search(self) -> None:
        box = self.query_one("#search", Input)
        box.display = bool(self.model.filters.search)
        self.query_one(EncounterList).focus()

    def action_clear(self) -> None:
        box = self.query_one("#search", Input)
        if box.has_focus:
            self._close_search()
            return
        from .model import Filters

        self.model.filters = Filters()
        box.value = ""
        box.display = False
        self.model.refresh()
        self._changed()

    def action_run_step(self, step: int) -> None:
        store = self.app.open_store()
        if store is None or self.run_info is None:
            return
        ids = [r["id"] for r in store.conn.execute("SELECT id FROM runs ORDER BY id")]
        k = ids.index(self.run_info.id) + step
        if 0 <= k < len(ids):
            self.load_run(ids[k])
        else:
            self.notify("no older run" if step < 0 else "this is the newest run")

    @on(EncounterList.Opened)
    def _open(self, event: EncounterList.Opened) -> None:
        from .event_view import EventScreen
        from .received_view import ReceivedScreen

        if event.row.source == "received":
            self.app.push_screen(ReceivedScreen(event.row.id, thresholds_of(self.run_info)))
        else:
            self.app.push_screen(EventScreen(event.row.id))

    def action_help(self) -> None:
        from .help import HelpScreen

        self.app.push_screen(HelpScreen("encounter list", [self, EncounterList, self.app]))

    def action_export(self) -> None:
        r = self.query_one(EncounterList).current
        if r is None:
            self.notify("nothing selected", severity="warning")
            return
        if r.source == "received":
            self.app.write_received_row(r.id)
        else:
            self.app.export_cdm(r.id)

    def action_copy(self) -> None:
        r = self.query_one(EncounterList).current
        if r is None:
            return
        line = one_line(r)
        self.app.copy_to_clipboard(line)
        self.notify(f"copied: {line}", timeout=6, markup=False)

    # ----- background screening
    def action_new_run(self) -> None:
        if self._cancel is not None:
            self.notify("a screening is already running (x cancels it)", severity="warning")
            return
        cfg = self.app.screening_config()
        if cfg is None:
            return
        self._cancel = threading.Event()
        self._status(f"screening {cfg.name}: starting (x cancels)")
        self._screen_worker(cfg, self._cancel)

    def action_cancel_run(self) -> None:
        if self._cancel is None:
            self.notify("no screening is running")
            return
        self._cancel.set()
        self._status("cancelling after the current task ...")

    def _status(self, text: str) -> None:
        self.query_one("#status", Static).update(text)

    @work(thread=True, exclusive=True, group="screening")
    def _screen_worker(self, cfg, cancel: threading.Event) -> None:
        from ..errors import ScreenerError
        from ..pipeline import execute
        from ..screening import Cancelled
        from ..store import Store

        def progress(stage, done, total):
            self.app.call_from_thread(self._status, f"screening {cfg.name}: {stage} {done}/{total} "
                                                    f"(x cancels)")

        # The engine always runs in worker processes here, even for workers = 1: SGP4's array
        # propagation holds the GIL, and in this process it would stall the UI.
        pool = spawn_pool(max(1, cfg.workers), preload=ENGINE_MODULES)
        try:
            store = Store(self.app.store_path)
            try:
                out = execute(cfg, store=store, progress=progress, cancel=cancel, executor=pool)
            finally:
                store.close()
        except Cancelled:
            self.app.call_from_thread(self._finished, None, "screening cancelled; nothing stored")
        except ScreenerError as exc:
            self.app.call_from_thread(self._finished, None, f"screening failed: {exc}")
        else:
            self.app.call_from_thread(self._finished, out.run_id, stored_text(out))
        finally:
            pool.shutdown(wait=False, cancel_futures=True)

    def _finished(self, run_id: int | None, text: str) -> None:
        self._cancel = None
        self._status(text)
        self.notify(text, severity="information" if run_id else "warning", markup=False)
        if run_id is not None:
            self.app.close_store()
            self.load_run(run_id)
