"""What a burn does to the primary's other encounters: the re-screen's encounters set against
the run's (same other object, TCA within the event tolerance)."""

from __future__ import annotations

import dataclasses

WORSE_PC_FACTOR = 2.0       # a Pc this many times the old one (and above PC_NOTICE) is worse
PC_NOTICE = 1e-10
WORSE_MISS_FRACTION = 0.9   # ... or a miss below this share of the old one


@dataclasses.dataclass(frozen=True)
class Before:
    other_id: str
    tca_unix_s: float
    miss_km: float
    pc: float
    attention: str


def compare(before: list[Before], after: list[dict], target_other: str, target_tca_unix_s: float,
            tol_s: float) -> dict:
    """after: re-screen encounters as JSON dicts with `secondary`, `tca_unix_s`, `miss_km`,
    `pc`, `attention`.  Returns created, worsened (each with its old figures), and what
    became of the target event (`cleared`)."""
    created, worsened = [], []
    cleared = {"secondary": target_other, "in_volume": False}
    for e in after:
        if e["secondary"] == target_other and abs(e["tca_unix_s"] - target_tca_unix_s) <= tol_s:
            cleared = {"secondary": target_other, "in_volume": True, "tca": e["tca"],
                       "miss_km": e["miss_km"], "pc": e["pc"], "attention": e["attention"]}
            continue
        match = [b for b in before
                 if b.other_id == e["secondary"] and abs(b.tca_unix_s - e["tca_unix_s"]) <= tol_s]
        if not match:
            created.append(e)
            continue
        old = min(match, key=lambda b: abs(b.tca_unix_s - e["tca_unix_s"]))
        pc_worse = e["pc"] > max(old.pc * WORSE_PC_FACTOR, PC_NOTICE)
        miss_worse = e["miss_km"] < old.miss_km * WORSE_MISS_FRACTION
        if pc_worse or miss_worse:
            worsened.append({**e, "before": dataclasses.asdict(old)})
    return {"created": created, "worsened": worsened, "cleared": cleared}


def cleared_text(cleared: dict) -> str:
    """What became of the target event in a re-screen, as the CLI and the TUI say it."""
    from ..display import fmt_pc

    if cleared["in_volume"]:
        return f"miss {cleared['miss_km'] * 1000:.0f} m, Pc {fmt_pc(cleared['pc'])}"
    return "outside the screening volume"


def rule_text(tol_s: float) -> str:
    return (f"created: no encounter with that object within {tol_s:.0f} s of this TCA before the "
            f"burn; worsened: Pc above {WORSE_PC_FACTOR:g} x its old value (and above "
            f"{PC_NOTICE:.0e}) or miss below {WORSE_MISS_FRACTION:.0%} of its old value")
