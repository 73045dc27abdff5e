"""`screener` command line.  Every bad input ends in one line on stderr and a non-zero exit.

Exit codes (for cron):
  0  ran fine
  2  bad input or configuration (the message names file, line and reason)
  3  an event at the "act" attention level was found (only with --fail-on-act)
  4  the store could not be opened or written
  5  alert-test: a configured alert channel failed (a failing alert never changes a run's code)
  130 interrupted by Ctrl-C, 143 by SIGTERM (nothing of the interrupted run is stored)
"""

from __future__ import annotations

import argparse
import os
import sys

from .. import CAUTION, __version__
from ..errors import ScreenerError, StoreError
from ..gcpause import gc_paused

EXIT_OK = 0
EXIT_BAD_INPUT = 2
EXIT_ACT = 3
EXIT_STORE = 4
EXIT_ALERT_FAILED = 5
EXIT_INTERRUPTED = 130
EXIT_TERMINATED = 143


def add_screen_args(p: argparse.ArgumentParser, required: bool = True) -> None:
    p.add_argument("--catalog", nargs="+", required=required, metavar="PATH",
                   help="element-set files or folders (TLE, OMM KVN/XML/CSV/JSON)")
    p.add_argument("--primaries", nargs="+", metavar="PATH",
                   help="own fleet: element sets or CCSDS OEM files; omit for all-vs-all")
    p.add_argument("--start", required=required, help="window start, ISO 8601 UTC (or 'today', 'now')")
    p.add_argument("--days", type=float, help="window length in days (default 3, at most 60)")
    vol = p.add_mutually_exclusive_group()
    vol.add_argument("--radius-km", type=float, help="spherical screening volume radius (default 5)")
    vol.add_argument("--ric-km", help="RIC ellipsoid half-sizes R,I,C in km")
    p.add_argument("--hbr-m", type=float, help="hard-body radius for every pair, m (default 10: "
                   "two 5 m circumscribing spheres)")
    p.add_argument("--json", metavar="PATH", help="write encounters as JSON")
    p.add_argument("--strict", action="store_true", help="stop at the first bad record")
    p.add_argument("--max-age-days", type=float,
                   help="flag element sets older than this at the start (default 7)")
    p.add_argument("--workers", type=int, help="local processes (default: up to 2)")
    p.add_argument("--dask", metavar="ADDRESS", help="run the tasks on the Dask scheduler at "
                   "ADDRESS (tcp://host:port) instead of local processes")
    p.add_argument("--quiet", action="store_true", help="no summary or progress")


# (option, attribute, lowest allowed, highest allowed): checked before anything runs
RANGES = (("--days", "days", 1e-3, 60.0), ("--radius-km", "radius_km", 1e-3, 1000.0),
          ("--hbr-m", "hbr_m", 1e-3, 1000.0), ("--max-age-days", "max_age_days", 1e-3, 3650.0),
          ("--workers", "workers", 1, 256), ("--max-dv-m-s", "max_dv_m_s", 1e-3, 100.0),
          ("--drag-cd-area-m2-kg", "drag_cd_area_m2_kg", 0.0, 1.0))
ONE_OFF = ("days", "radius_km", "ric_km", "hbr_m", "max_age_days")


def check_ranges(args) -> None:
    """Every numeric option in its range (NaN and infinities refused): one line, exit 2."""
    for flag, attr, lo, hi in RANGES:
        x = getattr(args, attr, None)
        if x is not None and not (lo <= x <= hi):
            raise ScreenerError(f"{flag} {x:g} is outside {lo:g} .. {hi:g}")


def config_from_args(args):
    from ..config import config_from_options
    from .load import parse_volume

    args.days = 3.0 if args.days is None else args.days
    args.max_age_days = 7.0 if args.max_age_days is None else args.max_age_days
    args.workers = min(2, os.cpu_count() or 1) if args.workers is None else args.workers
    if args.start not in ("today", "now"):
        from ..timeutil import parse_start

        parse_start(args.start)
    vol = parse_volume(args.radius_km, args.ric_km)
    ric = tuple(vol.half_km) if args.ric_km else None
    cfg = config_from_options(args.catalog, args.primaries, args.start, args.days,
                              args.radius_km, ric, max(1, args.workers), args.max_age_days,
                              args.strict, args.hbr_m)
    cfg.dask_scheduler = args.dask
    return cfg


def cmd_screen(args) -> int:
    from ..pipeline import execute
    from .load import warn
    from .progress import make_progress
    from .summary import render

    from ..memory import keep_freed_memory

    keep_freed_memory()      # this process runs the risk and the store commit (memory.py)
    cfg = config_from_args(args)
    prog = make_progress(args.quiet)
    try:
        out = execute(cfg, progress=prog, warn=None if args.quiet else warn)
    finally:
        if prog:
            prog.close()
    if args.json:
        write_result_json(args.json, out.result)
    if not args.quiet:
        print(render(out.result, thresholds=cfg.thresholds))
    return EXIT_OK


