"""The ranked encounter list: a virtual list (textual Line API) that renders only the rows in
view, so a run of 50,000 encounters costs no more to show than one of fifty."""

from __future__ import annotations

import dataclasses
import time
from typing import Callable

from rich.segment import Segment
from rich.style import Style
from textual.binding import Binding
from textual.geometry import Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip
from textual.widgets import Static

from ..display import fmt_log10, fmt_pc, fmt_speed
from ..risk.attach import SLOW_PASS_KM_S
from ..risk.attention import LEVELS
from ..risk.flags import encounter_flags, with_proximity
from ..store.queries import EncounterRow
from .model import Item, RunView, fmt_until

TREND_SHORT = {"converging": "conv", "growing": "grow", "stable": "stab", "new": "new"}
SOURCE_SHORT = {"ours": "ours", "both": "both", "received": "recv"}   # where the event comes from
BIG = 10**6


def _name(name: str, oid: str) -> str:
    return name or oid


def fmt_km_s(v_km_s: float) -> str:
    """Relative speed in km/s in at most 6 characters (the narrow list's column)."""
    if not v_km_s == v_km_s:
        return "?"
    return f"{v_km_s:.1f}" if v_km_s >= 10 else f"{v_km_s:.2f}" if v_km_s >= 1 else f"{v_km_s:.3f}"


def _source(it: Item, now: float) -> str:
    return SOURCE_SHORT.get(it.row.source, it.row.source)


def _count(it: Item, now: float) -> str:
    """A series' pass count; a pass of an expanded series shows a tree mark instead; an event
    known only from received CDMs has no passes of ours (0)."""
    if it.row.source == "received":
        return "0"
    if it.member:
        return "\u2514" if it.series is not None and it.series.count > 1 else "1"
    return str(it.count)


def _miss(it: Item, now: float) -> str:
    """Miss distance in whole metres (the list's unit; the event view gives decimals)."""
    return f"{it.row.miss_km * 1e3:.0f}"


def item_flags(it: Item) -> str:
    """The stored flags (A D S, risk/flags.py) plus P for a proximity series."""
    return with_proximity(row_flags(it.row), it.proximity)


def row_flags(r: EncounterRow) -> str:
    if r.flags is not None:
        return r.flags
    # stored before schema 3 kept flags: the same rule from the list columns
    return encounter_flags("assumed" in r.covariance_source, bool(r.dilution),
                           False if r.relative_speed_km_s < SLOW_PASS_KM_S else None)


@dataclasses.dataclass(frozen=True)
class Column:
    title: str
    width: int
    right: bool
    cell: Callable[[Item, float], str]
    lo: int = 0            # shown from this list width ...
    hi: int = BIG          # ... and below this one


COLUMNS = (
    Column("level", 7, False, lambda it, now: LEVELS[it.level_rank]),
    Column("Pc", 7, True, lambda it, now: fmt_pc(it.row.pc)),
    Column("log10", 5, True, lambda it, now: fmt_log10(it.row.pc), 100),
    Column("miss m", 6, True, _miss),
    Column("TCA UTC", 8, False, lambda it, now: it.row.tca_utc[8:16].replace("T", " "), 0, 90),
    Column("TCA UTC", 11, False, lambda it, now: it.row.tca_utc[5:16].replace("T", " "), 90, 100),
    Column("TCA UTC", 14, False, lambda it, now: it.row.tca_utc[5:19].replace("T", " "), 100),
    Column("to TCA", 6, True, lambda it, now: fmt_until(it.row.tca_unix_s - now)),
    Column("v km/s", 6, True, lambda it, now: fmt_km_s(it.row.relative_speed_km_s), 0, 90),
    Column("rel v", 9, True, lambda it, now: fmt_speed(it.row.relative_speed_km_s), 90),
    Column("primary", 10, False, lambda it, now: _name(it.row.primary_name, it.row.primary_id), 0, 90),
    Column("primary", 11, False, lambda it, now: _name(it.row.primary_name, it.row.primary_id), 90, 100),
    Column("primary", 12, False, lambda it, now: _name(it.row.primary_name, it.row.primary_id), 100),
    Column("secondary", 9, False, lambda it, now: _name(it.row.secondary_name, it.row.secondary_id), 0, 90),
    Column("secondary", 10, False, lambda it, now: _name(it.row.secondary_name, it.row.secondary_id), 90, 100),
    Column("secondary", 14, False, lambda it, now: _name(it.row.secondary_name, it.row.secondary_id), 100),
    Column("n", 3, True, _count),
    Column("flg", 5, False, lambda it, now: item_flags(it)),
    Column("src", 4, False, _source, 110, 120),
    Column("src", 4, False, _source, 140),
    Column("sec. id", 9, False, lambda it, now: it.row.secondary_id, 120),
    Column("trend", 10, False, lambda it, now: it.row.trend, 120),
    Column("change", 12, False, lambda it, now: it.row.change, 140),
    Column("prim. id", 10, False, lambda it, now: it.row.primary_id, 160),
)
MARKER_W = 1           # column 0 holds the cursor marker (">" on the cursor row)


