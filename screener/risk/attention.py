"""Attention levels: user-set Pc thresholds sort encounters for triage."""

from __future__ import annotations

import dataclasses

ACT = "act"          # plan a response (coordinate, size a manoeuvre)
WATCH = "watch"      # follow closely as new element sets arrive
ROUTINE = "routine"  # on record, nothing to do now
LEVELS = (ACT, WATCH, ROUTINE)
LEVEL_RANK = {ACT: 0, WATCH: 1, ROUTINE: 2}

# Defaults from common practice: Pc >= 1e-4 calls for action planning, >= 1e-5 for close watch.
DEFAULT_ACT_PC = 1e-4
DEFAULT_WATCH_PC = 1e-5


@dataclasses.dataclass(frozen=True)
class Thresholds:
    act_pc: float = DEFAULT_ACT_PC
    watch_pc: float = DEFAULT_WATCH_PC

    def __post_init__(self):
        if not (0.0 < self.watch_pc <= self.act_pc <= 1.0):
            raise ValueError("thresholds need 0 < watch_pc <= act_pc <= 1")

    @property
    def is_default(self) -> bool:
        return (self.act_pc, self.watch_pc) == (DEFAULT_ACT_PC, DEFAULT_WATCH_PC)

    def describe(self) -> str:
        tag = " (defaults, common practice)" if self.is_default else " (configured)"
        return f"act at Pc >= {self.act_pc:.0e}, watch at Pc >= {self.watch_pc:.0e}{tag}"

    def level(self, pc: float, pc_max: float, dilution: bool) -> tuple[str, str]:
        """(level, reason).  A Pc that is low only because the covariance is large (dilution
        region) is not reassuring: such an event is raised to watch when its max Pc reaches
        the watch threshold."""
        if pc >= self.act_pc:
            return ACT, f"Pc {pc:.2e} >= {self.act_pc:.0e}"
        if pc >= self.watch_pc:
            return WATCH, f"Pc {pc:.2e} >= {self.watch_pc:.0e}"
        if dilution and pc_max >= self.watch_pc:
            return WATCH, (f"dilution region: Pc {pc:.1e} is low because the uncertainty is "
                           f"large; max Pc {pc_max:.1e}")
        return ROUTINE, f"Pc {pc:.1e} below {self.watch_pc:.0e}"


@dataclasses.dataclass(frozen=True)
class Attention:
    """An event's attention level and which source set it."""
    level: str
    reason: str
    source: str          # "ours" or "received"
    said: str            # e.g. "set by received CDM X (measured covariance); ours: watch"

    @property
    def rank(self) -> int:
        return LEVEL_RANK[self.level]


def best_source(ours_level: str, ours_reason: str, ours_assumed: bool, latest: dict | None,
                thresholds: Thresholds) -> Attention:
    """The level from the best covariance source.  A received CDM carries both objects'
    covariances from the sender's orbit determination (measured); it outranks our screening
    when any of our covariance is assumed (a regime model).  When ours is measured too, the
    more urgent of the two stands (neither is known to be better).  latest: the event's
    latest received message (pc, pc_max, dilution, message_id), or None."""
    if latest is None:
        return Attention(ours_level, ours_reason, "ours", "set by our screening")
    theirs, why = thresholds.level(latest["pc"], latest["pc_max"], bool(latest["dilution"]))
    tag = f"received CDM {latest['message_id']} (measured covariance)"
    if ours_assumed:
        return Attention(theirs, why, "received",
                         f"set by {tag}; it outranks our assumed covariance (ours: {ours_level})")
    if LEVEL_RANK[theirs] < LEVEL_RANK[ours_level]:
        return Attention(theirs, why, "received",
                         f"set by {tag}, the more urgent of two measured sources (ours: {ours_level})")
    return Attention(ours_level, ours_reason, "ours",
                     f"set by our screening (measured covariance); {tag} says {theirs}")
