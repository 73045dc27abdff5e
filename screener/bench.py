"""Benchmarks: prints figures and ratios (not a test).  `make bench` or `python -m screener.bench`.

Cases (seeded synthetic catalogs with engineered encounters; by default the catalog is shaped
like today's LEO: 9,196 satellites in eight thin constellation shells, synth.DENSE_SHELLS, the
rest a background across LEO, MEO, GEO and GTO; --uniform for the background alone):
- fleet: 10 LEO primaries in or next to the shells vs a 30,000-object catalog, 7 days, 5 km;
- all-vs-all: 5,000 / 10,000 / 30,000 objects (a seeded random subset keeps the mix), 1 day;
- manoeuvre trade: one engineered event (50 m miss) next to a shell, 5 burn times x 2
  in-track directions with root finding, then the chosen burn re-screened against the whole
  catalog over 3 days (target: under 10 s on 2 cores);
- the whole `screener screen` command (a subprocess, from start to exit) on the largest
  all-vs-all catalog written as a TLE file, with --json: what a user waits for.
Each case runs the screening, attaches risk (assumed covariances) and commits the run to a
real SQLite store, and prints the time and memory of each stage.  Ratios are against (a) the
catalog pass, every catalog object propagated with SatrecArray at 60 s over the window on one
core, and (b) naive dense pair sampling, measured on a subset.
"""

from __future__ import annotations

import argparse
import contextlib
import resource
import shutil
import time

import numpy as np
from sgp4.api import SatrecArray

from . import synth
from .screening import ScreeningRequest, Volume, screen
from .timeutil import datetime_to_jd, parse_iso


def peak_rss_mb() -> float:
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return max(own, kids) / 1024.0


