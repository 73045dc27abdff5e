"""The triage list's model: one run's encounter rows with sort, filters and search.

Plain Python (no textual), so it is tested without a terminal.  The list widget renders only
the rows in view from `view`, an index list into `rows`; 50,000 rows sort in tens of ms.
"""

from __future__ import annotations

import dataclasses
import math

from ..risk.attention import LEVELS
from ..store.queries import EncounterRow

SORTS = {
    "rank": ("Pc, then miss", lambda r: (-r.pc, r.miss_km)),
    "miss": ("miss distance", lambda r: (r.miss_km, -r.pc)),
    "tca": ("TCA", lambda r: (r.tca_unix_s, -r.pc)),
    "speed": ("relative speed", lambda r: (-r.relative_speed_km_s, -r.pc)),
    "primary": ("primary", lambda r: (r.primary_id, -r.pc)),
    "level": ("attention level", lambda r: (r.attention_rank, -r.pc)),
}
SORT_ORDER = tuple(SORTS)
WINDOWS_H = (None, 24.0, 72.0, 168.0)   # TCA within this many hours from now; None = all


@dataclasses.dataclass
class Filters:
    primary: str | None = None
    level: str | None = None
    window_h: float | None = None
    search: str = ""

    def describe(self) -> str:
        parts = [f"level {self.level or 'all'}", f"primary {self.primary or 'all'}",
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
        self.filters = Filters()
        self.primaries = sorted({r.primary_id for r in rows})
        self.view: list[int] = []
        self.refresh()

    def refresh(self) -> None:
        f = self.filters
        needle = f.search.lower().strip()
        t_hi = None if f.window_h is None else self.now_unix_s + f.window_h * 3600.0
        idx = []
        for k, r in enumerate(self.rows):
            if f.primary and r.primary_id != f.primary:
                continue
            if f.level and r.attention != f.level:
                continue
            if t_hi is not None and not (self.now_unix_s <= r.tca_unix_s <= t_hi):
                continue
            if needle and needle not in (f"{r.primary_id} {r.primary_name} {r.secondary_id} "
                                         f"{r.secondary_name}").lower():
                continue
            idx.append(k)
        key = SORTS[self.sort][1]
        rows = self.rows
        idx.sort(key=lambda k: key(rows[k]), reverse=self.reverse)
        self.view = idx

    def __len__(self) -> int:
        return len(self.view)

    def row(self, pos: int) -> EncounterRow:
        return self.rows[self.view[pos]]

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

    def cycle_window(self) -> None:
        self.filters.window_h = WINDOWS_H[(WINDOWS_H.index(self.filters.window_h) + 1) % len(WINDOWS_H)]
        self.refresh()

    def set_search(self, text: str) -> None:
        self.filters.search = text
        self.refresh()

    def describe_sort(self) -> str:
        return SORTS[self.sort][0] + (" (reversed)" if self.reverse else "")


def fmt_pc(pc: float) -> str:
    return f"{pc:.1e}" if pc > 0 else "0"


def fmt_log10(pc: float) -> str:
    return f"{math.log10(pc):.1f}" if pc > 0 else "-inf"


def fmt_until(dt_s: float) -> str:
    """Time to TCA: +2d05h, +05:12 (h:m), -00:40 when already past."""
    sign = "-" if dt_s < 0 else "+"
    s = abs(dt_s)
    if s >= 86400:
        return f"{sign}{int(s // 86400)}d{int(s % 86400 // 3600):02d}h"
    return f"{sign}{int(s // 3600):02d}:{int(s % 3600 // 60):02d}"


def summary_line(primary, primary_name, secondary, secondary_name, tca, miss_km, speed_km_s, pc,
                 attention, covariance_source) -> str:
    """The one-line event summary the copy key puts on the clipboard."""
    return (f"{primary} ({primary_name}) x {secondary} ({secondary_name}) TCA {tca} "
            f"miss {miss_km:.3f} km v {speed_km_s:.2f} km/s Pc {fmt_pc(pc)} "
            f"[{attention}; {covariance_source}] - advisory only")
