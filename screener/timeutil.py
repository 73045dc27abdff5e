"""Time kept precise: split Julian dates (whole, fraction) and ISO 8601 at the edges.

The engine works in seconds from a window start that is itself a split Julian date, so no
single float ever carries an absolute Julian date into root finding.
"""

from __future__ import annotations

import datetime as _dt
import functools
import re

from .errors import ScreenerError

DAY_S = 86400.0
_JD_UNIX_EPOCH = 2440587.5

_ISO_RE = re.compile(
    r"^\s*(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})(?:\.(\d{1,9}))?)?)?\s*(Z|[+-]00:?00)?\s*$"
)
_DOY_RE = re.compile(
    r"^\s*(\d{4})-(\d{3})T(\d{2}):(\d{2}):(\d{2})(?:\.(\d{1,9}))?\s*Z?\s*$"
)


def parse_iso(text: str) -> _dt.datetime:
    """Parse ISO 8601 UTC (calendar or day-of-year form) to an aware datetime, µs precision.

    Raises ValueError with a short reason; callers wrap it into a ParseError with location.
    """
    m = _ISO_RE.match(text)
    if m:
        y, mo, d, hh, mm, ss, frac, _tz = m.groups()
        base = _dt.datetime(int(y), int(mo), int(d), int(hh or 0), int(mm or 0), int(ss or 0),
                            tzinfo=_dt.timezone.utc)
    else:
        m = _DOY_RE.match(text)
        if not m:
            raise ValueError(f"not an ISO 8601 UTC time: {text.strip()!r}")
        y, doy, hh, mm, ss, frac = m.groups()
        base = _dt.datetime(int(y), 1, 1, int(hh), int(mm), int(ss), tzinfo=_dt.timezone.utc)
        base += _dt.timedelta(days=int(doy) - 1)
    if frac:
        base += _dt.timedelta(microseconds=round(int(frac.ljust(9, "0")) / 1000))
    return base


def parse_start(text: str) -> _dt.datetime:
    """Parse a user-given start time; a ScreenerError (one line) if malformed."""
    try:
        return parse_iso(text)
    except ValueError as exc:
        raise ScreenerError(f"bad start time: {exc}") from None


def datetime_to_jd(t: _dt.datetime) -> tuple[float, float]:
    """UTC datetime -> split Julian date (whole day ending in .5, fraction of day), µs exact."""
    t = t.astimezone(_dt.timezone.utc)
    midnight = t.replace(hour=0, minute=0, second=0, microsecond=0)
    days = (midnight - _dt.datetime(1970, 1, 1, tzinfo=_dt.timezone.utc)).days
    whole = _JD_UNIX_EPOCH + days
    sec = (t - midnight).total_seconds()
    return whole, sec / DAY_S


def jd_to_datetime(jd: float, fr: float) -> _dt.datetime:
    """Split Julian date -> aware UTC datetime (rounded to the microsecond)."""
    whole = jd - _JD_UNIX_EPOCH
    days = int(whole // 1)
    rest = (whole - days) + fr
    extra = int(rest // 1)
    days += extra
    rest -= extra
    us = round(rest * DAY_S * 1e6)
    return _dt.datetime(1970, 1, 1, tzinfo=_dt.timezone.utc) + _dt.timedelta(days=days, microseconds=us)


def iso_us_many(jd, fr) -> list[str]:
    """iso_z(jd_to_datetime(jd[n], fr[n]), 6) of many split Julian dates: the same operations
    element by element in numpy (floor, round half to even), the text by numpy's datetime64."""
    import numpy as np

    whole = np.asarray(jd, float) - _JD_UNIX_EPOCH
    days = np.floor(whole)
    rest = (whole - days) + np.asarray(fr, float)
    extra = np.floor(rest)
    days = days + extra
    rest = rest - extra
    us = np.round(rest * DAY_S * 1e6)
    total = days.astype(np.int64) * 86_400_000_000 + us.astype(np.int64)
    return [f"{x}Z" for x in np.datetime_as_string(total.astype("datetime64[us]"), unit="us").tolist()]


def iso_z(t: _dt.datetime, digits: int = 6) -> str:
    """ISO 8601 UTC ending in Z, with `digits` decimals of seconds (3 = ms, 6 = µs)."""
    s = t.astimezone(_dt.timezone.utc).isoformat(timespec="microseconds")
    # "YYYY-MM-DDTHH:MM:SS.ffffff+00:00"; isoformat is several times strftime's speed
    return f"{s[:19]}.{s[20:20 + digits]}Z" if digits else s[:19] + "Z"


def offset_to_datetime(start: _dt.datetime, t_s: float) -> _dt.datetime:
    return start + _dt.timedelta(seconds=float(t_s))


@functools.lru_cache(maxsize=1)
def timescale():
    """Skyfield's timescale, built once per process from its built-in tables (no downloads)."""
    from skyfield.api import load

    return load.timescale(builtin=True)
