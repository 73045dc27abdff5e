"""Small CLI helpers: warnings on stderr, the screening volume from options."""

from __future__ import annotations

import sys

from ..errors import ScreenerError
from ..screening import Volume


def warn(msg: str) -> None:
    print(f"screener: {msg}", file=sys.stderr)


def parse_volume(radius_km: float | None, ric_km: str | None) -> Volume:
    if ric_km:
        try:
            r, i, c = (float(x) for x in ric_km.split(","))
        except ValueError:
            raise ScreenerError(f"--ric-km wants three numbers R,I,C in km, got {ric_km!r}") from None
        if not min(r, i, c) > 0:
            raise ScreenerError("--ric-km half-sizes must be positive")
        return Volume.ellipsoid(r, i, c)
    r = 5.0 if radius_km is None else radius_km
    if not r > 0:
        raise ScreenerError("--radius-km must be positive")
    return Volume.sphere(r)
