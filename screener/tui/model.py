"""The triage list's model: one run's encounters grouped into series (one row per pair's
passes in the window, its worst pass shown), with sort, filters, search and expansion.

Plain Python (no textual), so it is tested without a terminal.  The list widget renders only
the rows in view from `view`, a list of Items; 50,000 encounters group and sort in well under
a second.  Filters apply to encounters first; series are formed from what passes, so "TCA in
the next 24 h" shows each pair's worst pass inside those 24 h.
"""

from __future__ import annotations

import dataclasses

from ..display import fmt_pc
from ..risk.attention import LEVELS
from ..risk.series import ROWS, Series, cumulative_by_primary, group
from ..store.queries import EncounterRow

# Sort keys take (row shown, level rank of the row or its series).
SORTS = {
    "rank": ("level, then Pc, then miss", lambda r, lv: (lv, -r.pc, r.miss_km)),
    "miss": ("miss distance", lambda r, lv: (r.miss_km, -r.pc)),
    "tca": ("TCA", lambda r, lv: (r.tca_unix_s, -r.pc)),
    "speed": ("relative speed", lambda r, lv: (-r.relative_speed_km_s, -r.pc)),
    "primary": ("primary", lambda r, lv: (r.primary_name or r.primary_id, lv, -r.pc)),
    "level": ("attention level", lambda r, lv: (lv, -r.pc)),
}
SORT_ORDER = tuple(SORTS)
WINDOWS_H = (None, 24.0, 72.0, 168.0)   # TCA within this many hours from now; None = all


@dataclasses.dataclass(frozen=True, slots=True)
class Item:
    """One line of the list: a series' head (its worst pass), or one pass of an expanded
    series (member = True), or a pass in the every-pass view (series None)."""
    row: EncounterRow
    series: Series | None = None
    member: bool = False

    @property
    def count(self) -> int:
        return self.series.count if self.series is not None else 1

    @property
    def proximity(self) -> bool:
        return bool(self.series is not None and self.series.proximity)

    @property
    def level_rank(self) -> int:
        if self.series is not None and not self.member:
            return self.series.level_rank
        return self.row.attention_rank


@dataclasses.dataclass
class Filters:
    primary: str | None = None
    level: str | None = None
    window_h: float | None = None
    search: str = ""

    def describe(self, names: dict | None = None) -> str:
        who = (names or {}).get(self.primary) or self.primary
        parts = [f"level {self.level or 'all'}", f"primary {who or 'all'}",
                 f"TCA {'all' if self.window_h is None else f'next {self.window_h:g} h'}"]
        if self.search:
            parts.append(f"search {self.search!r}")
        return ", ".join(parts)


