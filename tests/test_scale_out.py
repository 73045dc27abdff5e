"""Scale-out: the same screening on a real Dask cluster (LocalCluster on loopback, two worker
processes) gives the same encounters as the local run, to the microsecond and the millimetre."""

from __future__ import annotations

import dataclasses
import gc
import os

import pytest

distributed = pytest.importorskip("distributed")

from screener.config import load_config  # noqa: E402
from screener.gcpause import gc_paused  # noqa: E402
from screener.pipeline import execute  # noqa: E402

from .nightly import DEMO, screener  # noqa: E402

pytestmark = pytest.mark.timeout(300)


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as c:
        yield c


def test_dask_cluster_matches_local_run(cluster):
    cfg = dataclasses.replace(load_config(os.path.join(DEMO, "demo.toml")), window_days=1.0, workers=1)
    local = execute(cfg).result
    remote = execute(dataclasses.replace(cfg, workers=2, dask_scheduler=cluster.scheduler_address)).result
    key = lambda e: (e.primary, e.secondary, round(e.tca_s, 3))  # noqa: E731
    a, b = sorted(local.encounters, key=key), sorted(remote.encounters, key=key)
    assert len(a) == len(b) > 10
    for x, y in zip(a, b):
        assert (x.primary, x.secondary) == (y.primary, y.secondary)
        assert abs(x.tca_s - y.tca_s) < 1e-6
        assert abs(x.miss_km - y.miss_km) < 1e-6
        assert x.pc == pytest.approx(y.pc, rel=1e-9)
    assert gc.isenabled()           # the bulk stages pause the cyclic collector, then restore it


def test_paused_collector_comes_back_after_an_error_and_when_nested():
    @gc_paused
    def inner():
        assert not gc.isenabled()

    @gc_paused
    def outer(fail):
        inner()
        assert not gc.isenabled()   # still paused after the nested stage
        if fail:
            raise ValueError("stage failed")

    outer(False)
    assert gc.isenabled()
    with pytest.raises(ValueError):
        outer(True)
    assert gc.isenabled()


def test_kept_freed_memory_is_reused_and_can_be_turned_off():
    """memory.keep_freed_memory on glibc (mallopt's M_MMAP_MAX and M_TRIM_THRESHOLD, glibc's
    documented tunables): in a fresh process it takes effect once, large arrays freed and
    allocated again still work, and SCREENER_KEEP_FREED_MEMORY=0 leaves malloc alone."""
    import subprocess
    import sys

    probe = ("import numpy as np\n"
             "from screener.memory import keep_freed_memory\n"
             "ok = keep_freed_memory()\n"
             "for k in range(3):\n"
             "    a = np.full(20_000_000, float(k)); assert a.sum() == 2e7 * k; del a\n"
             "print(ok, keep_freed_memory())\n")
    env = {k: v for k, v in os.environ.items() if k != "SCREENER_KEEP_FREED_MEMORY"}
    out = subprocess.run([sys.executable, "-c", probe], env=env, capture_output=True, text=True,
                         check=True).stdout.split()
    import platform

    glibc = sys.platform.startswith("linux") and platform.libc_ver()[0] == "glibc"
    assert out == ([str(glibc)] * 2 if glibc else ["False", "False"])
    off = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, check=True,
                         env={**env, "SCREENER_KEEP_FREED_MEMORY": "0"}).stdout.split()
    assert off == ["False", "False"]


def test_unreachable_scheduler_is_a_clear_error():
    p = screener("screen", "--catalog", os.path.join(DEMO, "catalog.tle"), "--start",
                 "2026-12-02T00:00:00Z", "--days", "0.1", "--primaries",
                 os.path.join(DEMO, "fleet.json"), "--dask", "tcp://127.0.0.1:9", timeout=120)
    assert p.returncode == 2 and "Dask scheduler" in p.stderr and "Traceback" not in p.stderr


def test_a_worker_killed_mid_run_leaves_the_same_encounters(tmp_path):
    """One of two Dask worker processes is killed (SIGKILL) as soon as the first task is
    back: the scheduler runs the lost work on the other worker (and the nanny restarts the
    dead one), the run completes, and the stored run has the same encounters as a local run
    of the same configuration (to 1 us and 1 um)."""
    import signal

    from screener.store import Store, queries

    cfg = dataclasses.replace(load_config(os.path.join(DEMO, "demo.toml")), window_days=1.0, workers=2)
    killed = []
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as c, \
            distributed.Client(c) as client:
        pids = sorted(client.run(os.getpid).values())

        def progress(stage, done, total):
            if stage == "screening" and done >= 1 and not killed:
                os.kill(pids[0], signal.SIGKILL)
                killed.append(pids[0])

        with Store(str(tmp_path / "store.sqlite")) as store:
            out = execute(cfg, store=store, progress=progress, executor=client.get_executor())
            stored = queries.encounter_rows(store, out.run_id)
    assert killed
    local = execute(dataclasses.replace(cfg, workers=1)).result
    key = lambda e: (e.primary, e.secondary, round(e.tca_s, 3))  # noqa: E731
    a, b = sorted(local.encounters, key=key), sorted(out.result.encounters, key=key)
    assert len(a) == len(b) == len(stored) > 10
    for x, y in zip(a, b):
        assert (x.primary, x.secondary) == (y.primary, y.secondary)
        assert abs(x.tca_s - y.tca_s) < 1e-6 and abs(x.miss_km - y.miss_km) < 1e-9
