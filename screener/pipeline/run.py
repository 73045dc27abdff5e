"""Execute one screening from a Config: inputs -> screening -> risk -> store.

Progress goes to `progress(stage, done, total)`; stages are "loading", "screening", "risk",
"storing".  `cancel` (anything with is_set()) stops the screening between tasks; nothing is
stored for a cancelled run.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import logging
import os
import sqlite3
import time
from typing import Callable

from ..config import Config
from ..errors import ScreenerError, StoreError
from ..gcpause import gc_paused
from ..risk.attach import attach_risk
from ..risk.covariance import CovarianceSources
from ..screening import ScreeningRequest, Volume, screen
from ..store.db import describe_sqlite_error
from ..store.runs import hold_for_tests
from ..timeutil import datetime_to_jd, iso_z, parse_start
from ..display import plural
from .identity import describe
from .inputs import Inputs, load_inputs

Progress = Callable[[str, int, int], None]


@dataclasses.dataclass
class RunOutcome:
    config: Config
    inputs: Inputs
    result: object                   # ScreeningResult with risk attached
    run_id: int | None = None
    diff: object | None = None       # store.events.Diff
    store_path: str | None = None
    log_path: str | None = None
    started_utc: str = ""
    degraded: list[str] = dataclasses.field(default_factory=list)   # shown even under --quiet


def input_drops(store, cfg: Config, inputs: Inputs) -> list[str]:
    """Inputs that shrank by more than cfg.max_input_drop since the previous run of the same
    name (a truncated catalog download screens almost nothing and would otherwise look like a
    quiet night)."""
    prev = store.conn.execute("SELECT id, n_primaries, n_secondaries FROM runs WHERE name = ? "
                              "ORDER BY id DESC LIMIT 1", (cfg.name,)).fetchone()
    if prev is None:
        return []
    out = []
    for what, before, now in (("catalog", prev["n_secondaries"], len(inputs.catalog)),
                              ("fleet", prev["n_primaries"], len(inputs.primaries) + len(inputs.oems))):
        if before and now < (1.0 - cfg.max_input_drop) * before:
            out.append(f"inputs shrank: the {what} has {plural(now, 'object')}, {before} in run {prev['id']} "
                       f"({100.0 * (before - now) / before:.0f} % fewer; [run] max_input_drop = "
                       f"{cfg.max_input_drop:g})")
    return out


def take_in_received(cfg: Config, store, warn: Callable[[str], None],
                     note: Callable[[str], None]) -> None:
    """[received] folder: its CDMs into the store before the run (one log line per file; a
    refused file is a warning, never a failed run)."""
    from .receive import receive

    fleet = set(cfg.members)

    def hbr_m(a: str, b: str) -> float:       # the run's own radii, as for its encounters
        return cfg.radius_m(a, a in fleet) + cfg.radius_m(b, b in fleet)

    if not os.path.isdir(cfg.received_folder):
        warn(f"[received] folder {cfg.received_folder}: no such folder; no CDMs taken in")
        return
    lines: list[str] = []
    got = receive(store, [cfg.received_folder], hbr_m, lines.append,
                  tol_s=cfg.event_tca_tolerance_s)
    for line in lines:
        (warn if line.startswith("refused:") else note)(line)
    note(f"received CDMs: {got.taken} taken in, {got.known} already in, {got.refused} refused")


def resolve_start(cfg: Config, now: dt.datetime) -> dt.datetime:
    if cfg.start == "today":
        return now.astimezone(dt.timezone.utc).replace(hour=0, minute=0, second=0, microsecond=0)
    if cfg.start == "now":
        return now.astimezone(dt.timezone.utc).replace(microsecond=0)
    return parse_start(cfg.start)


def volume_of(cfg: Config) -> Volume:
    if cfg.volume_shape == "sphere":
        return Volume.sphere(cfg.radius_km)
    if cfg.volume_shape == "ellipsoid":
        return Volume.ellipsoid(*cfg.ric_km)
    return Volume.box(*cfg.ric_km)


def build_request(cfg: Config, inputs: Inputs, jd0: float, fr0: float) -> ScreeningRequest:
    return ScreeningRequest(catalog=inputs.catalog, primaries=inputs.primaries,
                            primary_oems=inputs.oems, jd0=jd0, fr0=fr0,
                            duration_s=cfg.window_days * 86400.0, volume=volume_of(cfg),
                            workers=cfg.workers)


PARALLEL_RISK_MIN = 2000      # encounters from which the risk stage uses worker processes ...
PARALLEL_RISK_MIN_SLOW = 16   # ... or slow passes (each a Monte Carlo along its path, ~0.1 s)
RISK_CHUNKS_PER_WORKER = 4


def add_risk(cfg: Config, inputs: Inputs, result, progress: Progress | None = None,
             executor=None) -> None:
    """Risk for every encounter: in this process, or, for many encounters and more than one
    worker, in chunks on worker processes (`executor`, else a pool of cfg.workers)."""
    history = inputs.history if cfg.covariance.use_history else None
    primary_ids = {r.catalog_id for r in inputs.primaries} | {o.object_id for o in inputs.oems}
    encs = result.encounters
    ids = {e.primary for e in encs} | {e.secondary for e in encs}
    radii = {oid: cfg.radius_m(oid, oid in primary_ids) for oid in ids}
    if cfg.workers <= 1 or not wants_workers(encs):
        sources = CovarianceSources(oems=inputs.oems, configured=cfg.covariance.mapping(), history=history)
        attach_risk(encs, sources, radius_m=lambda oid: radii[oid], thresholds=cfg.thresholds,
                    progress=progress)
        return
    risk_in_workers(encs, inputs.oems, cfg.covariance.mapping(), history, radii, cfg.thresholds,
                    cfg.workers, executor, progress)


def wants_workers(encs) -> bool:
    """Whether the risk stage is worth worker processes (their start costs about a second)."""
    from ..risk.attach import SLOW_PASS_KM_S

    n_slow = sum(1 for e in encs if e.relative_speed_km_s < SLOW_PASS_KM_S)
    return len(encs) >= PARALLEL_RISK_MIN or n_slow >= PARALLEL_RISK_MIN_SLOW


@gc_paused
def risk_in_workers(encs, oems, configured, history, radii, thresholds, workers: int,
                    executor=None, progress: Progress | None = None) -> None:
    """attach_risk over chunks of the encounters on worker processes; each chunk carries only
    the element-set histories and radii of its own objects."""
    from concurrent.futures import as_completed

    from ..risk.attach import complete_path_pc, pack_for_risk, risk_of_chunk
    from ..workers import result_of

    n_chunks = workers * RISK_CHUNKS_PER_WORKER
    size = max(1, -(-len(encs) // n_chunks))
    chunks = [encs[a:a + size] for a in range(0, len(encs), size)]
    own = executor is None
    if own:
        from ..workers import spawn_pool

        executor = spawn_pool(workers)
    try:
        futures = {}
        for chunk in chunks:
            mine = {e.primary for e in chunk} | {e.secondary for e in chunk}
            hist = {k: v for k, v in (history or {}).items() if k in mine}
            futures[executor.submit(risk_of_chunk, pack_for_risk(chunk), oems, configured, hist,
                                    {k: radii[k] for k in mine}, thresholds)] = chunk
        done = 0
        for fut in as_completed(futures):
            chunk = futures[fut]
            for e, risk in zip(chunk, result_of(fut, "a risk chunk")):
                e.risk = risk
                complete_path_pc(e, thresholds)     # a long fast pass: its path was not sent
            done += len(chunk)
            if progress:
                progress("risk", done, len(encs))
    finally:
        if own:
            executor.shutdown(wait=True, cancel_futures=True)


def open_log(folder: str, stamp: str) -> tuple[logging.Logger, str]:
    logs = os.path.join(folder, "logs")
    os.makedirs(logs, exist_ok=True)
    path = os.path.join(logs, f"run-{stamp}.log")
    log = logging.getLogger(f"screener.run.{stamp}.{id(path)}")
    log.setLevel(logging.INFO)
    log.propagate = False
    h = logging.FileHandler(path, encoding="utf-8")
    h.setFormatter(logging.Formatter("%(asctime)s %(levelname)s %(message)s"))
    log.addHandler(h)
    return log, path


def log_appender(path: str | None) -> Callable[[str], None]:
    """A function that adds one INFO line to a run's log after the run (e.g. its alerts), in
    the log's own format; a log that cannot be written is left alone."""
    def add(msg: str) -> None:
        if not path:
            return
        stamp = dt.datetime.now().strftime("%Y-%m-%d %H:%M:%S,%f")[:23]
        try:
            with open(path, "a", encoding="utf-8") as fh:
                fh.write(f"{stamp} INFO {msg}\n")
        except OSError:
            pass
    return add


