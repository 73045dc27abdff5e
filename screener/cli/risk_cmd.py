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
    if args.json:
        try:
            with open(args.json, "w", encoding="utf-8") as fh:
                json.dump(out, fh, indent=1)
        except OSError as exc:
            raise ScreenerError(f"cannot write {args.json}: {exc.strerror}") from None
    print(f"{cdm.object1_designator} x {cdm.object2_designator}  TCA {cdm.tca_text}")
    print(f"miss {out['miss_km'] * 1e3:.1f} m   relative speed {out['relative_speed_km_s']:.3f} km/s")
    print(f"Pc {out['pc']:.3e} ({out['pc_method']})   max Pc {out['pc_max']:.3e}   "
          f"HBR {hbr:g} m")
    if out["dilution_region"]:
        print("note: in the dilution region: Pc would rise if the covariance shrank; a low Pc here "
              "does not mean the geometry is safe")
    print(CAUTION)
    return 0
