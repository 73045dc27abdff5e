"""Small shared widgets: the caution bar every screen carries."""

from __future__ import annotations

from textual.widgets import Static

from .. import CAUTION


class CautionBar(Static):
    """Always on screen: advisory only."""

    def __init__(self) -> None:
        super().__init__(CAUTION, classes="caution")
