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


def worker_initializer(parent_pid: int) -> None:
    from .memory import keep_freed_memory

    keep_freed_memory()
    threading.Thread(target=_watch, args=(parent_pid,), name="parent-watch", daemon=True).start()


def spawn_pool(max_workers: int):
    """A ProcessPoolExecutor of spawned workers tied to this process's life."""
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor

    return ProcessPoolExecutor(max_workers=max_workers, mp_context=mp.get_context("spawn"),
                               initializer=worker_initializer, initargs=(os.getpid(),))


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
