"""The ranked encounter list: a virtual list (textual Line API) that renders only the rows in
view, so a run of 50,000 encounters costs no more to show than one of fifty."""

from __future__ import annotations

import time

from rich.segment import Segment
from rich.style import Style
from textual.binding import Binding
from textual.geometry import Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip
from textual.widgets import Static

from ..store.queries import EncounterRow
from .model import RunView, fmt_log10, fmt_pc, fmt_until

TREND_SHORT = {"converging": "conv", "growing": "grow", "stable": "stab", "new": "new"}

# (title, width, right-aligned, cell text, shown from this width, shown below this width)
COLUMNS = (
    ("level", 7, False, lambda r, now: r.attention, 0, 10**6),
    ("Pc", 7, True, lambda r, now: fmt_pc(r.pc), 0, 10**6),
    ("log10", 5, True, lambda r, now: fmt_log10(r.pc), 100, 10**6),
    ("miss km", 7, True, lambda r, now: f"{r.miss_km:.3f}", 0, 10**6),
    ("TCA UTC", 11, False, lambda r, now: r.tca_utc[5:16].replace("T", " "), 0, 100),
    ("TCA UTC", 14, False, lambda r, now: r.tca_utc[5:19].replace("T", " "), 100, 10**6),
    ("to TCA", 6, True, lambda r, now: fmt_until(r.tca_unix_s - now), 0, 10**6),
    ("km/s", 5, True, lambda r, now: f"{r.relative_speed_km_s:.2f}", 0, 10**6),
    ("primary", 9, False, lambda r, now: r.primary_id, 0, 10**6),
    ("secondary", 9, False, lambda r, now: r.secondary_id, 0, 10**6),
    ("trnd", 4, False, lambda r, now: TREND_SHORT.get(r.trend, r.trend), 0, 120),
    ("trend", 10, False, lambda r, now: r.trend, 120, 10**6),
    ("change", 12, False, lambda r, now: r.change, 140, 10**6),
    ("flg", 3, False, lambda r, now: flags(r), 0, 10**6),
    ("secondary name", 16, False, lambda r, now: r.secondary_name, 160, 10**6),
)


def flags(r: EncounterRow) -> str:
    """A: assumed covariance; D: dilution region; S: slow pass under 0.1 km/s (2-D Pc doubtful)."""
    return (("A" if "assumed" in r.covariance_source else "") + ("D" if r.dilution else "")
            + ("S" if r.relative_speed_km_s < 0.1 else ""))


def visible_columns(width: int):
    return [c for c in COLUMNS if c[4] <= width < c[5]]


def format_row(r: EncounterRow | None, now: float, width: int) -> str:
    cells = []
    for title, w, right, fn, _lo, _hi in visible_columns(width):
        text = title if r is None else str(fn(r, now))
        text = text[:w]
        cells.append(text.rjust(w) if right else text.ljust(w))
    return " ".join(cells)[:width].ljust(width)


class ColumnHeader(Static):
    """The list's column titles (kept out of the scrolling region)."""

    def render(self):
        return format_row(None, 0.0, max(1, (self.size.width or 80) - 2))


class EncounterList(ScrollView, can_focus=True):
    BINDINGS = [
        Binding("up,k", "cursor(-1)", "Up", show=False),
        Binding("down,j", "cursor(1)", "Down", show=False),
        Binding("pageup", "page(-1)", "Page up", show=False),
        Binding("pagedown,space", "page(1)", "Page down", show=False),
        Binding("home,g", "jump(0)", "First", show=False),
        Binding("end,G", "jump(-1)", "Last", show=False),
        Binding("enter", "open", "Open event"),
    ]
    COMPONENT_CLASSES = {"encounter-list--cursor", "encounter-list--act", "encounter-list--watch"}

    class Opened(Message):
        def __init__(self, row: EncounterRow) -> None:
            super().__init__()
            self.row = row

    class Moved(Message):
        def __init__(self, row: EncounterRow | None) -> None:
            super().__init__()
            self.row = row

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.model: RunView | None = None
        self.now_unix_s = time.time()
        self.cursor = 0
        self.render_s_max = 0.0          # slowest render_line seen (for the benchmark)

    def set_model(self, model: RunView, now_unix_s: float) -> None:
        self.model = model
        self.now_unix_s = now_unix_s
        self.cursor = 0
        self.model_changed()

    def model_changed(self) -> None:
        n = len(self.model) if self.model else 0
        self.cursor = max(0, min(self.cursor, n - 1))
        self.virtual_size = Size(self.size.width or 80, n)
        self.scroll_to(y=0, animate=False)
        self._keep_cursor_visible()
        self.refresh()
        self.post_message(self.Moved(self.current))

    @property
    def current(self) -> EncounterRow | None:
        if not self.model or not len(self.model):
            return None
        return self.model.row(self.cursor)

    def on_resize(self) -> None:
        self.virtual_size = Size(self.size.width, len(self.model) if self.model else 0)

    def render_line(self, y: int) -> Strip:
        t0 = time.perf_counter()
        width = self.size.width
        pos = int(self.scroll_offset.y) + y
        if not self.model or pos >= len(self.model):
            return Strip([Segment(" " * width)], width)
        r = self.model.row(pos)
        style = self.rich_style
        if pos == self.cursor:
            style = self.get_component_rich_style("encounter-list--cursor")
        elif r.attention == "act":
            style = style + self.get_component_rich_style("encounter-list--act")
        elif r.attention == "watch":
            style = style + self.get_component_rich_style("encounter-list--watch")
        text = format_row(r, self.now_unix_s, width)
        marker = ">" if pos == self.cursor else " "
        strip = Strip([Segment(marker, style), Segment(text[: width - 1], style)], width)
        self.render_s_max = max(self.render_s_max, time.perf_counter() - t0)
        return strip

    def _keep_cursor_visible(self) -> None:
        h = max(1, self.size.height)
        top = int(self.scroll_offset.y)
        if self.cursor < top:
            self.scroll_to(y=self.cursor, animate=False)
        elif self.cursor >= top + h:
            self.scroll_to(y=self.cursor - h + 1, animate=False)

    def _move_to(self, pos: int) -> None:
        n = len(self.model) if self.model else 0
        if not n:
            return
        self.cursor = max(0, min(pos, n - 1))
        self._keep_cursor_visible()
        self.refresh()
        self.post_message(self.Moved(self.current))

    def action_cursor(self, step: int) -> None:
        self._move_to(self.cursor + step)

    def action_page(self, direction: int) -> None:
        self._move_to(self.cursor + direction * max(1, self.size.height - 1))

    def action_jump(self, where: int) -> None:
        self._move_to(0 if where == 0 else (len(self.model) - 1 if self.model else 0))

    def action_open(self) -> None:
        if self.current is not None:
            self.post_message(self.Opened(self.current))

    def on_click(self, event) -> None:
        pos = int(self.scroll_offset.y) + event.y
        if self.model and 0 <= pos < len(self.model):
            if pos == self.cursor:
                self.action_open()
            else:
                self._move_to(pos)


__all__ = ["EncounterList", "ColumnHeader", "format_row", "visible_columns", "Style"]
