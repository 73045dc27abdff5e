"""Frame rotations through skyfield (offline, built-in timescale): GCRF/EME2000 <-> TEME -> ITRS.

EME2000 is treated as GCRF: the frame bias between them (~0.02 arcsec, under 1 m at LEO radius)
is below this tool's screening accuracy and is not applied.
"""

from __future__ import annotations

import numpy as np

from ..timeutil import jd_to_datetime, timescale

INERTIAL_ALIASES = ("GCRF", "EME2000", "ICRF")
EARTH_FIXED_ALIASES = ("ITRF", "ITRF2000", "ITRF-93", "ITRF-97")


def skyfield_times(jd0: float, fr0: float, t_s: np.ndarray):
    """Skyfield Time array for UTC seconds t_s from the split Julian date (jd0, fr0)."""
    start = jd_to_datetime(jd0, 0.0)
    ts = timescale()
    return ts.utc(start.year, start.month, start.day, 0, 0, fr0 * 86400.0 + np.asarray(t_s, float))


def _stack(R: np.ndarray, m: int) -> np.ndarray:
    """skyfield gives (3,3) or (3,3,m); return (m,3,3)."""
    if R.ndim == 2:
        return np.broadcast_to(R, (m, 3, 3))
    return np.moveaxis(R, -1, 0)


# Times per skyfield call: its nutation series holds arrays of (terms x times), about 340 MB
# per array for 62,000 times (the altitudes of a 31,000-encounter run), so long time lists go
# through in chunks (each time's rotation is computed on its own: the same matrices).
FRAME_CHUNK_TIMES = 2048


def _chunked(fn, jd0: float, fr0: float, t_s) -> np.ndarray:
    t_s = np.atleast_1d(np.asarray(t_s, float))
    if len(t_s) <= FRAME_CHUNK_TIMES:
        return fn(jd0, fr0, t_s)
    return np.concatenate([fn(jd0, fr0, t_s[a:a + FRAME_CHUNK_TIMES])
                           for a in range(0, len(t_s), FRAME_CHUNK_TIMES)])


def _gcrf_to_teme(jd0: float, fr0: float, t_s: np.ndarray) -> np.ndarray:
    from skyfield.sgp4lib import TEME

    t = skyfield_times(jd0, fr0, t_s)
    return np.array(_stack(TEME.rotation_at(t), len(t_s)))


def _teme_to_itrs(jd0: float, fr0: float, t_s: np.ndarray) -> np.ndarray:
    from skyfield.framelib import itrs
    from skyfield.sgp4lib import TEME

    t = skyfield_times(jd0, fr0, t_s)
    m = len(t_s)
    R_teme = _stack(TEME.rotation_at(t), m)
    R_itrs = _stack(itrs.rotation_at(t), m)
    return np.einsum("mij,mkj->mik", R_itrs, R_teme)  # R_itrs @ R_teme.T


def gcrf_to_teme_matrices(jd0: float, fr0: float, t_s: np.ndarray) -> np.ndarray:
    return _chunked(_gcrf_to_teme, jd0, fr0, t_s)


def teme_to_itrs_matrices(jd0: float, fr0: float, t_s: np.ndarray) -> np.ndarray:
    return _chunked(_teme_to_itrs, jd0, fr0, t_s)


def teme_to_itrs_km(r_teme_km: np.ndarray, jd0: float, fr0: float, t_s: np.ndarray) -> np.ndarray:
    """Positions (m,3) TEME -> ITRS (km), one time per row."""
    R = teme_to_itrs_matrices(jd0, fr0, t_s)
    return np.einsum("mij,mj->mi", R, np.atleast_2d(r_teme_km))


def to_teme(frame: str, r_km: np.ndarray, v_km_s: np.ndarray, jd0: float, fr0: float,
            t_s: np.ndarray):
    """States (m,3) given in `frame` at times t_s -> TEME.  Velocity transport term included
    for Earth-fixed input (omega x r); the slow precession rate of inertial->TEME is neglected."""
    frame = frame.upper()
    if frame == "TEME":
        return r_km, v_km_s
    if frame in INERTIAL_ALIASES:
        R = gcrf_to_teme_matrices(jd0, fr0, t_s)
        return np.einsum("mij,mj->mi", R, r_km), np.einsum("mij,mj->mi", R, v_km_s)
    if frame in EARTH_FIXED_ALIASES:
        R = teme_to_itrs_matrices(jd0, fr0, t_s)  # TEME -> ITRS; use transpose
        omega = np.array([0.0, 0.0, 7.292115146706979e-5])  # rad/s, IERS (common practice)
        v_rot = v_km_s + np.cross(omega, r_km)
        return np.einsum("mji,mj->mi", R, r_km), np.einsum("mji,mj->mi", R, v_rot)
    raise ValueError(f"frame {frame} not supported")


def rotation_to_teme(frame: str, jd0: float, fr0: float, t_s: np.ndarray) -> np.ndarray:
    """(m, 3, 3) matrices taking position vectors (or position covariances, as R C R^T) from
    `frame` to TEME at each time; identity for TEME."""
    frame = frame.upper()
    m = len(np.atleast_1d(t_s))
    if frame == "TEME":
        return np.broadcast_to(np.eye(3), (m, 3, 3))
    if frame in INERTIAL_ALIASES:
        return gcrf_to_teme_matrices(jd0, fr0, t_s)
    if frame in EARTH_FIXED_ALIASES:
        return np.transpose(teme_to_itrs_matrices(jd0, fr0, t_s), (0, 2, 1))
    raise ValueError(f"frame {frame} not supported")


def geodetic(r_teme_km: np.ndarray, jd0: float, fr0: float, t_s: np.ndarray):
    """WGS-84 geodetic latitude (deg), longitude (deg), height (km) for TEME positions (m,3)."""
    r_itrs = teme_to_itrs_km(r_teme_km, jd0, fr0, t_s)
    lat, lon, h = _geodetic_plain(r_itrs.T)
    return np.degrees(lat), np.degrees(lon), h


def height_km(r_km: np.ndarray) -> np.ndarray:
    """WGS-84 geodetic height (km) of positions (m,3) in TEME or ITRS alike: the two differ by
    a rotation about the pole (skyfield's built-in timescale applies no polar motion), which
    leaves the distance from the axis and z, and so the height, unchanged; no frame call."""
    r_km = np.atleast_2d(np.asarray(r_km, float))
    return _geodetic_plain(r_km.T)[2]


def _geodetic_plain(x_km: np.ndarray):
    """Iterative WGS-84 geodetic conversion of ITRS (3, m) km; converges in a few steps."""
    a = 6378.137
    f = 1.0 / 298.257223563
    e2 = f * (2 - f)
    x, y, z = x_km
    lon = np.arctan2(y, x)
    p = np.hypot(x, y)
    lat = np.arctan2(z, p * (1 - e2))
    for _ in range(6):
        n = a / np.sqrt(1 - e2 * np.sin(lat) ** 2)
        h = p / np.cos(lat) - n
        lat = np.arctan2(z, p * (1 - e2 * n / (n + h)))
    n = a / np.sqrt(1 - e2 * np.sin(lat) ** 2)
    return lat, lon, p / np.cos(lat) - n
