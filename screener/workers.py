"""Worker processes that never outlive the process that started them.

A screening's spawn pool is started with `worker_initializer(os.getpid())`: each worker then
watches its parent and leaves at once when the parent is gone (kill -9 of a nightly run, a
crashed TUI), instead of computing on for minutes and holding a cron wrapper's pipes open.
Each worker also keeps the memory its tasks free for the next one (memory.py).
"""

from __future__ import annotations

import os
import threading
import time

PARENT_POLL_S = 0.5


def _watch(parent_pid: int) -> None:
    while True:
        time.sleep(PARENT_POLL_S)
        if os.getppid() != parent_pid:      # re-parented: the parent has died
            os._exit(1)


def worker_initializer(parent_pid: int, preload: tuple[str, ...] = ()) -> None:
    import importlib

    from .memory import keep_freed_memory

    keep_freed_memory()
    threading.Thread(target=_watch, args=(parent_pid,), name="parent-watch", daemon=True).start()
    for name in preload:
        importlib.import_module(name)


# what a screening's workers import as they start (the tasks and the risk chunks need it)
ENGINE_MODULES = ("screener.screening.engine",)


def _started() -> None:
    """A first call, so that the pool starts its worker processes now."""


def spawn_pool(max_workers: int, preload: tuple[str, ...] = ()):
    """A ProcessPoolExecutor of spawned workers tied to this process's life.  With `preload`
    (module names) the workers start at once and import those modules while the caller goes
    on, instead of when the first call arrives: `screener screen` and `screener run` start
    their pool before reading the inputs, so that the workers' start (about 0.6 s each, most
    of it importing the screening engine) is over when the first task is sent."""
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor

    pool = ProcessPoolExecutor(max_workers=max_workers, mp_context=mp.get_context("spawn"),
                               initializer=worker_initializer, initargs=(os.getpid(), preload))
    if preload:
        for _ in range(max_workers):
            pool.submit(_started)
    return pool


def result_of(fut, what: str):
    """A future's result; a worker that died under it (killed, out of memory, a cluster node
    the scheduler gave up on) is a clear ScreenerError naming `what`, never a traceback, and
    the caller stores nothing of the run."""
    from .errors import ScreenerError

    try:
        return fut.result()
    except ScreenerError:
        raise
    except Exception as exc:  # noqa: BLE001 - any executor's failure type, named in the message
        raise ScreenerError(f"{what} failed on its worker ({type(exc).__name__}: "
                            f"{str(exc)[:200]}); nothing of this run was stored") from None
