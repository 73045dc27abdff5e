"""`screener maneuver`: size an avoidance burn for one event, re-screen it, export it."""

from __future__ import annotations

import json
import os
import sys

from ..errors import ScreenerError


def add_maneuver_parser(sub) -> None:
    p = sub.add_parser("maneuver", help="size an avoidance burn for one event and re-screen it")
    src = p.add_argument_group("the event (one of)")
    src.add_argument("--store", metavar="PATH", help="run store holding the event")
    src.add_argument("--event", type=int, metavar="ID", help="event id (TUI event view, exports)")
    src.add_argument("--cdm", metavar="FILE", help="a received CCSDS CDM instead of store + event")
    tg = p.add_mutually_exclusive_group()
    tg.add_argument("--target-miss-km", type=float, metavar="X", help="miss distance to reach, km")
    tg.add_argument("--target-pc", type=float, metavar="P",
                    help="Pc to get below (default: the watch level)")
    tg.add_argument("--target-radial-km", type=float, metavar="X", help="radial separation to reach, km")
    p.add_argument("--burn-window-h", metavar="A,B", help="burn times between A and B hours before "
                   "TCA (default: 0.5, 1.5, ... 4.5 orbits before)")
    p.add_argument("--burn-time", action="append", default=[], metavar="ISO",
                   help="also try a burn at this UTC time (repeatable)")
    p.add_argument("--directions", default="+T,-T,+R,-R", metavar="LIST",
                   help="burn directions among +T -T +R -R +N -N (RTN frame; default +T,-T,+R,-R)")
    p.add_argument("--max-dv-m-s", type=float, default=None, metavar="V",
                   help="largest delta-v to consider, m/s (default 1)")
    p.add_argument("--drag-cd-area-m2-kg", type=float, default=None, metavar="X",
                   help="Cd x area/mass of the primary, m^2/kg (default 0.022; 0: no drag)")
    p.add_argument("--hbr-m", type=float, default=None, help="hard-body radius with --cdm, m (default 10)")
    p.add_argument("--catalog", nargs="+", metavar="PATH", help="catalog to re-screen against "
                   "with --cdm (with --store the run's own catalog is used)")
    p.add_argument("--no-rescreen", action="store_true", help="the trade alone, no catalog re-screen")
    p.add_argument("--no-save", action="store_true", help="do not keep the trade in the store")
    p.add_argument("--workers", type=int, default=None, help="processes for the re-screen (default 2)")
    p.add_argument("--json", metavar="OUT", help="write the trade as JSON")
    p.add_argument("--oem", metavar="OUT", help="write the chosen burn's trajectory as a CCSDS OEM")
    p.add_argument("--quiet", action="store_true", help="no progress output")
    p.set_defaults(func=cmd_maneuver)


def _window_h(text: str | None):
    if text is None:
        return None
    try:
        a, b = (float(x) for x in text.split(","))
    except ValueError:
        raise ScreenerError(f"--burn-window-h {text!r}: give two numbers of hours before TCA, "
                            f"such as 1,8") from None
    if not (0 < a <= 240 and 0 < b <= 240):
        raise ScreenerError(f"--burn-window-h {text!r}: hours before TCA between 0 and 240")
    return a, b


def _directions(text: str):
    from ..maneuver.trade import DIRECTIONS

    out = [d.strip().upper() for d in text.split(",") if d.strip()]
    bad = [d for d in out if d not in DIRECTIONS]
    if bad or not out:
        raise ScreenerError(f"--directions {text!r}: choose among {' '.join(DIRECTIONS)}")
    return tuple(dict.fromkeys(out))


def _check(args) -> None:
    if args.cdm and (args.store or args.event is not None):
        raise ScreenerError("give --cdm, or --store with --event, not both")
    if not args.cdm and (args.event is None):
        raise ScreenerError("give --store PATH --event ID, or --cdm FILE")
    # numeric ranges: cli.main.RANGES, checked before any command runs
    for flag, path in (("--json", args.json), ("--oem", args.oem)):
        if path and not os.path.isdir(os.path.dirname(os.path.abspath(path))):
            raise ScreenerError(f"{flag} {path}: no such folder")


