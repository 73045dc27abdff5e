"""`screener run`, `init-config`, `export` and `tui`: the nightly, store-backed commands."""

from __future__ import annotations

import os
import sys

from ..errors import ScreenerError


def add_run_parsers(sub) -> None:
    from .main import add_screen_args

    p = sub.add_parser("run", help="run a configured screening and commit it to the store")
    p.add_argument("--config", metavar="PATH", help="TOML configuration (see init-config)")
    p.add_argument("--store", metavar="PATH", help="store file (default: $SCREENER_STORE or the XDG data dir)")
    p.add_argument("--fail-on-act", action="store_true",
                   help="exit 3 when any event reaches the act level (for cron alerting)")
    p.add_argument("--no-exports", action="store_true", help="skip the configured exports")
    p.add_argument("--no-alerts", action="store_true",
                   help="send none of the configured alerts (a re-run by hand, a test)")
    g = p.add_argument_group("one-off options (instead of --config)")
    add_screen_args(g, required=False)
    p.set_defaults(func=cmd_run)

    p = sub.add_parser("init-config", help="write a commented starter configuration")
    p.add_argument("path")
    p.add_argument("--fleet", nargs="+", metavar="PATH", help="fleet files to put in it")
    p.add_argument("--catalog", nargs="+", metavar="PATH", help="catalog sources to put in it")
    p.add_argument("--force", action="store_true", help="overwrite an existing file")
    p.set_defaults(func=cmd_init)

    p = sub.add_parser("export", help="export a stored run: JSON, CSV, CDMs, report")
    p.add_argument("--store", metavar="PATH")
    p.add_argument("--run", type=int, help="run id (default: the latest)")
    p.add_argument("--out", required=True, metavar="FOLDER")
    p.add_argument("--cdm", choices=("none", "act", "watch", "all"), default="act",
                   help="CDM files for events at this level or above (default act)")
    p.add_argument("--cdm-per", choices=("series", "encounter"), default="series",
                   help="one CDM per series (its worst pass; default) or per encounter")
    p.add_argument("--report", choices=("none", "text", "html"), default="html",
                   help="report.html (default: self-contained, with plots), report.txt, or none")
    p.set_defaults(func=cmd_export)

    p = sub.add_parser("alert-test", help="send one test alert through every configured channel")
    p.add_argument("--config", required=True, metavar="PATH", help="TOML configuration with [alerts]")
    p.set_defaults(func=cmd_alert_test)

    p = sub.add_parser("tui", help="triage stored runs in the terminal")
    p.add_argument("--store", metavar="PATH")
    p.add_argument("--config", metavar="PATH", help="configuration for new screenings started from the TUI")
    p.set_defaults(func=cmd_tui)


def open_store(path, create=True, readonly=False):
    from ..store import Store
    from ..errors import StoreError

    try:
        return Store(path, create=create, readonly=readonly)
    except ScreenerError as exc:
        raise StoreError(str(exc)) from None


def open_store_for_writing(path):
    """The store, checked writable and unlocked before any screening starts."""
    from ..errors import StoreError

    store = open_store(path)
    try:
        store.check_writable()
    except ScreenerError as exc:
        store.close()
        raise StoreError(str(exc)) from None
    return store


