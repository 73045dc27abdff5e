"""`screener risk --cdm PATH`: recompute Pc from a received Conjunction Data Message."""

from __future__ import annotations

import json


def add_risk_parser(sub) -> None:
    p = sub.add_parser("risk", help="recompute Pc for a received CCSDS CDM")
    p.add_argument("--cdm", required=True, metavar="PATH", help="CCSDS CDM (KVN)")
    p.add_argument("--hbr-m", type=float, default=None, help="hard-body radius, m (default 10: two 5 m spheres, as everywhere)")
    p.add_argument("--json", metavar="OUT", help="write the result as JSON")
    p.set_defaults(func=cmd_risk)


def cmd_risk(args) -> int:
    from .. import CAUTION
    from ..errors import ScreenerError
    from ..risk.cdm import read_cdm
    from ..risk.assess import assess_cdm

    cdm = read_cdm(args.cdm)
    from ..risk.attach import DEFAULT_OBJECT_RADIUS_M

    # one default everywhere: two 5 m circumscribing spheres
    hbr = 2 * DEFAULT_OBJECT_RADIUS_M if args.hbr_m is None else args.hbr_m
    if not hbr > 0:
        raise ScreenerError("--hbr-m must be positive")
    out = assess_cdm(cdm, hbr)
    from ..risk.attach import SLOW_PASS_KM_S
    from ..risk.attention import Thresholds

    thresholds = Thresholds()
    out["attention"], out["attention_reason"] = thresholds.level(out["pc"], out["pc_max"],
                                                                 out["dilution_region"])
    out["slow_encounter"] = out["relative_speed_km_s"] < SLOW_PASS_KM_S
    sender = cdm.relative.get("COLLISION_PROBABILITY")
    try:
        out["pc_sender"] = float(sender) if sender not in (None, "") else None
    except ValueError:
        out["pc_sender"] = None
    out["pc_sender_method"] = cdm.relative.get("COLLISION_PROBABILITY_METHOD")
    if args.json:
        try:
            with open(args.json, "w", encoding="utf-8") as fh:
                json.dump(out, fh, indent=1)
        except OSError as exc:
            raise ScreenerError(f"cannot write {args.json}: {exc.strerror}") from None
    from ..display import fmt_pc, fmt_speed

    names = [o.fields.get("OBJECT_NAME", "") for o in cdm.objects]
    print(f"{names[0] or cdm.object1_designator} ({cdm.object1_designator}) x "
          f"{names[1] or cdm.object2_designator} ({cdm.object2_designator})  TCA {cdm.tca_text}")
    print(f"miss {out['miss_km'] * 1e3:.1f} m   relative speed {fmt_speed(out['relative_speed_km_s'])}")
    print(f"Pc {fmt_pc(out['pc'], 3)} ({out['pc_method']}), hard-body radius {hbr:g} m")
    print(f"  max 2-D Pc over the covariance size {fmt_pc(out['pc_max'], 3)}")
    if out["pc_sender"] is not None:
        ratio = (out["pc"] / out["pc_sender"]) if out["pc_sender"] > 0 else float("inf")
        print(f"  the message's own Pc {fmt_pc(out['pc_sender'], 3)}"
              f" ({out['pc_sender_method'] or 'method not given'}; its hard-body radius is not in "
              f"the message), ours / theirs = {ratio:.3g}")
    print(f"attention {out['attention']}: {out['attention_reason']} ({thresholds.describe()})")
    if out["slow_encounter"]:
        print(f"warning: slow encounter ({fmt_speed(out['relative_speed_km_s'])}): the 2-D "
              f"short-encounter Pc assumes straight-line relative motion and is doubtful here; "
              f"screen the pair with its orbits (screener run) for a Pc along the actual path")
    if out["dilution_region"]:
        print("note: in the dilution region: Pc would rise if the covariance shrank; a low Pc here "
              "does not mean the geometry is safe")
    print(CAUTION)
    return 0