def catalog_pass_s(records, jd0, fr0, days, step_s=60.0, chunk=2_000_000) -> float:
    sats = [r.make_satrec() for r in records]
    t = np.arange(0.0, days * 86400.0, step_s)
    per = max(1, chunk // len(t))
    t0 = time.perf_counter()
    for a in range(0, len(sats), per):
        SatrecArray(sats[a:a + per]).sgp4(np.full(len(t), jd0), fr0 + t / 86400.0)
    return time.perf_counter() - t0


def naive_pair_rate_s(prim, secs, jd0, fr0, step_s=10.0, hours=6.0) -> float:
    """Seconds per pair-day of the script a user would write: sample both, take distances."""
    t = np.arange(0.0, hours * 3600.0, step_s)
    jd = np.full(len(t), jd0)
    fr = fr0 + t / 86400.0
    t0 = time.perf_counter()
    p = prim.make_satrec()
    _, rp, _ = p.sgp4_array(jd, fr)
    for s in secs:
        _, rs, _ = s.make_satrec().sgp4_array(jd, fr)
        d = np.linalg.norm(rs - rp, axis=1)
        _ = np.nonzero((d[1:-1] < d[:-2]) & (d[1:-1] <= d[2:]))
    return (time.perf_counter() - t0) / (len(secs) * hours / 24.0)


def scenario(n, jd0, fr0, n_primaries=10, seed=3, dense=True):
    rng = np.random.default_rng(seed)
    if dense:   # each primary 1.5 km above or below a shell, at the shell's inclination
        shells = synth.DENSE_SHELLS
        prims = [synth.circular(f"9{k:08d}", f"BENCH-P{k}",
                                shells[k % len(shells)].alt_km + (1.5 if k % 2 else -1.5),
                                shells[k % len(shells)].inc_deg, rng.uniform(0, 360),
                                rng.uniform(0, 360), jd0, fr0 - 0.3) for k in range(n_primaries)]
    else:
        prims = [synth.circular(f"9{k:08d}", f"BENCH-P{k}", 500 + 25 * k, rng.uniform(40, 98),
                                rng.uniform(0, 360), rng.uniform(0, 360), jd0, fr0 - 0.3)
                 for k in range(n_primaries)]
    eng = []
    kinds = ["head-on", "crossing", "slow", "gto"]
    for k in range(2 * n_primaries):
        p = prims[k % n_primaries]
        eng.append(synth.engineer(p, jd0, fr0 + rng.uniform(0.05, 0.95), f"E{k:04d}", f"ENG-{k}",
                                  kinds[k % 4], miss_km=rng.uniform(0.1, 3.0), rng=rng))
    shells = synth.constellation_shells(jd0, fr0, id_of=lambda k: f"S{k}") if dense else []
    cat = synth.background_catalog(n - len(eng) - len(shells), jd0, fr0, seed=seed,
                                   id_of=lambda k: f"B{k}")
    rest = shells + cat
    order = rng.permutation(len(rest))     # subsets keep the shell / background mix
    return prims, eng, eng + [rest[k] for k in order]


def with_risk_and_store(res, folder: str, workers: int = 2, executor=None, release=None) -> dict:
    """Attach risk (as `screener screen` does: on the workers when there are many encounters)
    and commit the run to a real store; wall seconds of each.  `release()`, if given, is
    called between the two: `execute` shuts its pool down before the store (measured with the
    idle workers kept alive, the 70,548-encounter commit took 5.0 s against 4.1 s)."""
    import datetime as dt
    import os

    from .pipeline.run import risk_in_workers, wants_workers
    from .risk.attach import DEFAULT_OBJECT_RADIUS_M, attach_risk
    from .risk.attention import Thresholds
    from .risk.covariance import CovarianceSources
    from .store import Store
    from .store.runs import commit_run
    from .timeutil import iso_z

    t0 = time.perf_counter()
    encs = res.encounters
    if workers > 1 and wants_workers(encs):
        radii = {oid: DEFAULT_OBJECT_RADIUS_M for e in encs for oid in (e.primary, e.secondary)}
        risk_in_workers(encs, [], {}, None, radii, Thresholds(), workers, executor)
    else:
        attach_risk(encs, CovarianceSources(oems=[], configured={}, history=None))
    if release is not None:
        release()
    risk_s = time.perf_counter() - t0
    path = os.path.join(folder, f"bench-{len(res.encounters)}-{time.time_ns()}.sqlite")
    t0 = time.perf_counter()
    with Store(path) as store:
        commit_run(store, name="bench", config_snapshot={}, inputs_files=[], result=res,
                   started_utc=iso_z(dt.datetime.now(dt.timezone.utc), 3), thresholds=Thresholds(),
                   tca_tolerance_s=600.0)
    return {"risk_s": risk_s, "store_s": time.perf_counter() - t0}


@contextlib.contextmanager
def _pool(args):
    """The Dask executor when there is one, else one spawn pool for the screening and the
    risk stage, as `screener screen` and `screener run` use (started inside the timing)."""
    if args.executor is not None or args.workers <= 1:
        yield args.executor
        return
    from .workers import spawn_pool

    pool = spawn_pool(args.workers)
    try:
        yield pool
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _release(args, ex):
    """What shuts the benchmark's own pool down after the risk stage (None for Dask's)."""
    return ex.shutdown if ex is not None and ex is not args.executor else None


def print_stages(res, extra: dict, wall_s: float) -> None:
    st = res.stats.get("task_stage_s", {})
    parts = "  ".join(f"{k} {v:.1f}" for k, v in st.items())
    print(f"  stages: screening wall {res.stats.get('wall_s', 0):.1f} s (task CPU s: {parts});  "
          f"risk {extra['risk_s']:.1f} s;  store {extra['store_s']:.1f} s;  whole {wall_s:.1f} s;  "
          f"task peak RSS {res.stats.get('task_peak_rss_mb', 0):.0f} MB")


def found(res, eng):
    ids = {e.secondary for e in res.encounters} | {e.primary for e in res.encounters}
    return sum(1 for e in eng if e.catalog_id in ids)


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(prog="screener.bench")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--sizes", default="5000,10000,30000")
    ap.add_argument("--fleet-days", type=float, default=7.0)
    ap.add_argument("--uniform", action="store_true", help="background catalog only (no shells)")
    ap.add_argument("--skip-fleet", action="store_true")
    ap.add_argument("--skip-all-vs-all", action="store_true")
    ap.add_argument("--skip-trade", action="store_true")
    ap.add_argument("--skip-command", action="store_true",
                    help="leave out the whole `screener screen` command on the largest size")
    ap.add_argument("--dask", action="store_true", help="run the screenings' tasks on a Dask "
                    "LocalCluster on loopback (one single-threaded worker process per --workers, "
                    "--worker-memory each)")
    ap.add_argument("--worker-memory", default="4GiB")
    args = ap.parse_args(argv)
    import tempfile

    from .memory import keep_freed_memory

    keep_freed_memory()      # as `screener screen` and `screener run` do (memory.py)

    tmp = tempfile.mkdtemp(prefix="screener-bench-")
    jd0, fr0 = datetime_to_jd(parse_iso("2026-12-02T00:00:00Z"))
    vol = Volume.sphere(5.0)
    sizes = [int(s) for s in args.sizes.split(",")]
    big = max(sizes)

    prims, eng, cat = scenario(big, jd0, fr0, dense=not args.uniform)
    n_shell = sum(1 for r in cat if r.catalog_id.startswith("S"))
    print(f"catalog: {len(cat)} objects, {n_shell} of them in {len(synth.DENSE_SHELLS) if n_shell else 0} "
          f"thin shells")
    args.executor, cluster = None, None
    if args.dask:
        from dask.distributed import Client, LocalCluster

        cluster = LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=True,
                               memory_limit=args.worker_memory, host="127.0.0.1",
                               dashboard_address=None)
        client = Client(cluster)
        args.executor = client.get_executor()
        print(f"Dask LocalCluster: {args.workers} worker processes, {args.worker_memory} each")
    try:
        if not args.skip_trade:
            run_trade(args, prims[0], cat, jd0, fr0, vol)
        if not args.skip_fleet:
            run_fleet(args, prims, eng, cat, jd0, fr0, vol, tmp)
        if not args.skip_all_vs_all:
            run_all_vs_all(args, sizes, prims, eng, cat, jd0, fr0, vol, tmp)
        if not args.skip_command and not args.dask:
            run_command(args, big, prims, cat, jd0, fr0, tmp)
    finally:
        if cluster is not None:
            client.close()
            cluster.close()
        shutil.rmtree(tmp, ignore_errors=True)     # the stores it wrote (about 300 MB each at 30,000)