def cmd_maneuver(args) -> int:
    from .. import CAUTION, MANEUVER_CAUTION
    from ..maneuver.trade import DEFAULT_MAX_DV_M_S
    from ..pipeline import maneuver_run as mr
    from ..propagation.cowell import DEFAULT_MODEL, ForceModel
    from ..risk.attach import DEFAULT_OBJECT_RADIUS_M
    from ..risk.attention import Thresholds
    from ..timeutil import parse_iso
    from .load import warn
    from .progress import make_progress
    from .run_cmd import open_store

    _check(args)
    window_h = _window_h(args.burn_window_h)
    directions = _directions(args.directions)
    given = None if args.drag_cd_area_m2_kg is None else ForceModel(
        DEFAULT_MODEL.zonal_degree, args.drag_cd_area_m2_kg)
    max_dv = DEFAULT_MAX_DV_M_S if args.max_dv_m_s is None else args.max_dv_m_s
    workers = args.workers or min(2, os.cpu_count() or 1)
    store = None
    if args.cdm:
        lead_s = max(window_h) * 3600.0 if window_h else None
        hbr = 2 * DEFAULT_OBJECT_RADIUS_M if args.hbr_m is None else args.hbr_m
        model = given or DEFAULT_MODEL
        ctx = mr.event_from_cdm(args.cdm, hbr, lead_s, model)
        thresholds = Thresholds()
    else:
        store = open_store(args.store, create=False)     # never a new, empty store
        if not args.no_save:
            from ..errors import StoreError

            try:
                store.check_writable()
            except ScreenerError as exc:
                store.close()
                raise StoreError(str(exc)) from None
        ctx = mr.event_from_store(store, args.event)
        thresholds = ctx.cfg.thresholds
        model = given or mr.model_of(ctx)
    ev = ctx.event
    target = mr.parse_target(args.target_miss_km, args.target_pc, args.target_radial_km,
                             thresholds.watch_pc)
    extra = []
    for text in args.burn_time:
        try:
            t = parse_iso(text)
        except ValueError as exc:
            raise ScreenerError(f"--burn-time {text!r}: {exc}") from None
        from ..timeutil import jd_to_datetime

        extra.append((t - jd_to_datetime(ev.jd0, ev.fr0)).total_seconds())
    progress = make_progress(args.quiet)
    try:
        trade = mr.plan(ctx, target, window_h, extra, directions, max_dv, model, progress)
        out = mr.trade_output(trade)
        out["rescreen"] = None
        oem_text = None
        if trade.chosen is not None:
            oem_text, oem = mr.burn_oem(ctx, trade.chosen, model)
            if args.no_rescreen:
                out["rescreen"] = {"skipped": "--no-rescreen"}
            elif args.cdm and not args.catalog:
                out["rescreen"] = {"skipped": "a CDM-based trade needs --catalog to re-screen"}
            else:
                out["rescreen"] = mr.rescreen(ctx, oem, trade.chosen.burn_s, workers, warn,
                                              progress, args.catalog)
    finally:
        if progress:
            progress.close()
    if args.oem and oem_text is not None:
        _write(args.oem, oem_text)
    if store is not None and not args.no_save:
        from ..store.trades import save_trade

        out["trade_id"] = save_trade(store, out, os.path.abspath(args.oem) if args.oem and oem_text else None)
    if args.json:
        _write(args.json, json.dumps(out, indent=1, default=float) + "\n")
    print_trade(out, sys.stdout)
    if args.oem and oem_text is None:
        print("no OEM written: no burn meets the target", file=sys.stderr)
    print(CAUTION)
    print(MANEUVER_CAUTION)
    if store is not None:
        store.close()
    return 0


def _write(path: str, text: str) -> None:
    try:
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(text)
    except OSError as exc:
        raise ScreenerError(f"cannot write {path}: {exc.strerror}") from None


def print_trade(out: dict, stream) -> None:
    from ..display import fmt_pc
    from ..maneuver.compare import cleared_text

    ev = out["event"]
    pc = ev["pc"]
    print(f"{ev['primary_name']} ({ev['primary']}) x {ev['secondary_name']} ({ev['secondary']})  "
          f"TCA {ev['tca'][:23]}Z", file=stream)
    base = out.get("baseline") or {}
    print(f"  now: miss {ev['miss_km'] * 1000:.0f} m"
          + (f", Pc {fmt_pc(pc)} (as screened)" if pc is not None else "")
          + (f"; the trade's model: Pc {fmt_pc(base['new_pc'])}" if base else "")
          + f"; target: {out['target']['text']}", file=stream)
    for n in out["notes"]:
        print(f"  note: {n}", file=stream)
    if out["burns"]:
        print(f"{'burn time (UTC)':<20} {'lead':>5} {'dir':>3} {'delta-v':>10} {'new miss':>9} "
              f"{'radial':>8} {'new Pc':>8}  meets", file=stream)
    for b in out["burns"]:
        print(f"{b['burn_time'][:19].replace('T', ' '):<20} {b['lead_orbits']:4.1f}o "
              f"{b['direction']:>3} {b['dv_m_s'] * 100:7.2f} cm/s {b['new_miss_km'] * 1000:7.0f} m "
              f"{b['new_radial_km'] * 1000:6.0f} m {fmt_pc(b['new_pc']):>8}  "
              f"{'yes' if b['meets_target'] else 'no'}", file=stream)
    ch = out["chosen"]
    if ch:
        print(f"chosen: {ch['dv_m_s'] * 100:.2f} cm/s {ch['direction_name']} at "
              f"{ch['burn_time'][:19]}Z ({ch['lead_orbits']:.1f} orbits before TCA): miss "
              f"{ch['new_miss_km'] * 1000:.0f} m, Pc {fmt_pc(ch['new_pc'])}", file=stream)
    rs = out.get("rescreen")
    if rs and "skipped" not in rs:
        fate = cleared_text(rs["cleared"])
        print(f"re-screen against {rs['catalog_objects']:,} objects from the burn to the window's end "
              f"({rs['window_days']:.2f} d, {rs['volume']}): {len(rs['encounters'])} encounters; "
              f"the event: {fate}", file=stream)
        for key, word in (("created", "new"), ("worsened", "worse")):
            for e in rs[key]:
                extra = ""
                if key == "worsened":
                    extra = (f" (was {e['before']['miss_km'] * 1000:.0f} m, "
                             f"Pc {fmt_pc(e['before']['pc'])})")
                print(f"  {word}: {e['secondary_name'] or e['secondary']} ({e['secondary']}) "
                      f"TCA {e['tca'][:19]}Z miss {e['miss_km'] * 1000:.0f} m Pc {fmt_pc(e['pc'])}"
                      f" {e['attention']}{extra}", file=stream)
        if not rs["created"] and not rs["worsened"]:
            print("  no encounter created or worsened by the burn", file=stream)
        print(f"  compared with {rs['compared_with']}", file=stream)
    elif rs:
        print(f"re-screen: skipped ({rs['skipped']})", file=stream)
