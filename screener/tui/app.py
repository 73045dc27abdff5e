"""The textual App and its one factory (used by `screener tui` and by the tests)."""

from __future__ import annotations

import asyncio
import os
import select
import signal
import sys
import threading
import time
from typing import Callable

from textual.app import App
from textual.binding import Binding

from ..errors import ScreenerError
from .too_small import MIN_COLS, MIN_ROWS, TooSmallScreen
from .triage import TriageScreen


# Once the terminal is gone, textual's shutdown may block writing to it; after this many
# seconds the process leaves without it (nothing of the store is at stake: a background
# screening commits in one transaction, and an interrupted one leaves nothing behind).
HANGUP_GRACE_S = 5.0


class ScreenerApp(App):
    CSS_PATH = "screener.tcss"
    TITLE = "screener"
    BINDINGS = [Binding("ctrl+q", "quit", "Quit", show=False)]

    def __init__(self, store_path: str, config_path: str | None = None,
                 now: Callable[[], float] | None = None, light: bool = False, **kw):
        super().__init__(**kw)
        self.store_path = store_path
        self.config_path = config_path
        self._now = now or time.time
        self._store = None
        self.store_problem: str | None = None
        if light:
            self.theme = "textual-light"

    def now_unix_s(self) -> float:
        return self._now()

    def on_mount(self) -> None:
        self.push_screen(TriageScreen())
        self.check_size()
        if not self.is_headless and sys.__stdin__ is not None and sys.__stdin__.isatty():
            self._stdin_poll = select.poll()
            self._stdin_poll.register(sys.__stdin__.fileno(), select.POLLIN)
            self.set_interval(1.0, self._check_hangup)
            # Hang-up (SSH dropped, tmux killed) and SIGTERM through the event loop, never as a
            # plain Python signal handler: one of those can run in the middle of the output
            # queue's put/get and leave textual's writer thread and the shutdown waiting on
            # each other for ever (seen under load).
            loop = asyncio.get_running_loop()
            for sig in (signal.SIGHUP, signal.SIGTERM):
                loop.add_signal_handler(sig, self._leave, 128 + sig)

    def _leave(self, return_code: int) -> None:
        """Exit now; if the shutdown has not finished HANGUP_GRACE_S later, leave anyway."""
        def deadline():
            time.sleep(HANGUP_GRACE_S)
            os._exit(return_code)

        threading.Thread(target=deadline, name="hangup-deadline", daemon=True).start()
        self.exit(return_code=return_code)

    def _check_hangup(self) -> None:
        """Leave when the terminal is gone (SSH dropped, tmux killed): the input reader would
        otherwise spin on end-of-file.  POLLHUP is looked at without reading any input."""
        for _fd, events in self._stdin_poll.poll(0):
            if events & (select.POLLHUP | select.POLLERR | select.POLLNVAL):
                self._leave(129)

    def on_resize(self, event) -> None:
        self.check_size()

    def check_size(self) -> None:
        w, h = self.size
        small = w < MIN_COLS or h < MIN_ROWS
        showing = isinstance(self.screen, TooSmallScreen)
        if small and not showing:
            self.push_screen(TooSmallScreen())
        elif not small and showing:
            self.pop_screen()

    # ----- store access for the screens
    def open_store(self):
        from ..store import Store

        if self._store is None:
            if not os.path.exists(self.store_path):
                return None
            try:
                self._store = Store(self.store_path, create=False)
            except ScreenerError as exc:
                self.store_problem = str(exc).split(": ", 1)[-1]
                self.notify(str(exc), severity="error", markup=False)
                return None
        return self._store

    def close_store(self) -> None:
        if self._store is not None:
            self._store.close()
            self._store = None

    def screening_config(self):
        """The configuration a new screening uses: --config, else the latest run's file."""
        from ..config import load_config
        from ..store import queries

        path = self.config_path
        if path is None:
            store = self.open_store()
            info = queries.run(store) if store else None
            path = info.config.get("path") if info else None
        if not path:
            self.notify("no configuration: start the TUI with --config FILE", severity="error")
            return None
        try:
            return load_config(path)
        except ScreenerError as exc:
            self.notify(str(exc), severity="error", timeout=10, markup=False)
            return None

    def outputs_folder(self, store) -> str:
        """Where the TUI writes files: the configuration's [outputs] folder (--config, else the
        latest run's configuration), else an exports folder beside the store."""
        from ..config import load_config
        from ..store import queries

        path = self.config_path
        if path is None:
            info = queries.run(store)
            path = info.config.get("path") if info else None
        if path:
            try:
                folder = load_config(path).outputs.folder
            except ScreenerError:
                folder = None
            if folder:
                return folder
        return os.path.join(store.folder, "exports")

    def export_cdm(self, encounter_id: int) -> str | None:
        from ..exports import write_event_cdm
        from ..store import queries

        store = self.open_store()
        d = queries.encounter_detail(store, encounter_id)
        folder = os.path.join(self.outputs_folder(store), f"run-{d['run_id']}", "cdm")
        try:
            os.makedirs(folder, exist_ok=True)
            info = queries.run(store, d["run_id"])
            man = {k: v.get("maneuverable") for k, v in info.config.get("members", {}).items()}
            path = write_event_cdm(folder, d, man)
        except OSError as exc:
            self.notify(f"export failed: {exc.strerror}", severity="error", markup=False)
            return None
        return self._written("CDM", path)

    def _written(self, what: str, path: str) -> str:
        self.notify(f"{what} written: {path}", timeout=8, markup=False)
        self.last_export = path
        return path

    def write_received(self, message_id: str) -> str | None:
        """Write a received CDM back out as it arrived, under the outputs folder's received/."""
        from ..exports.received_out import write_received

        store = self.open_store()
        try:
            path = write_received(store, message_id, os.path.join(self.outputs_folder(store), "received"))
        except ScreenerError as exc:
            self.notify(f"not written: {exc}", severity="error", markup=False)
            return None
        return self._written("received CDM", path)

    def write_received_row(self, row_id: int) -> str | None:
        """The latest message of the received-only event a list row stands for."""
        from ..store.received import thread_of_row

        msgs = thread_of_row(self.open_store(), row_id)
        return self.write_received(msgs[-1]["message_id"]) if msgs else None

    def on_unmount(self) -> None:
        self.close_store()


def make_app(store_path: str | None = None, config_path: str | None = None,
             now: Callable[[], float] | None = None, light: bool | None = None) -> ScreenerApp:
    from ..store import default_store_path

    if light is None:
        light = os.environ.get("SCREENER_THEME", "").lower() == "light"
    # Background screenings use spawned worker processes.  Start multiprocessing's resource
    # tracker now, while stderr is still the real one: once textual has redirected stderr the
    # tracker cannot be started (its stderr descriptor would be invalid).
    from multiprocessing import resource_tracker

    resource_tracker.ensure_running()
    return ScreenerApp(store_path or default_store_path(), config_path, now=now, light=light)