def stage_breakdown(stats: dict) -> dict:
    """Where the time went: wall seconds of read, screen, risk and store, and within the
    screening the seconds each task stage took, summed over the workers."""
    out = {k: round(v, 3) for k, v in stats.get("stages", {}).items()}
    out["screening_task_s"] = {k: round(v, 3) for k, v in stats.get("task_stage_s", {}).items()}
    out["task_peak_rss_mb"] = round(stats.get("task_peak_rss_mb", 0.0), 1)
    return out


@gc_paused
def write_result_json(path, res, extra: dict | None = None) -> None:
    """The --json document, made with the cyclic collector paused (gcpause.py): its 70,548
    records of the 30,000-object benchmark day took 0.31 s to make paused against 0.78-0.88 s
    with the collector walking the run's objects again and again."""
    from ..exports.tables import write_json
    from ..screening.encounter import json_records
    from ..timeutil import iso_z, jd_to_datetime

    req = res.request
    head = {
        "software": f"screener {__version__}",
        "window_start": iso_z(jd_to_datetime(req.jd0, req.fr0), 3),
        "window_days": req.duration_s / 86400.0,
        "volume": req.volume.describe(),
        "unusable_objects": res.unusable,
        "stages": stage_breakdown(res.stats),
        **(extra or {}),
    }
    try:
        write_json(path, head, list(json_records(res.encounters)))
    except OSError as exc:
        raise ScreenerError(f"cannot write {path}: {exc.strerror}") from None


def make_parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(prog="screener", description="Conjunction screening. " + CAUTION,
                                 epilog="exit codes: 0 ok, 2 bad input or configuration, 3 act-level "
                                        "event (with --fail-on-act), 4 store error, 130/143 interrupted")
    ap.add_argument("--version", action="version", version=f"screener {__version__}")
    sub = ap.add_subparsers(dest="command", required=True)
    p = sub.add_parser("screen", help="one-off screening of primaries against a catalog (or all-vs-all)")
    add_screen_args(p)
    p.set_defaults(func=cmd_screen)
    from .risk_cmd import add_risk_parser
    from .run_cmd import add_run_parsers

    from .maneuver_cmd import add_maneuver_parser
    from .receive_cmd import add_receive_parser

    add_run_parsers(sub)
    add_risk_parser(sub)
    add_maneuver_parser(sub)
    add_receive_parser(sub)
    return ap


class Terminated(BaseException):
    """SIGTERM, turned into an exception so open store transactions roll back."""


def _on_sigterm(signum, frame):
    raise Terminated()


ENV_UMASK = "SCREENER_UMASK"
DEFAULT_UMASK = 0o077   # store, logs and exports hold the fleet's orbits: user-only by default


def _set_umask() -> None:
    """Files this process creates are user-only (0600 / folders 0700) unless $SCREENER_UMASK
    (octal, e.g. 027 for group-readable) says otherwise."""
    text = os.environ.get(ENV_UMASK, "")
    try:
        mask = int(text, 8) if text else DEFAULT_UMASK
    except ValueError:
        mask = -1
    if not 0 <= mask <= 0o777:
        raise ScreenerError(f"{ENV_UMASK}={text!r}: give an octal mask such as 077 or 027")
    os.umask(mask | 0o002)      # never world-writable


def main(argv=None) -> int:
    import signal

    ap = make_parser()
    args = ap.parse_args(argv)
    try:
        _set_umask()
    except ScreenerError as exc:
        print(f"screener: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    try:
        signal.signal(signal.SIGTERM, _on_sigterm)
        # Ctrl-C always interrupts cleanly, even when started from a shell that made SIGINT
        # ignored (background jobs): the open store transaction then rolls back
        signal.signal(signal.SIGINT, signal.default_int_handler)
    except ValueError:          # not the main thread (embedded use): keep the defaults
        pass
    try:
        check_ranges(args)
        return args.func(args)
    except StoreError as exc:
        print(f"screener: store error: {exc}", file=sys.stderr)
        return EXIT_STORE
    except ScreenerError as exc:
        print(f"screener: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("screener: interrupted; nothing of this run was stored", file=sys.stderr)
        return EXIT_INTERRUPTED
    except Terminated:
        print("screener: terminated (SIGTERM); nothing of this run was stored", file=sys.stderr)
        return EXIT_TERMINATED
    except BrokenPipeError:
        # the reader of our output went away (`screener risk ... | head`): stop quietly, and
        # keep Python from complaining again when it flushes stdout at exit
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    except RecursionError:
        print("screener: error: input nested too deeply to read", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":
    sys.exit(main())
