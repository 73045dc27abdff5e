"""How numbers are shown at the edges (terminal, TUI, reports): one place for the Pc floor
and the speed units, so every output agrees."""

from __future__ import annotations

import math

# Below this a Pc is shown as "<1e-10": the methods' numerical noise and the orbit models'
# own error make smaller values meaningless (common practice: operators treat Pc under
# 1e-10 as negligible).
PC_DISPLAY_FLOOR = 1e-10
FLOOR_TEXT = "<1e-10"
LOG10_FLOOR_TEXT = "<-10"


def fmt_pc(pc: float | None, digits: int = 1) -> str:
    """'1.9e-3' (exponent without padding, so any Pc fits seven columns); '<1e-10' for anything
    below the floor (0, underflow, None)."""
    if pc is None or not (pc >= PC_DISPLAY_FLOOR):
        return FLOOR_TEXT
    mant, exp = f"{pc:.{digits}e}".split("e")
    return f"{mant}e{int(exp)}"


def fmt_log10(pc: float | None) -> str:
    if pc is None or not (pc >= PC_DISPLAY_FLOOR):
        return LOG10_FLOOR_TEXT
    return f"{math.log10(pc):.1f}"


def fmt_speed(v_km_s: float) -> str:
    """Relative speed with its unit: '4 m/s' under 1 km/s, '14.1 km/s' above."""
    if not math.isfinite(v_km_s):
        return "?"
    if v_km_s < 1.0:
        return f"{v_km_s * 1e3:.0f} m/s"
    return f"{v_km_s:.1f} km/s"


def plural(n: int, word: str, many: str | None = None) -> str:
    """'1 encounter', '2 encounters', '1 day'."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def fmt_days(d: float) -> str:
    return f"{d:g} day" + ("" if d == 1 else "s")
