"""Help generated from the real key bindings of the screen it was opened from."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from .widgets import CautionBar

KEY_NAMES = {"escape": "Esc", "enter": "Enter", "slash": "/", "question_mark": "?",
             "pageup": "PgUp", "pagedown": "PgDn", "space": "Space", "tab": "Tab",
             "left_square_bracket": "[", "right_square_bracket": "]", "plus": "+", "minus": "-",
             "left": "Left", "right": "Right", "up": "Up", "down": "Down", "home": "Home",
             "end": "End", "backspace": "Backspace"}


def _keys(binding_key: str) -> str:
    """A binding's keys as a person types them ("[", "Ctrl+q"), never textual's key names."""
    def one(k: str) -> str:
        if k in KEY_NAMES:
            return KEY_NAMES[k]
        if k.startswith("ctrl+"):
            return "Ctrl+" + k[5:]
        return k.replace("_", " ")
    return ", ".join(one(k) for k in binding_key.split(","))


def binding_rows(*owners) -> list[tuple[str, str]]:
    """(keys, description) for every binding of the given widgets/screens/app classes."""
    seen, rows = set(), []
    for owner in owners:
        for b in getattr(owner, "BINDINGS", []):
            if isinstance(b, tuple):
                b = Binding(*b)
            if b.key in seen or not b.description:
                continue
            seen.add(b.key)
            rows.append((_keys(b.key), b.description))
    return rows


class HelpScreen(ModalScreen):
    BINDINGS = [Binding("escape,q,question_mark", "dismiss", "Close help")]

    def __init__(self, title: str, owners) -> None:
        super().__init__()
        self._title = title
        self._rows = binding_rows(*owners)

    def compose(self) -> ComposeResult:
        width = max(len(k) for k, _ in self._rows) if self._rows else 4
        text = "\n".join(f"  {k:<{width}}  {d}" for k, d in self._rows)
        with VerticalScroll(id="help-box"):
            yield Static(f"Keys: {self._title}\n\n{text}\n\nESCDELAY (ms, default 100) sets how long "
                         f"Esc waits for a following key; raise it on slow links.", id="help-text",
                         markup=False)
        yield CautionBar()

    def action_dismiss(self) -> None:
        self.dismiss()
