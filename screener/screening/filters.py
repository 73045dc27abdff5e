"""Pair reduction that never drops a real encounter.

Apogee/perigee filter (Hoots, Crawford & Roehrich 1984, Celestial Mechanics 33): two objects
can come within D only if their radial ranges [perigee, apogee] overlap to within D.  Mean
elements miss SGP4's short-period radial motion (order 10 km in LEO) and the orbit shrinks with
drag over the window, so each range is padded (see `radial_bounds_km`).
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from ..constants import MU_WGS72_KM3_S2, TWO_PI
from ..elements.record import ElementSet

SHORT_PERIOD_PAD_KM = 25.0      # covers SGP4 short-period radial terms (order 10 km in LEO)
DEEP_SPACE_PAD_FRACTION = 0.01  # lunisolar changes of e over days for deep-space orbits
DEEP_SPACE_PERIOD_S = 225.0 * 60.0


def orbit_columns(recs: Sequence[ElementSet]) -> dict[str, np.ndarray]:
    """Semi-major axis, period, perigee and apogee radius (km, s) of many element sets at once,
    by Kepler's third law as ElementSet.orbit() gives them one at a time."""
    n_rev_day = np.array([r.mean_motion_rev_day for r in recs], float)
    ecc = np.array([r.eccentricity for r in recs], float)
    n_rad_s = n_rev_day * TWO_PI / 86400.0
    # the cube root by the C library's pow, one number at a time, as orbit() takes it: numpy's
    # vectorised power differs from it in the last bit for some values
    a_km = np.array([(MU_WGS72_KM3_S2 / n**2) ** (1.0 / 3.0) for n in n_rad_s.tolist()], float)
    return {"a_km": a_km, "period_s": TWO_PI / n_rad_s, "perigee_km": a_km * (1.0 - ecc),
            "apogee_km": a_km * (1.0 + ecc), "n_rev_day": n_rev_day}


def radial_bounds_many(recs: Sequence[ElementSet], window_days: float,
                       start_age_days: np.ndarray, orbits: dict | None = None) -> np.ndarray:
    """Conservative [min, max] geocentric radius over the window, km, (n, 2): one row per
    element set, start_age_days[n] its age at the window start (orbits: orbit_columns of
    the same records, when at hand)."""
    orb = orbits if orbits is not None else orbit_columns(recs)
    n_rev_day = orb["n_rev_day"]
    ndot = np.array([r.ndot_rev_day2 for r in recs], float)
    bstar = np.array([r.bstar_per_earth_radius for r in recs], float)
    # drag: dn/dt = 2 * ndot (rev/day^2); da/a = -(2/3) dn/n.  Use |ndot| and the B* term's
    # order of magnitude when ndot is absent; span from epoch to the window's far end.
    span_days = np.abs(np.asarray(start_age_days, float)) + window_days
    dn = 2.0 * np.abs(ndot) * span_days
    dn = np.maximum(dn, np.abs(bstar) * 0.5 * span_days * n_rev_day)
    da = (2.0 / 3.0) * orb["a_km"] * np.minimum(dn / n_rev_day, 0.5)
    pad = SHORT_PERIOD_PAD_KM + np.where(orb["period_s"] > DEEP_SPACE_PERIOD_S,
                                         DEEP_SPACE_PAD_FRACTION * orb["a_km"], 0.0)
    return np.stack([orb["perigee_km"] - pad - da, orb["apogee_km"] + pad], axis=1)


def radial_bounds_km(rec: ElementSet, window_days: float, start_age_days: float) -> tuple[float, float]:
    """Conservative [min, max] geocentric radius over the window, km (radial_bounds_many)."""
    lo, hi = radial_bounds_many([rec], window_days, np.array([start_age_days]))[0].tolist()
    return lo, hi


def bounds_array(bounds: list[tuple[float, float]]) -> np.ndarray:
    return np.array(bounds, float).reshape(-1, 2)


def apogee_perigee_mask(p_bounds: np.ndarray, s_bounds: np.ndarray, distance_km: float) -> np.ndarray:
    """(n_p, n_s) True where the radial ranges overlap to within distance_km."""
    lo = np.maximum(p_bounds[:, None, 0], s_bounds[None, :, 0])
    hi = np.minimum(p_bounds[:, None, 1], s_bounds[None, :, 1])
    return lo - hi <= distance_km
