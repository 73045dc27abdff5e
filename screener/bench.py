"""Benchmarks: prints figures and ratios (not a test).  `make bench` or `python -m screener.bench`.

Cases (seeded synthetic catalogs with engineered encounters):
- fleet: 10 LEO primaries vs a 30,000-object catalog, 7 days, 5 km sphere;
- all-vs-all: 5,000 / 10,000 / 30,000 objects, 1 day, 5 km sphere.
Ratios are against (a) the catalog pass, every catalog object propagated with SatrecArray at
60 s over the window on one core, and (b) naive dense pair sampling, measured on a subset.
"""

from __future__ import annotations

import argparse
import resource
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


def scenario(n, jd0, fr0, n_primaries=10, seed=3):
    rng = np.random.default_rng(seed)
    prims = [synth.circular(f"9{k:08d}", f"BENCH-P{k}", 500 + 25 * k, rng.uniform(40, 98),
                            rng.uniform(0, 360), rng.uniform(0, 360), jd0, fr0 - 0.3)
             for k in range(n_primaries)]
    eng = []
    kinds = ["head-on", "crossing", "slow", "gto"]
    for k in range(2 * n_primaries):
        p = prims[k % n_primaries]
        eng.append(synth.engineer(p, jd0, fr0 + rng.uniform(0.05, 0.95), f"E{k:04d}", f"ENG-{k}",
                                  kinds[k % 4], miss_km=rng.uniform(0.1, 3.0), rng=rng))
    cat = synth.background_catalog(n - len(eng), jd0, fr0, seed=seed, id_of=lambda k: f"B{k}")
    return prims, eng, eng + cat


def found(res, eng):
    ids = {e.secondary for e in res.encounters} | {e.primary for e in res.encounters}
    return sum(1 for e in eng if e.catalog_id in ids)


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(prog="screener.bench")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--sizes", default="5000,10000,30000")
    ap.add_argument("--fleet-days", type=float, default=7.0)
    args = ap.parse_args(argv)
    jd0, fr0 = datetime_to_jd(parse_iso("2026-12-02T00:00:00Z"))
    vol = Volume.sphere(5.0)
    sizes = [int(s) for s in args.sizes.split(",")]
    big = max(sizes)

    prims, eng, cat = scenario(big, jd0, fr0)
    print(f"== fleet: {len(prims)} primaries vs {len(cat)} objects, {args.fleet_days:g} days, 5 km")
    t0 = time.perf_counter()
    res = screen(ScreeningRequest(catalog=cat, primaries=prims, jd0=jd0, fr0=fr0,
                                  duration_s=args.fleet_days * 86400, volume=vol, workers=args.workers))
    wall = time.perf_counter() - t0
    cp1 = catalog_pass_s(cat, jd0, fr0, 1.0)
    cp = cp1 * args.fleet_days  # propagation cost is linear in samples: 1 day measured, scaled
    naive = naive_pair_rate_s(prims[0], cat[:300], jd0, fr0) * len(prims) * len(cat) * args.fleet_days
    print(f"wall {wall:.1f} s  peak RSS {peak_rss_mb():.0f} MB  encounters {len(res.encounters)}  "
          f"engineered found {found(res, eng)}/{len(eng)}")
    print(f"catalog pass (60 s, 1 core): {cp1:.1f} s per day measured -> {cp:.1f} s for the window;"
          f"  ratio {wall / cp:.3f} x  (target <= 0.1)")
    print(f"naive dense sampling (10 s, extrapolated from 300 pairs): {naive:.0f} s;  "
          f"ratio {wall / naive:.5f} x")

    for n in sizes:
        sub = prims + cat[:n - len(prims)]  # the engineered pairs' primaries take part too
        eng_in = [e for e in eng if e in sub]
        print(f"== all-vs-all: {n} objects, 1 day, 5 km")
        t0 = time.perf_counter()
        res = screen(ScreeningRequest(catalog=sub, jd0=jd0, fr0=fr0, duration_s=86400.0,
                                      volume=vol, workers=args.workers))
        wall = time.perf_counter() - t0
        cpn = catalog_pass_s(sub, jd0, fr0, 1.0)
        print(f"wall {wall:.1f} s  peak RSS {peak_rss_mb():.0f} MB  encounters {len(res.encounters)}  "
              f"engineered found {found(res, eng_in)}/{len(eng_in)}  candidates {res.stats['candidates']}")
        print(f"catalog pass {cpn:.1f} s;  ratio {wall / cpn:.2f} x  (target <= 1.0)")


if __name__ == "__main__":
    main()
