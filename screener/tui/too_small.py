"""Shown instead of the screen below when the terminal is smaller than 80 x 24."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.screen import ModalScreen
from textual.widgets import Static

MIN_COLS, MIN_ROWS = 80, 24


class TooSmallScreen(ModalScreen):
    BINDINGS = [("q", "app.quit", "Quit")]

    def compose(self) -> ComposeResult:
        yield Static("", id="too-small")

    def on_mount(self) -> None:
        self.update_text()

    def on_resize(self) -> None:
        self.update_text()
        self.app.check_size()

    def update_text(self) -> None:
        w, h = self.app.size
        self.query_one("#too-small", Static).update(
            f"Terminal too small: {w} x {h}.\nscreener needs at least {MIN_COLS} x {MIN_ROWS}.\n"
            f"Enlarge the window (or press q to quit).\n\nAdvisory only.")