class RunView:
    def __init__(self, rows: list[EncounterRow], now_unix_s: float):
        self.rows = rows
        self.now_unix_s = now_unix_s
        self.sort = "rank"
        self.reverse = False
        self.grouped = True
        self.expanded: set[str] = set()
        self.filters = Filters()
        self.names = {}
        for r in rows:
            self.names.setdefault(r.primary_id, r.primary_name)
            self.names.setdefault(r.secondary_id, r.secondary_name)
        self.primaries = sorted({r.primary_id for r in rows}, key=lambda p: (self.names.get(p) or p, p))
        self.series: list[Series] = []      # of the rows passing the filters
        self.view: list[Item] = []
        self.refresh()

    def _passing(self) -> list[EncounterRow]:
        f = self.filters
        needle = f.search.lower().strip()
        t_hi = None if f.window_h is None else self.now_unix_s + f.window_h * 3600.0
        out = []
        for r in self.rows:
            if f.primary and r.primary_id != f.primary:
                continue
            if f.level and r.attention != f.level:
                continue
            if t_hi is not None and not (self.now_unix_s <= r.tca_unix_s <= t_hi):
                continue
            if needle and needle not in (f"{r.primary_id} {r.primary_name} {r.secondary_id} "
                                         f"{r.secondary_name}").lower():
                continue
            out.append(r)
        return out

    def refresh(self) -> None:
        rows = self._passing()
        key = SORTS[self.sort][1]
        self.series = group(rows, ROWS)
        if not self.grouped:
            by_key = {g.key: g for g in self.series}
            items = [Item(r, by_key[f"{r.primary_id}x{r.secondary_id}"]) for r in rows]
            items.sort(key=lambda it: key(it.row, it.row.attention_rank), reverse=self.reverse)
            self.view = [dataclasses.replace(it, member=True) for it in items]
            return
        heads = sorted(self.series, key=lambda g: key(g.worst, g.level_rank), reverse=self.reverse)
        view = []
        for g in heads:
            view.append(Item(g.worst, g))
            if g.key in self.expanded and g.count > 1:
                view += [Item(r, g, member=True) for r in g.members]
        self.view = view

    def __len__(self) -> int:
        return len(self.view)

    def item(self, pos: int) -> Item:
        return self.view[pos]

    def row(self, pos: int) -> EncounterRow:
        return self.view[pos].row

    def position_of_series(self, key: str) -> int:
        for k, it in enumerate(self.view):
            if it.series is not None and it.series.key == key and not it.member:
                return k
        return 0

    # the actions the screen binds to keys
    def cycle_sort(self) -> None:
        self.sort = SORT_ORDER[(SORT_ORDER.index(self.sort) + 1) % len(SORT_ORDER)]
        self.reverse = False
        self.refresh()

    def flip(self) -> None:
        self.reverse = not self.reverse
        self.refresh()

    def cycle_level(self) -> None:
        opts = (None, *LEVELS)
        self.filters.level = opts[(opts.index(self.filters.level) + 1) % len(opts)]
        self.refresh()

    def cycle_primary(self) -> None:
        opts = (None, *self.primaries)
        self.filters.primary = opts[(opts.index(self.filters.primary) + 1) % len(opts)]
        self.refresh()

    def set_primary(self, primary: str | None) -> None:
        self.filters.primary = primary
        self.refresh()

    def cycle_window(self) -> None:
        self.filters.window_h = WINDOWS_H[(WINDOWS_H.index(self.filters.window_h) + 1) % len(WINDOWS_H)]
        self.refresh()

    def set_search(self, text: str) -> None:
        self.filters.search = text
        self.refresh()

    def toggle_grouped(self) -> None:
        self.grouped = not self.grouped
        self.refresh()

    def toggle_expanded(self, key: str) -> None:
        self.expanded.symmetric_difference_update({key})
        self.refresh()

    def describe_sort(self) -> str:
        return SORTS[self.sort][0] + (" (reversed)" if self.reverse else "")

    def describe_rows(self) -> str:
        n_rows = sum(1 for it in self.view if not it.member) if self.grouped else len(self.view)
        total = len(self.rows)
        if self.grouped:
            return f"{n_rows} series of {len(self.series)}, {sum(g.count for g in self.series)} of {total} passes"
        return f"{len(self.view)} of {total} passes"

    def cumulative(self, primary: str) -> float:
        return cumulative_by_primary(g for g in self.series if g.primary == primary).get(primary, 0.0)


def fmt_until(dt_s: float) -> str:
    """Time to TCA: +2d05h, +05:12 (h:m); 'past' once the TCA has gone by."""
    if dt_s < 0:
        return "past"
    s = dt_s
    if s >= 86400:
        return f"+{int(s // 86400)}d{int(s % 86400 // 3600):02d}h"
    return f"+{int(s // 3600):02d}:{int(s % 3600 // 60):02d}"


def fmt_ago(dt_s: float) -> str:
    """'in 5 h 12 min' / '40 min ago (past)' for the event view."""
    s = abs(dt_s)
    text = (f"{int(s // 86400)} d {int(s % 86400 // 3600)} h" if s >= 86400 else
            f"{int(s // 3600)} h {int(s % 3600 // 60)} min")
    return f"in {text}" if dt_s >= 0 else f"{text} ago (past)"


def summary_line(primary, primary_name, secondary, secondary_name, tca, miss_km, speed_km_s, pc,
                 attention, covariance_source) -> str:
    """The one-line event summary the copy key puts on the clipboard."""
    from ..display import fmt_speed

    return (f"{primary_name or primary} ({primary}) x {secondary_name or secondary} ({secondary}) "
            f"TCA {tca} miss {miss_km:.3f} km v {fmt_speed(speed_km_s)} Pc {fmt_pc(pc)} "
            f"[{attention}; {covariance_source}] - advisory only")
