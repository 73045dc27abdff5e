"""Errors that say what was wrong, where, and what to do instead."""

from __future__ import annotations


class ScreenerError(Exception):
    """Base of every error the project raises on purpose (the CLI prints these, no traceback)."""


class ParseError(ScreenerError):
    """A malformed input record: names the file, line (1-based), column (1-based) and reason."""

    def __init__(self, reason: str, path: str = "<input>", line: int | None = None,
                 column: int | None = None):
        self.reason = reason
        self.path = str(path)
        self.line = line
        self.column = column
        super().__init__(self.where() + ": " + reason)

    def where(self) -> str:
        out = self.path
        if self.line is not None:
            out += f":{self.line}"
            if self.column is not None:
                out += f":{self.column}"
        return out


class ConfigError(ScreenerError):
    """A bad option or configuration value."""


class PropagationError(ScreenerError):
    """A request the propagation layer cannot honour (e.g. extrapolating an ephemeris)."""


class StoreError(ScreenerError):
    """The run store cannot be opened or written (CLI exit code 4)."""
