"""`screener receive`: take received CDMs (KVN or XML) into the run store."""

from __future__ import annotations


def add_receive_parser(sub) -> None:
    p = sub.add_parser("receive", help="take received CCSDS CDMs (KVN or XML) into the store")
    p.add_argument("--store", metavar="PATH")
    p.add_argument("paths", nargs="+", metavar="FILE_OR_FOLDER")
    p.add_argument("--strict", action="store_true",
                   help="refuse every file when one is refused (default: take in the good ones)")
    p.add_argument("--hbr-m", type=float, default=None,
                   help="hard-body radius for our Pc, m (default 10: two 5 m spheres)")
    p.set_defaults(func=cmd_receive)


def cmd_receive(args) -> int:
    from ..pipeline.receive import receive
    from ..risk.attach import DEFAULT_OBJECT_RADIUS_M
    from .run_cmd import open_store_for_writing

    hbr = 2 * DEFAULT_OBJECT_RADIUS_M if args.hbr_m is None else args.hbr_m   # range: cli.main
    store = open_store_for_writing(args.store)
    try:
        got = receive(store, args.paths, hbr, print, strict=args.strict)
    finally:
        store.close()
    print(f"{got.taken} taken in, {got.known} already in, {got.refused} refused"
          + (f", {got.skipped} skipped (not CDMs)" if got.skipped else ""))
    return 2 if got.refused else 0
