"""Per-spacecraft summary: each primary's series by level, its worst series and its cumulative
risk over independent series.  Enter lists that spacecraft's series; Esc goes back."""

from __future__ import annotations

import time

from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from ..display import fmt_pc
from ..risk.attention import LEVELS
from ..risk.series import CUMULATIVE_RULE, ROWS, cumulative_by_primary, group, series_by_primary
from .model import fmt_until
from .widgets import CautionBar


def fleet_rows(rows, names: dict, now_unix_s: float) -> list[tuple]:
    """(primary id, cells...) per primary, most urgent first."""
    series = group(rows, ROWS)
    cum = cumulative_by_primary(series)
    per = series_by_primary(series)
    out = []
    for pid in cum:
        mine = per[pid]
        worst = mine[0]
        w = worst.worst
        counts = [sum(1 for g in mine if g.level_rank == k) for k in range(len(LEVELS))]
        out.append((worst.level_rank, -cum[pid], pid, (
            names.get(pid) or pid, pid, LEVELS[worst.level_rank], *map(str, counts), fmt_pc(cum[pid]),
            w.secondary_name or w.secondary_id, w.tca_utc[5:16].replace("T", " "),
            fmt_until(w.tca_unix_s - now_unix_s), fmt_pc(worst.pc))))
    out.sort(key=lambda t: t[:2])
    return [(t[2], t[3]) for t in out]


COLUMNS = ("spacecraft", "id", "worst", *LEVELS, "cum. Pc", "worst with", "TCA UTC", "to TCA", "Pc")


class FleetScreen(Screen):
    BINDINGS = [
        Binding("enter", "choose", "List its series"),
        Binding("escape,f", "back", "Back"),
        Binding("question_mark", "help", "Help"),
        Binding("q", "app.quit", "Quit", show=False),
    ]

    def __init__(self, rows, names: dict) -> None:
        super().__init__()
        self._rows = rows
        self._names = names
        self._ids: list[str] = []

    def compose(self) -> ComposeResult:
        yield Static(f"Per spacecraft: series by level, worst series; {CUMULATIVE_RULE}",
                     id="fleet-title", markup=False)
        yield DataTable(id="fleet-table", cursor_type="row", zebra_stripes=False)
        yield CautionBar()
        yield Footer()

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        table.add_columns(*COLUMNS)
        now = getattr(self.app, "now_unix_s", time.time)()
        for pid, cells in fleet_rows(self._rows, self._names, now):
            self._ids.append(pid)
            table.add_row(*cells, key=pid)
        table.focus()

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.dismiss(event.row_key.value)

    def action_choose(self) -> None:
        table = self.query_one(DataTable)
        if self._ids:
            self.dismiss(self._ids[table.cursor_row])

    def action_back(self) -> None:
        self.dismiss(None)

    def action_help(self) -> None:
        from .help import HelpScreen

        self.app.push_screen(HelpScreen("fleet summary", [self, self.app]))