def run_fleet(args, prims, eng, cat, jd0, fr0, vol, tmp) -> None:
    print(f"== fleet: {len(prims)} primaries vs {len(cat)} objects, {args.fleet_days:g} days, 5 km")
    t0 = time.perf_counter()
    with _pool(args) as ex:
        res = screen(ScreeningRequest(catalog=cat, primaries=prims, jd0=jd0, fr0=fr0,
                                      duration_s=args.fleet_days * 86400, volume=vol,
                                      workers=args.workers), executor=ex)
        extra = with_risk_and_store(res, tmp, args.workers, ex, _release(args, ex))
    wall = time.perf_counter() - t0
    cp1 = catalog_pass_s(cat, jd0, fr0, 1.0)
    cp = cp1 * args.fleet_days  # propagation cost is linear in samples: 1 day measured, scaled
    naive = naive_pair_rate_s(prims[0], cat[:300], jd0, fr0) * len(prims) * len(cat) * args.fleet_days
    print(f"wall {wall:.1f} s  peak RSS {peak_rss_mb():.0f} MB  encounters {len(res.encounters)}  "
          f"engineered found {found(res, eng)}/{len(eng)}")
    print_stages(res, extra, wall)
    print(f"catalog pass (60 s, 1 core): {cp1:.1f} s per day measured -> {cp:.1f} s for the window;"
          f"  ratio {wall / cp:.3f} x  (target <= 0.05)")
    print(f"naive dense sampling (10 s, extrapolated from 300 pairs): {naive:.0f} s;  "
          f"ratio {wall / naive:.5f} x")


def run_trade(args, prim, cat, jd0, fr0, vol, days: float = 3.0) -> None:
    """The trade of one engineered event, as `screener maneuver` runs it, without the store."""
    from .maneuver.closest import Covariances
    from .maneuver.ephemeris_out import manoeuvred_oem_text, read_back
    from .maneuver.burn import apply_burn
    from .maneuver.trade import Target, TradeEvent, burn_times, evaluate, run_trade as trade_of
    from .maneuver.tracks import Sgp4Track
    from .propagation.cowell import model_for_bstar
    from .risk.attach import attach_risk
    from .risk.covariance import CovarianceSources, assumed

    print(f"== manoeuvre trade: 5 burn times x 2 directions, re-screen vs {len(cat)} objects "
          f"from the burn to the end of a {days:g}-day window")
    tca_s = 1.5 * 86400.0
    sec = synth.engineer(prim, jd0, fr0 + tca_s / 86400.0, "T0001", "TRADE-SEC", "crossing",
                         miss_km=0.05, rng=np.random.default_rng(9))
    t_all = time.perf_counter()
    P, S = Sgp4Track(prim, jd0, fr0), Sgp4Track(sec, jd0, fr0)
    cov = Covariances(assumed("LEO", 1.0).cov_rtn_km2, assumed("LEO", 1.0).cov_rtn_km2, 10.0,
                      "assumed covariance")
    ev = TradeEvent(prim.catalog_id, prim.name, sec.catalog_id, sec.name, jd0, fr0, days * 86400.0,
                    tca_s, 0.05, 0.0, 10.0, prim.orbit().period_s, P, S, cov)
    a, risk = evaluate(ev, P)
    ev.miss_km, ev.pc, ev.relative_speed_km_s = a.miss_km, risk["pc"], a.relative_speed_km_s
    model = model_for_bstar(prim.bstar_per_earth_radius)
    times, _notes = burn_times(ev)
    t0 = time.perf_counter()
    trade = trade_of(ev, Target("pc", 1e-5), times, ("+T", "-T"), model=model)
    trade_s = time.perf_counter() - t0
    ch = trade.chosen
    t0 = time.perf_counter()
    track = apply_burn(P, ch.burn_s, ch.dv_rtn_m_s, ev.window_s, model)
    oem = read_back(manoeuvred_oem_text(track, ch.burn_s, ev.window_s, prim.name, prim.catalog_id,
                                        "bench burn", None, ev.primary_period_s))
    oem_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    res = screen(ScreeningRequest(catalog=[r for r in cat if r.catalog_id != prim.catalog_id],
                                  primary_oems=[oem], jd0=jd0, fr0=fr0 + ch.burn_s / 86400.0,
                                  duration_s=ev.window_s - ch.burn_s, volume=vol,
                                  workers=args.workers), executor=args.executor)
    attach_risk(res.encounters, CovarianceSources())
    rescreen_s = time.perf_counter() - t0
    wall = time.perf_counter() - t_all
    print(f"event: miss {ev.miss_km * 1e3:.0f} m, Pc {ev.pc:.1e};  chosen {ch.dv_m_s * 100:.2f} cm/s "
          f"{ch.direction} {(ev.tca_s - ch.burn_s) / ev.primary_period_s:.1f} orbits before TCA "
          f"-> miss {ch.approach.miss_km * 1e3:.0f} m, Pc {ch.pc:.1e}")
    print(f"  stages: trade {trade_s:.1f} s ({len(trade.options)} options);  OEM {oem_s:.1f} s;  "
          f"re-screen {rescreen_s:.1f} s ({len(res.encounters)} encounters);  whole {wall:.1f} s "
          f"(target < 10 s)")