def visible_columns(width: int) -> list[Column]:
    """The columns shown in a list `width` characters wide (marker included), in order."""
    return [c for c in COLUMNS if c.lo <= width < c.hi]


def layout(width: int) -> list[tuple[Column, int]]:
    """(column, first character) of each visible column: titles and rows both come from
    this one layout, so a title always stands over its column."""
    out, x = [], MARKER_W
    for c in visible_columns(width):
        if x + c.width > width:
            break
        out.append((c, x))
        x += c.width + 1
    return out


def format_line(it: Item | None, now: float, width: int, marker: str = " ") -> str:
    """One list line of exactly `width` characters: the marker, then each column's cell (the
    titles when `it` is None)."""
    chars = [marker[:1] or " "]
    for c, x in layout(width):
        text = c.title if it is None else str(c.cell(it, now))
        text = text[:c.width]
        chars.append(" " * (x - len("".join(chars))))
        chars.append(text.rjust(c.width) if c.right else text.ljust(c.width))
    return "".join(chars)[:width].ljust(width)


class ColumnHeader(Static):
    """The list's column titles (kept out of the scrolling region), laid out for the list's
    own width, so a title stands over its column whether or not a scrollbar is shown."""

    def render(self):
        try:
            width = self.screen.query_one(EncounterList).size.width
        except Exception:  # noqa: BLE001 - before the list is mounted
            width = 0
        width = width or max(1, self.size.width)
        return format_line(None, 0.0, width)


class EncounterList(ScrollView, can_focus=True):
    BINDINGS = [
        Binding("up,k", "cursor(-1)", "Up", show=False),
        Binding("down,j", "cursor(1)", "Down", show=False),
        Binding("pageup", "page(-1)", "Page up", show=False),
        Binding("pagedown,space", "page(1)", "Page down", show=False),
        Binding("home,g", "jump(0)", "First", show=False),
        Binding("end,G", "jump(-1)", "Last", show=False),
        Binding("enter", "open", "Open event"),
        Binding("right,plus", "screen.expand(True)", "Expand series (every pass)", show=False),
        Binding("left,minus", "screen.expand(False)", "Collapse series", show=False),
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

    @property
    def current_item(self) -> Item | None:
        if not self.model or not len(self.model):
            return None
        return self.model.item(self.cursor)

    def on_resize(self) -> None:
        self.virtual_size = Size(self.size.width, len(self.model) if self.model else 0)
        self._refresh_header()

    def _refresh_header(self) -> None:
        for h in self.screen.query(ColumnHeader):
            h.refresh()

    def watch_show_vertical_scrollbar(self, *_):
        self._refresh_header()

    def render_line(self, y: int) -> Strip:
        t0 = time.perf_counter()
        width = self.size.width
        pos = int(self.scroll_offset.y) + y
        if not self.model or pos >= len(self.model):
            return Strip([Segment(" " * width, self.rich_style)], width)
        it = self.model.item(pos)
        r = it.row
        style = self.rich_style
        if pos == self.cursor:
            style = self.get_component_rich_style("encounter-list--cursor")
        elif r.attention == "act":
            style = style + self.get_component_rich_style("encounter-list--act")
        elif r.attention == "watch":
            style = style + self.get_component_rich_style("encounter-list--watch")
        text = format_line(it, self.now_unix_s, width, ">" if pos == self.cursor else " ")
        strip = Strip([Segment(text, style)], width)
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


__all__ = ["EncounterList", "ColumnHeader", "format_line", "layout", "visible_columns", "Style"]
