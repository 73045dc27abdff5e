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
