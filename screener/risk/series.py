"""Series: the recurring minima of one pair inside one screening window, taken together.

A co-orbital or slowly drifting pair meets every orbit; each local minimum of range is an
encounter, but the encounters of one pair share the same two orbits and the same orbit
errors, so their Pc values are strongly correlated.  A series' Pc is therefore the highest Pc
of its encounters (the probability of at least one collision is at least that, and equals it
when the errors are fully correlated); it is never 1 - prod(1 - Pc_i) over the series, which
would count the same orbit error again at every pass.  Series of different secondaries are
treated as independent, and only they are combined into a primary's cumulative risk.

Works on any encounter-like items through accessor functions, so the run summary (engine
encounters), the exports (stored dicts) and the TUI (light store rows) group the same way.
"""

from __future__ import annotations

import dataclasses
from typing import Callable, Generic, Iterable, TypeVar

from .pc import cumulative

T = TypeVar("T")

# A pair is labelled "proximity" (co-orbital) when its passes are slow and recur: the range
# then stays within the screening volume for hours and the encounters are one situation.
PROXIMITY_SPEED_KM_S = 0.1     # the slow-pass limit used for the S flag
PROXIMITY_MIN_PASSES = 3

SERIES_PC_RULE = ("series Pc = the highest Pc of its encounters (one pair's passes share the "
                  "same orbit errors and are not independent)")
CUMULATIVE_RULE = ("cumulative Pc = 1 - prod(1 - series Pc) over a primary's series (different "
                   "secondaries, taken as independent)")


@dataclasses.dataclass
class Series(Generic[T]):
    primary: str
    secondary: str
    members: list[T]          # in TCA order
    worst: T                  # highest Pc, then smallest miss
    pc: float                 # the series' Pc (the worst member's)
    closest_miss_km: float    # smallest miss of the series (its minimum range in the window)
    level_rank: int           # most urgent attention rank of any member (0 = act)
    proximity: bool

    @property
    def count(self) -> int:
        return len(self.members)

    @property
    def key(self) -> str:
        return series_key(self.primary, self.secondary)


def series_key(primary: str, secondary: str) -> str:
    return f"{primary}x{secondary}"


@dataclasses.dataclass(frozen=True)
class Access:
    """How to read the fields grouping needs from one kind of item."""
    primary: Callable
    secondary: Callable
    pc: Callable
    miss_km: Callable
    tca: Callable               # anything that sorts in time order
    speed_km_s: Callable
    level_rank: Callable


def group(items: Iterable[T], acc: Access) -> list[Series[T]]:
    """Series of the items, most urgent first (level, then Pc, then closest miss)."""
    by: dict[tuple[str, str], list[T]] = {}
    for x in items:
        by.setdefault((acc.primary(x), acc.secondary(x)), []).append(x)
    out = []
    for (p, s), members in by.items():
        members.sort(key=acc.tca)
        worst = max(members, key=lambda x: (acc.pc(x) or 0.0, -acc.miss_km(x)))
        slow = sum(1 for x in members if acc.speed_km_s(x) < PROXIMITY_SPEED_KM_S)
        out.append(Series(p, s, members, worst, float(acc.pc(worst) or 0.0),
                          min(acc.miss_km(x) for x in members),
                          min(acc.level_rank(x) for x in members),
                          len(members) >= PROXIMITY_MIN_PASSES and 2 * slow > len(members)))
    out.sort(key=lambda g: (g.level_rank, -g.pc, g.closest_miss_km))
    return out


def cumulative_by_primary(series: Iterable[Series]) -> dict[str, float]:
    """Each primary's risk over the window: 1 - prod(1 - series Pc) over its series."""
    return {k: cumulative([g.pc for g in v]) for k, v in sorted(series_by_primary(series).items())}


def series_by_primary(series: Iterable[Series]) -> dict[str, list[Series]]:
    """Each primary's series in the order given (most urgent first from group())."""
    by: dict[str, list[Series]] = {}
    for g in series:
        by.setdefault(g.primary, []).append(g)
    return by


def _rank_of(level: str | None) -> int:
    from .attention import LEVEL_RANK

    return LEVEL_RANK.get(level or "routine", 2)


# Accessors for the three kinds of items the tool groups.
ENGINE = Access(lambda e: e.primary, lambda e: e.secondary, lambda e: e.pc, lambda e: e.miss_km,
                lambda e: e.tca_s, lambda e: e.relative_speed_km_s,
                lambda e: _rank_of(e.risk.get("attention")))
STORED = Access(lambda d: d["primary"], lambda d: d["secondary"], lambda d: d.get("pc") or 0.0,
                lambda d: d["miss_km"], lambda d: d["tca"], lambda d: d["relative_speed_km_s"],
                lambda d: _rank_of(d.get("attention")))
ROWS = Access(lambda r: r.primary_id, lambda r: r.secondary_id, lambda r: r.pc, lambda r: r.miss_km,
              lambda r: r.tca_unix_s, lambda r: r.relative_speed_km_s, lambda r: r.attention_rank)


def describe_series(g: Series, tca_text: Callable) -> dict:
    """A series as the exports give it (tca_text turns a member into its ISO TCA)."""
    return {"series": g.key, "primary": g.primary, "secondary": g.secondary, "count": g.count,
            "pc": g.pc, "closest_miss_km": g.closest_miss_km, "proximity": g.proximity,
            "first_tca": tca_text(g.members[0]), "worst_tca": tca_text(g.worst),
            "last_tca": tca_text(g.members[-1])}