def cmd_run(args) -> int:
    from ..config import load_config
    from ..risk.attention import ACT
    from ..pipeline import execute
    from .load import warn
    from .main import EXIT_ACT, EXIT_OK, ONE_OFF, config_from_args, write_result_json
    from .progress import make_progress
    from .summary import render
    from ..memory import keep_freed_memory

    keep_freed_memory()      # this process runs the risk and the store commit (memory.py)
    if args.config:
        if args.catalog or args.primaries or args.start:
            raise ScreenerError("give either --config or the one-off options (--catalog, --start, ...), not both")
        given = [a for a in ONE_OFF if getattr(args, a, None) is not None] + (["strict"] if args.strict else [])
        if given:
            flags = ", ".join("--" + a.replace("_", "-") for a in given)
            raise ScreenerError(f"{flags}: set in the configuration file with --config (only "
                                f"--workers and --dask override it)")
        cfg = load_config(args.config)
        if args.dask:
            cfg.dask_scheduler = args.dask
        if args.workers is not None:
            cfg.workers = args.workers
    else:
        if not args.catalog or not args.start:
            raise ScreenerError("run needs --config PATH, or --catalog and --start for a one-off run")
        cfg = config_from_args(args)
    store = None
    prog = None
    try:
        store = open_store_for_writing(args.store or cfg.store)
        prog = make_progress(args.quiet)
        out = execute(cfg, store=store, progress=prog, warn=None if args.quiet else warn)
    except ScreenerError as exc:
        if prog:
            prog.close()
            prog = None
        if cfg.alerts.rules and not args.no_alerts:     # a failed night is told too ([[alerts.rule]] on = "run_problem")
            from ..alerts import alert_failure

            said = alert_failure(cfg, str(exc), store).summary()
            if said:
                print(said, file=sys.stderr)
        if store is not None:
            store.close()
        raise
    finally:
        if prog:
            prog.close()
    if args.quiet:          # a degraded night is said even under --quiet (cron mails stderr)
        for msg in out.degraded:
            print(f"screener: warning: {msg}", file=sys.stderr)
    try:
        # alerts first: the run is committed, and an export that fails must not keep them back
        told = ""
        if cfg.alerts.rules and not args.no_alerts:
            from ..alerts import alert_run
            from ..pipeline.run import log_appender

            try:
                sent = alert_run(store, cfg, out.run_id, out.degraded, log=log_appender(out.log_path))
                told = sent.summary()
                failed = sent.failed
            except Exception as exc:  # noqa: BLE001 - the run is committed; an alert bug must not lose it
                told, failed = f"Alerts: not sent ({type(exc).__name__}: {exc})", 1
            if args.quiet and failed:      # cron mails stderr: a failed alert is said
                print(f"screener: warning: {told}", file=sys.stderr)
        exports = []
        if cfg.outputs.folder and not args.no_exports:
            from ..exports import export_run
            from .summary import render_diff

            folder = os.path.join(cfg.outputs.folder, f"run-{out.run_id}")
            exports = export_run(store, out.run_id, folder, cfg.outputs.json, cfg.outputs.csv,
                                 cfg.outputs.cdm, cfg.outputs.report, render_diff(out.diff),
                                 cfg.outputs.cdm_per)
        if args.json:
            write_result_json(args.json, out.result, {"run_id": out.run_id, "store": store.path,
                                                      "changes": out.diff.to_json()})
        from ..exports.write import received_only_events, run_encounters
        from ..store.queries import run as run_info, thresholds_of

        info = run_info(store, out.run_id)
        stored = run_encounters(store, out.run_id)       # levels from the best source
        only = received_only_events(store, thresholds_of(info), info.window_start_unix_s)
        if not args.quiet:
            from ..exports.report import received_lines

            print(render(out.result, thresholds=cfg.thresholds, diff=out.diff))
            text = received_lines(stored, only)
            if text:
                print("\n" + text)
            if told:
                print("\n" + told)
            print(f"\nStored as run {out.run_id} in {store.path}; log {out.log_path}")
            if exports:
                from ..display import plural

                print(f"Exports: {plural(len(exports), 'file')} in {folder}")
    finally:
        store.close()
    # act by the best source: our screening, or a received CDM that outranks it
    act = [e for e in stored if e.get("attention") == ACT]
    act_only = [o for o in only if o["attention"] == ACT]
    if args.fail_on_act and (act or act_only):
        from ..display import plural
        from ..risk.series import STORED, group

        n_series = len(group(act, STORED))
        print(f"screener: {plural(n_series, 'series', 'series')} at the act level "
              f"({plural(len(act), 'encounter')})"
              + (f", {len(act_only)} received-only events" if act_only else ""), file=sys.stderr)
        return EXIT_ACT
    return EXIT_OK


def cmd_init(args) -> int:
    from ..config import write_starter

    write_starter(args.path, args.fleet, args.catalog, args.force)
    print(f"wrote {args.path}; edit it, then: screener run --config {args.path}")
    return 0


def cmd_export(args) -> int:
    from ..exports import export_run

    store = open_store(args.store, create=False, readonly=True)
    try:
        written = export_run(store, args.run, args.out, cdm=args.cdm, report=args.report,
                             cdm_per=args.cdm_per)
    finally:
        store.close()
    for p in written:
        print(p)
    return 0


def cmd_alert_test(args) -> int:
    from ..alerts import alert_test
    from ..alerts.dispatch import channel_line
    from ..config import load_config
    from .main import EXIT_ALERT_FAILED, EXIT_OK

    cfg = load_config(args.config)
    if not cfg.alerts.rules:
        raise ScreenerError(f"{args.config}: no [[alerts.rule]] to test")
    got = alert_test(cfg)
    for name, r in got:
        print(f"{name}: {channel_line(r)}")
    bad = sum(1 for _, r in got if not r["ok"])
    if bad:
        print(f"screener: {bad} of {len(got)} alert channels failed", file=sys.stderr)
        return EXIT_ALERT_FAILED
    return EXIT_OK


def cmd_tui(args) -> int:
    from ..config import load_config
    from ..tui import run_tui

    if args.config:
        load_config(args.config)        # a bad configuration is reported now, not on `n`
    return run_tui(store_path=args.store, config_path=args.config)
