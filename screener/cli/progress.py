"""Progress for long commands: a rich bar with stage and ETA on a terminal; on anything else a
few plain timestamped lines (stage start, each quarter, stage end), no control characters."""

from __future__ import annotations

import datetime as dt
import sys


class PlainProgress:
    def __init__(self, stream=None):
        self.stream = stream or sys.stderr
        self._last: dict[str, int] = {}

    def __call__(self, stage: str, done: int, total: int) -> None:
        q = 4 * done // total if total else 4
        if self._last.get(stage) == q:
            return
        self._last[stage] = q
        stamp = dt.datetime.now(dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
        word = "started" if done == 0 else "done" if done >= total else f"{done}/{total}"
        print(f"{stamp} {stage}: {word}", file=self.stream, flush=True)

    def close(self) -> None:
        pass


class BarProgress:
    def __init__(self):
        from rich.progress import (BarColumn, MofNCompleteColumn, Progress, TextColumn,
                                   TimeElapsedColumn, TimeRemainingColumn)

        self._p = Progress(TextColumn("{task.description:<10}"), BarColumn(), MofNCompleteColumn(),
                           TimeElapsedColumn(), TextColumn("ETA"), TimeRemainingColumn(),
                           transient=False, console=_console())
        self._tasks: dict[str, int] = {}
        self._p.start()

    def __call__(self, stage: str, done: int, total: int) -> None:
        if stage not in self._tasks:
            self._tasks[stage] = self._p.add_task(stage, total=max(total, 1))
        self._p.update(self._tasks[stage], completed=done, total=max(total, 1))

    def close(self) -> None:
        self._p.stop()


def _console():
    from rich.console import Console

    return Console(stderr=True)


def make_progress(quiet: bool):
    if quiet:
        return None
    return BarProgress() if sys.stderr.isatty() else PlainProgress()
