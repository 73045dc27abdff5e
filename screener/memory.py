"""Keeping freed memory in the process, so that the next large array reuses it.

glibc hands every block above its mmap threshold (32 MB at most) back to the kernel when it
is freed, so each task's arrays (hundreds of MB: states, interpolants, candidates) come back
as fresh pages that the kernel must fault in and zero again.  On virtual machines whose
memory the host backs lazily a fresh page costs far more than a reused one: measured on this
project's 2-core build machine, 70-200 MB/s for memory new to the process against about
6 GB/s once the process has held it (130 MB blocks).  With large blocks taken from the main
heap and never trimmed, a worker's second task reuses its first task's pages: one 30,000-object
all-vs-all task went from 11.5 to 8.0 s, its propagation from 5.7 to 2.5 s.

The price is that a worker keeps its peak footprint until it exits (the per-task peak is
reported as before: it is a high-water mark either way).  Blocks that other threads allocate
(a Dask worker's task threads) come from their own arenas and still fall back to mmap, so
this changes nothing there.  glibc only; elsewhere it does nothing.
SCREENER_KEEP_FREED_MEMORY=0 turns it off (for measuring both ways).
"""

from __future__ import annotations

import ctypes
import os
import sys

ENV = "SCREENER_KEEP_FREED_MEMORY"
_M_TRIM_THRESHOLD = -1
_M_MMAP_MAX = -4
_TRIM_THRESHOLD_BYTES = 2**31 - 1     # mallopt takes an int: give back only above 2 GB free
_done = False


def keep_freed_memory() -> bool:
    """Tell glibc's malloc to serve large blocks from the heap and keep what is freed; once
    per process.  True when the setting took effect."""
    global _done
    if _done:
        return True
    if os.environ.get(ENV, "1") == "0" or not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None)
        libc.gnu_get_libc_version      # glibc's own symbol: musl's mallopt does nothing
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    _done = (mallopt(_M_MMAP_MAX, 0) == 1) and (mallopt(_M_TRIM_THRESHOLD, _TRIM_THRESHOLD_BYTES) == 1)
    return _done