def run_all_vs_all(args, sizes, prims, eng, cat, jd0, fr0, vol, tmp) -> None:
    for n in sizes:
        sub = prims + cat[:n - len(prims)]  # the engineered pairs' primaries take part too
        eng_in = [e for e in eng if e in sub]
        print(f"== all-vs-all: {n} objects, 1 day, 5 km")
        t0 = time.perf_counter()
        with _pool(args) as ex:
            res = screen(ScreeningRequest(catalog=sub, jd0=jd0, fr0=fr0, duration_s=86400.0,
                                          volume=vol, workers=args.workers), executor=ex)
            extra = with_risk_and_store(res, tmp, args.workers, ex, _release(args, ex))
        wall = time.perf_counter() - t0
        cpn = catalog_pass_s(sub, jd0, fr0, 1.0)
        print(f"wall {wall:.1f} s  peak RSS {peak_rss_mb():.0f} MB  encounters {len(res.encounters)}  "
              f"engineered found {found(res, eng_in)}/{len(eng_in)}  candidates {res.stats['candidates']}")
        print_stages(res, extra, wall)
        print(f"catalog pass {cpn:.1f} s;  ratio {wall / cpn:.2f} x  (target <= 1.0);  "
              f"{res.stats['tasks']} tasks, per-task peak RSS {res.stats.get('task_peak_rss_mb', 0):.0f} MB")


def run_command(args, n, prims, cat, jd0, fr0, tmp) -> None:
    """The whole `screener screen` command as a user runs it, all-vs-all over the largest
    catalog written as a TLE file (catalog numbers 1..n in place of the invented ids, which a
    TLE cannot hold), 1 day, --json: wall time from start to exit against the catalog pass."""
    import dataclasses
    import json
    import os
    import subprocess
    import sys

    sub = prims + cat[:n - len(prims)]
    path, out = os.path.join(tmp, "catalog.tle"), os.path.join(tmp, "encounters.json")
    with open(path, "w", encoding="ascii") as fh:
        for k, r in enumerate(sub):
            l1, l2 = dataclasses.replace(r, catalog_id=str(k + 1), tle_lines=None).to_tle()
            fh.write(f"{r.name[:24]}\n{l1}\n{l2}\n")
    print(f"== screener screen command: {n} objects in a TLE file, all-vs-all, 1 day, 5 km, --json")
    cmd = [sys.executable, "-m", "screener.cli.main", "screen", "--catalog", path, "--start",
           "2026-12-02T00:00:00Z", "--days", "1", "--json", out, "--quiet",
           "--workers", str(args.workers)]
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True)
    wall = time.perf_counter() - t0
    with open(out, encoding="utf-8") as fh:
        doc = json.load(fh)
    st = doc["stages"]
    cp = catalog_pass_s(sub, jd0, fr0, 1.0)
    child_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    print(f"wall {wall:.1f} s (read {st['read_s']:.1f}, screen {st['screen_s']:.1f}, risk "
          f"{st['risk_s']:.1f}; the rest is starting, the JSON and exiting)  encounters "
          f"{len(doc['encounters'])}  largest process peak RSS {child_mb:.0f} MB")
    print(f"catalog pass {cp:.1f} s;  ratio {wall / cp:.2f} x  (target <= 1.0)")


if __name__ == "__main__":
    main()
