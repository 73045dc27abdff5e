"""Closest approach of two trajectories near a known TCA, and its figures (miss, RIC, Pc)."""

from __future__ import annotations

import dataclasses

import numpy as np
from scipy.optimize import brentq

from ..risk.assess import assess, pc_2d
from ..screening.ric import to_ric
from .tracks import Track

TCA_TOL_S = 1e-6
SEARCH_SAMPLES = 241
SEARCH_REACH_KM = 30.0      # search +- the time the old relative speed takes to cover this


@dataclasses.dataclass(frozen=True)
class Approach:
    tca_s: float
    primary: np.ndarray         # (6,) TEME km, km/s at TCA
    secondary: np.ndarray
    miss_km: float
    ric_km: tuple[float, float, float]   # secondary - primary in the primary's RIC frame
    relative_speed_km_s: float


def closest_approach(primary: Track, secondary: Track, t_guess_s: float, speed_km_s: float,
                     period_s: float, lo_s: float, hi_s: float) -> Approach:
    """The range minimum nearest t_guess_s, searched over +- SEARCH_REACH_KM / speed (at
    least 60 s, at most a quarter orbit) inside [lo_s, hi_s], then refined as the root of
    rho . rho_dot to TCA_TOL_S."""
    half = float(np.clip(SEARCH_REACH_KM / max(speed_km_s, 1e-6), 60.0, 0.25 * period_s))
    t = np.linspace(max(lo_s, t_guess_s - half), min(hi_s, t_guess_s + half), SEARCH_SAMPLES)
    rel = secondary.states(t) - primary.states(t)
    k = int(np.argmin(np.einsum("ij,ij->i", rel[:, :3], rel[:, :3])))

    def f(x):
        d = secondary.state(x) - primary.state(x)
        return float(d[:3] @ d[3:])

    tca = float(t[k])
    if 0 < k < len(t) - 1:
        a, b = float(t[k - 1]), float(t[k + 1])
        fa, fb = f(a), f(b)
        if fa < 0.0 < fb:
            tca = brentq(f, a, b, xtol=TCA_TOL_S)
    p, s = primary.state(tca), secondary.state(tca)
    rho = s[:3] - p[:3]
    return Approach(tca, p, s, float(np.linalg.norm(rho)),
                    tuple(float(x) for x in to_ric(rho, p[:3], p[3:])),
                    float(np.linalg.norm(s[3:] - p[3:])))


@dataclasses.dataclass(frozen=True)
class Covariances:
    """The event's covariance treatment, reused for every burn: each object's 3x3 RTN
    position covariance (km^2) as the screening attached it, and the hard-body radius."""
    primary_rtn_km2: np.ndarray
    secondary_rtn_km2: np.ndarray
    hbr_m: float
    source: str


def pc_of(a: Approach, cov: Covariances) -> dict:
    """The short-encounter 2-D Pc of one approach, in its own encounter plane (risk.assess:
    the same method choice as the screening's)."""
    return assess(a.primary[:3], a.primary[3:], cov.primary_rtn_km2, a.secondary[:3],
                  a.secondary[3:], cov.secondary_rtn_km2, cov.hbr_m, cov.source)


def pc_only(a: Approach, cov: Covariances) -> float:
    """pc_of()'s Pc alone, for the search."""
    return pc_2d(a.primary[:3], a.primary[3:], cov.primary_rtn_km2, a.secondary[:3],
                 a.secondary[3:], cov.secondary_rtn_km2, cov.hbr_m)
