"""`screener` command line.  Every bad input ends in one line on stderr and a non-zero exit."""

from __future__ import annotations

import argparse
import json
import os
import sys

from .. import CAUTION, __version__
from ..errors import ScreenerError

EXIT_OK = 0
EXIT_BAD_INPUT = 2


def _screen_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("--catalog", nargs="+", required=True, metavar="PATH",
                   help="element-set files or folders (TLE, OMM KVN/XML/CSV/JSON)")
    p.add_argument("--primaries", nargs="+", metavar="PATH",
                   help="own fleet: element sets or CCSDS OEM files; omit for all-vs-all")
    p.add_argument("--start", required=True, help="window start, ISO 8601 UTC")
    p.add_argument("--days", type=float, default=3.0, help="window length in days (default 3)")
    vol = p.add_mutually_exclusive_group()
    vol.add_argument("--radius-km", type=float, help="spherical screening volume radius (default 5)")
    vol.add_argument("--ric-km", help="RIC ellipsoid half-sizes R,I,C in km")
    p.add_argument("--json", metavar="PATH", help="write encounters as JSON")
    p.add_argument("--strict", action="store_true", help="stop at the first bad record")
    p.add_argument("--max-age-days", type=float, default=7.0,
                   help="flag element sets older than this at the start (default 7)")
    p.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1),
                   help="local processes (default: up to 2)")
    p.add_argument("--quiet", action="store_true", help="no summary on stdout")


def cmd_screen(args) -> int:
    from ..screening import screen
    from .load import build_request
    from .summary import render

    req = build_request(args)
    res = screen(req, progress=_progress(args))
    if args.json:
        _write_json(args.json, res)
    if not args.quiet:
        print(render(res))
    return EXIT_OK


def _progress(args):
    if args.quiet or not sys.stderr.isatty():
        return None

    def show(stage, done, total):
        print(f"\r{stage}: {done}/{total} tasks", end="" if done < total else "\n",
              file=sys.stderr, flush=True)

    return show


def _write_json(path, res) -> None:
    from ..timeutil import iso_z, jd_to_datetime

    req = res.request
    doc = {
        "caution": CAUTION,
        "software": f"screener {__version__}",
        "window_start": iso_z(jd_to_datetime(req.jd0, req.fr0), 3),
        "window_days": req.duration_s / 86400.0,
        "volume": req.volume.describe(),
        "unusable_objects": res.unusable,
        "encounters": [e.to_json() for e in res.encounters],
    }
    try:
        with open(path, "w", encoding="utf-8") as fh:
            json.dump(doc, fh, indent=1)
    except OSError as exc:
        raise ScreenerError(f"cannot write {path}: {exc.strerror}") from None


def make_parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(prog="screener", description="Conjunction screening. " + CAUTION)
    ap.add_argument("--version", action="version", version=f"screener {__version__}")
    sub = ap.add_subparsers(dest="command", required=True)
    p = sub.add_parser("screen", help="screen primaries against a catalog (or all-vs-all)")
    _screen_args(p)
    p.set_defaults(func=cmd_screen)
    from .risk_cmd import add_risk_parser

    add_risk_parser(sub)
    return ap


def main(argv=None) -> int:
    ap = make_parser()
    args = ap.parse_args(argv)
    try:
        return args.func(args)
    except ScreenerError as exc:
        print(f"screener: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("screener: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
