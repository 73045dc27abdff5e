"""Our screening against a received message about the same event: the differences in TCA,
miss, its RTN parts and Pc, and which of them are large enough to look at."""

from __future__ import annotations

import dataclasses
import math

from ..timeutil import parse_iso


@dataclasses.dataclass(frozen=True)
class AgreementRule:
    """Differences that flag a disagreement ([received] tca_diff_s, miss_diff_km, pc_factor;
    defaults 10 s, 1 km, a factor of 10 in Pc: rough operational scales, from memory)."""
    tca_diff_s: float = 10.0
    miss_diff_km: float = 1.0
    pc_factor: float = 10.0
    pc_floor: float = 1e-10      # Pcs both below this are not compared

    def describe(self) -> str:
        return (f"disagreement: TCA apart by over {self.tca_diff_s:g} s, miss by over "
                f"{self.miss_diff_km:g} km, or Pc by over a factor {self.pc_factor:g}")


def rule_of(config: dict) -> AgreementRule:
    """The rule a run was made with: its configuration snapshot's [received] thresholds."""
    got = {k: config.get(f"received_{k}") for k in ("tca_diff_s", "miss_diff_km", "pc_factor")}
    return AgreementRule(**{k: float(v) for k, v in got.items() if v is not None})


def compare(ours: dict, theirs: dict, rule: AgreementRule = AgreementRule()) -> dict:
    """ours: an encounter as exported (tca, miss_km, radial/in_track/cross_track_km, pc);
    theirs: a received message (tca_utc, miss_km, pc, data_json's relative_position_rtn)."""
    dt_s = (parse_iso(theirs["tca_utc"]) - parse_iso(ours["tca"])).total_seconds()
    d_miss = theirs["miss_km"] - ours["miss_km"]
    a, b = max(ours.get("pc") or 0.0, rule.pc_floor), max(theirs["pc"] or 0.0, rule.pc_floor)
    ratio = b / a
    why = []
    if abs(dt_s) > rule.tca_diff_s:
        why.append(f"TCA {dt_s:+.1f} s")
    if abs(d_miss) > rule.miss_diff_km:
        why.append(f"miss {d_miss * 1e3:+.0f} m")
    if max(ratio, 1.0 / ratio) > rule.pc_factor:
        why.append(f"Pc x{ratio:.3g}")
    return {"message_id": theirs["message_id"], "tca_diff_s": dt_s, "miss_diff_km": d_miss,
            "pc_ratio_received_to_ours": ratio if math.isfinite(ratio) else None,
            "disagrees": bool(why), "disagreement": ", ".join(why), "rule": rule.describe()}