def execute(cfg: Config, store=None, progress: Progress | None = None, cancel=None,
            now: dt.datetime | None = None, warn: Callable[[str], None] | None = None,
            executor=None) -> RunOutcome:
    """Run the screening described by cfg; commit it to `store` (a store.Store) if given."""
    from .. import __version__

    now = now or dt.datetime.now(dt.timezone.utc)
    started = iso_z(dt.datetime.now(dt.timezone.utc), 3)
    pool = None
    shown = progress or (lambda stage, done, total: None)

    def report(stage: str, done: int, total: int) -> None:
        shown(stage, done, total)
        if stage == "screening" and done == 1:
            hold_for_tests("screening-task-done")     # tests only: workers up, mid-run

    log, log_path = (None, None)
    if store is not None:
        log, log_path = open_log(store.folder, dt.datetime.now(dt.timezone.utc).strftime("%Y%m%dT%H%M%S_%fZ"))

    def note(msg: str) -> None:
        if log:
            log.info(msg)

    def warned(msg: str) -> None:
        note(msg)
        if warn:
            warn(msg)

    try:
        note(f"screener {__version__}; configuration {cfg.path or '(command-line options)'}")
        if store is not None and cfg.received_folder:
            take_in_received(cfg, store, warned, note)
        start = resolve_start(cfg, now)
        jd0, fr0 = datetime_to_jd(start)
        note(f"window {iso_z(start, 3)} + {cfg.window_days:g} d")
        if executor is None and not cfg.dask_scheduler and cfg.workers > 1:
            from ..workers import ENGINE_MODULES, spawn_pool

            # one pool for the screening's tasks and the risk chunks, started before the
            # inputs are read: its workers import the engine meanwhile
            pool = executor = spawn_pool(cfg.workers, preload=ENGINE_MODULES)
        report("loading", 0, 1)
        t0 = time.perf_counter()
        inputs = load_inputs(cfg, jd0, fr0, warned)
        report("loading", 1, 1)
        stages = {"read_s": time.perf_counter() - t0}
        degraded = input_drops(store, cfg, inputs) if store is not None else []
        for msg in degraded:
            warned(msg)
        if degraded and cfg.fail_on_input_drop:
            raise ScreenerError(degraded[0] + "; nothing screened ([run] fail_on_input_drop = true)")
        if inputs.bad_records:
            degraded.append(f"{plural(inputs.bad_records, 'bad input record')} skipped (each is "
                            f"named in the log)")
        note(f"loaded {len(inputs.primaries) + len(inputs.oems)} primaries, {len(inputs.catalog)} "
             f"catalog objects in {time.perf_counter() - t0:.1f} s")
        req = build_request(cfg, inputs, jd0, fr0)
        client = None
        if executor is None and cfg.dask_scheduler:
            from .cluster import connect

            client, executor = connect(cfg.dask_scheduler, cfg.dask_tls, cfg.dask_allow_plain_tcp)
            note(f"running tasks on the Dask cluster at {cfg.dask_scheduler}")
        try:
            result = screen(req, progress=report, cancel=cancel, executor=executor)
        finally:
            if client is not None:
                client.close()
        describe(result.encounters, inputs.ids)
        note(f"screening: {plural(len(result.encounters), 'encounter')}, {result.stats.get('wall_s', 0):.1f} s")
        for oid, why in sorted(result.unusable.items()):
            note(f"not screened: {oid}: {why}")
        if result.unusable:
            degraded.append(f"{plural(len(result.unusable), 'object')} not screened over part or "
                            f"all of the window (see the summary or log)")
        result.stats["degraded"] = list(degraded)
        n_enc = len(result.encounters)
        stages["screen_s"] = result.stats.get("wall_s", 0.0)
        t_risk = time.perf_counter()
        add_risk(cfg, inputs, result, progress=report,
                 executor=executor if client is None else None)
        if pool is not None:
            pool.shutdown(wait=True)
            pool = None
        stages["risk_s"] = time.perf_counter() - t_risk
        result.stats["stages"] = stages
        report("risk", n_enc, n_enc)
        out = RunOutcome(cfg, inputs, result, started_utc=started, log_path=log_path,
                         degraded=degraded)
        if store is not None:
            from ..store.runs import commit_run

            report("storing", 0, 1)
            t_store = time.perf_counter()
            try:
                out.run_id, out.diff = commit_run(
                    store, name=cfg.name, config_snapshot=cfg.snapshot(), inputs_files=inputs.files,
                    result=result, started_utc=started, thresholds=cfg.thresholds,
                    tca_tolerance_s=cfg.event_tca_tolerance_s, log_path=log_path)
            except sqlite3.Error as exc:
                raise StoreError("the run was computed but not stored: "
                                 + describe_sqlite_error(store.path, exc, store.lock_wait_s)) from None
            out.store_path = store.path
            from ..store.received import rematch

            # this run's events join messages taken in now or before (screener receive)
            rematch(store, cfg.event_tca_tolerance_s)
            stages["store_s"] = time.perf_counter() - t_store
            report("storing", 1, 1)
            note(f"committed run {out.run_id} to {store.path}: {out.diff.counts()}")
        return out
    except ScreenerError as exc:
        note(f"failed: {exc}")
        raise
    except KeyboardInterrupt:
        note("interrupted; nothing stored for this run")
        raise
    finally:
        if pool is not None:     # a failed or cancelled run: its workers go with it
            pool.shutdown(wait=True, cancel_futures=True)
        if log:
            for h in list(log.handlers):
                h.close()
                log.removeHandler(h)
