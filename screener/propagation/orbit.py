"""Orbit size from mean motion: Kepler's third law in Newton's form, n^2 a^3 = mu."""

from __future__ import annotations

import dataclasses
import math

from ..constants import MU_WGS72_KM3_S2, RE_WGS72_KM, TWO_PI


# The regime rules (common practice), shared by OrbitSize.regime and regimes_many
REGIME_LOW_ALT_KM = 2000.0      # LEO: apogee below; HEO: perigee below (apogee above)
SIDEREAL_DAY_S = 86164.1        # GEO: period within GEO_PERIOD_SHARE of it ...
GEO_PERIOD_SHARE = 0.1
GEO_MAX_SPREAD_KM = 2000.0      # ... and apogee minus perigee below this


@dataclasses.dataclass(frozen=True)
class OrbitSize:
    semi_major_axis_km: float
    period_s: float
    perigee_radius_km: float
    apogee_radius_km: float
    perigee_alt_km: float
    apogee_alt_km: float

    @property
    def regime(self) -> str:
        """LEO / MEO / GEO / HEO by perigee, apogee and period (common practice)."""
        if self.apogee_alt_km < REGIME_LOW_ALT_KM:
            return "LEO"
        if (abs(self.period_s - SIDEREAL_DAY_S) < GEO_PERIOD_SHARE * SIDEREAL_DAY_S
                and self.apogee_alt_km - self.perigee_alt_km < GEO_MAX_SPREAD_KM):
            return "GEO"
        if self.perigee_alt_km < REGIME_LOW_ALT_KM:
            return "HEO"  # includes GTO: perigee in LEO, apogee high
        return "MEO"


def semi_major_axis_km(mean_motion_rad_s: float, mu_km3_s2: float = MU_WGS72_KM3_S2) -> float:
    """a = (mu / n^2)^(1/3)."""
    return (mu_km3_s2 / mean_motion_rad_s**2) ** (1.0 / 3.0)


def period_s(semi_major_axis_km_: float, mu_km3_s2: float = MU_WGS72_KM3_S2) -> float:
    """T = 2 pi sqrt(a^3 / mu)."""
    return TWO_PI * math.sqrt(semi_major_axis_km_**3 / mu_km3_s2)


def orbit_from_mean_motion(mean_motion_rad_s: float, eccentricity: float,
                           mu_km3_s2: float = MU_WGS72_KM3_S2,
                           earth_radius_km: float = RE_WGS72_KM) -> OrbitSize:
    a = semi_major_axis_km(mean_motion_rad_s, mu_km3_s2)
    rp = a * (1.0 - eccentricity)
    ra = a * (1.0 + eccentricity)
    return OrbitSize(a, TWO_PI / mean_motion_rad_s, rp, ra, rp - earth_radius_km,
                     ra - earth_radius_km)


@dataclasses.dataclass(frozen=True)
class Osculating:
    """Two-body orbit of one state; size is None for an unbound (hyperbolic) state."""
    size: OrbitSize | None
    eccentricity: float
    inclination_deg: float


def _two_body_many(r_km, v_km_s, mu: float):
    """(a, e, h) of many states, (n, 3) arrays: a from the vis-viva energy (<= 0 or inf
    when unbound), e from the eccentricity vector, h = r x v."""
    import numpy as np

    r, v = np.asarray(r_km, float).reshape(-1, 3), np.asarray(v_km_s, float).reshape(-1, 3)
    rn, vn = np.linalg.norm(r, axis=1), np.linalg.norm(v, axis=1)
    h = np.cross(r, v)
    e = np.linalg.norm(np.cross(v, h) / mu - r / rn[:, None], axis=1)
    with np.errstate(divide="ignore"):
        a = 1.0 / (2.0 / rn - vn * vn / mu)
    return a, e, h


def _size(a: float, e: float, mu: float, re: float) -> OrbitSize | None:
    if a <= 0:
        return None
    rp, ra = a * (1.0 - e), a * (1.0 + e)
    return OrbitSize(a, period_s(a, mu), rp, ra, rp - re, ra - re)


def _mu_re(mu_km3_s2: float | None, earth_radius_km: float | None) -> tuple[float, float]:
    from ..constants import MU_EARTH_KM3_S2, RE_WGS84_KM

    return (MU_EARTH_KM3_S2 if mu_km3_s2 is None else mu_km3_s2,
            RE_WGS84_KM if earth_radius_km is None else earth_radius_km)


def osculating(r_km, v_km_s, mu_km3_s2: float | None = None,
               earth_radius_km: float | None = None) -> Osculating:
    """From a state: a from the vis-viva energy, e from the eccentricity vector, the period from
    Kepler's third law in Newton's form (IERS mu and WGS-84 radius by default)."""
    mu, re = _mu_re(mu_km3_s2, earth_radius_km)
    a, e, h = _two_body_many(r_km, v_km_s, mu)
    hz = float(h[0, 2]) / math.sqrt(float(h[0] @ h[0]))
    inc = math.degrees(math.acos(max(-1.0, min(1.0, hz))))
    return Osculating(_size(float(a[0]), float(e[0]), mu, re), float(e[0]), inc)


def regimes_many(r_km, v_km_s, mu_km3_s2: float | None = None,
                 earth_radius_km: float | None = None) -> list[str]:
    """The regime (OrbitSize.regime) of the osculating orbit of each of many states, (n, 3)
    arrays; an unbound state counts as HEO."""
    import numpy as np

    mu, re = _mu_re(mu_km3_s2, earth_radius_km)
    a, e, _h = _two_body_many(r_km, v_km_s, mu)
    # OrbitSize.regime's rules on _size's figures, as array operations
    with np.errstate(invalid="ignore", over="ignore"):
        perigee_alt = a * (1.0 - e) - re
        apogee_alt = a * (1.0 + e) - re
        period = TWO_PI * np.sqrt(a ** 3 / mu)
        geo = ((np.abs(period - SIDEREAL_DAY_S) < GEO_PERIOD_SHARE * SIDEREAL_DAY_S)
               & (apogee_alt - perigee_alt < GEO_MAX_SPREAD_KM))
        code = np.select([~(a > 0), apogee_alt < REGIME_LOW_ALT_KM, geo,
                          perigee_alt < REGIME_LOW_ALT_KM], [3, 0, 2, 3], 1)
    names = ("LEO", "MEO", "GEO", "HEO")
    return [names[k] for k in code.tolist()]
