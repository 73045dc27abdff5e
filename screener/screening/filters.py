"""Pair reduction that never drops a real encounter.

Apogee/perigee filter (Hoots, Crawford & Roehrich 1984, Celestial Mechanics 33): two objects
can come within D only if their radial ranges [perigee, apogee] overlap to within D.  Mean
elements miss SGP4's short-period radial motion (order 10 km in LEO) and the orbit shrinks with
drag over the window, so each range is padded (see `radial_bounds_km`).
"""

from __future__ import annotations

import numpy as np

from ..elements.record import ElementSet

SHORT_PERIOD_PAD_KM = 25.0      # covers SGP4 short-period radial terms (order 10 km in LEO)
DEEP_SPACE_PAD_FRACTION = 0.01  # lunisolar changes of e over days for deep-space orbits
DEEP_SPACE_PERIOD_S = 225.0 * 60.0


def radial_bounds_km(rec: ElementSet, window_days: float, start_age_days: float) -> tuple[float, float]:
    """Conservative [min, max] geocentric radius over the window, km."""
    orb = rec.orbit()
    # drag: dn/dt = 2 * ndot (rev/day^2); da/a = -(2/3) dn/n.  Use |ndot| and the B* term's
    # order of magnitude when ndot is absent; span from epoch to the window's far end.
    span_days = abs(start_age_days) + window_days
    dn = 2.0 * abs(rec.ndot_rev_day2) * span_days
    dn = max(dn, abs(rec.bstar_per_earth_radius) * 0.5 * span_days * rec.mean_motion_rev_day)
    da = (2.0 / 3.0) * orb.semi_major_axis_km * min(dn / rec.mean_motion_rev_day, 0.5)
    pad = SHORT_PERIOD_PAD_KM
    if orb.period_s > DEEP_SPACE_PERIOD_S:
        pad += DEEP_SPACE_PAD_FRACTION * orb.semi_major_axis_km
    return orb.perigee_radius_km - pad - da, orb.apogee_radius_km + pad


def bounds_array(bounds: list[tuple[float, float]]) -> np.ndarray:
    return np.array(bounds, float).reshape(-1, 2)


def apogee_perigee_mask(p_bounds: np.ndarray, s_bounds: np.ndarray, distance_km: float) -> np.ndarray:
    """(n_p, n_s) True where the radial ranges overlap to within distance_km."""
    lo = np.maximum(p_bounds[:, None, 0], s_bounds[None, :, 0])
    hi = np.minimum(p_bounds[:, None, 1], s_bounds[None, :, 1])
    return lo - hi <= distance_km
