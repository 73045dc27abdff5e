"""Settings read from the environment (each one named in the README)."""

from __future__ import annotations

import os

from .errors import ScreenerError


def env_float(name: str, default: float, lo: float, hi: float, unit: str) -> float:
    """$name as a number in [lo, hi], else `default` when unset; a bad value is an error that
    names the variable."""
    text = os.environ.get(name, "")
    try:
        value = float(text) if text else default
    except ValueError:
        value = float("nan")
    if not (lo <= value <= hi):
        raise ScreenerError(f"{name}={text!r}: give {unit} from {lo:g} to {hi:g}")
    return value
