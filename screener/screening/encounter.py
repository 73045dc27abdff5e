"""An encounter: one local minimum of range between a primary and a secondary."""

from __future__ import annotations

import dataclasses
import datetime as _dt

import numpy as np

from ..timeutil import iso_z, jd_to_datetime
from .ric import to_ric

SLOW_RELATIVE_SPEED_KM_S = 0.1  # below this the pass is slow: entry/exit times are reported
PROFILE_SAMPLES = 61
PROFILE_REACH_KM = 20.0         # the range profile goes out to about this range either side


@dataclasses.dataclass
class Encounter:
    primary: str
    primary_name: str
    secondary: str
    secondary_name: str
    tca_s: float                    # seconds from the window start
    window_jd: float                # window start, split Julian date
    window_fr: float
    miss_km: float
    radial_km: float
    in_track_km: float
    cross_track_km: float
    relative_speed_km_s: float
    crossing_angle_deg: float
    primary_alt_km: float = float("nan")
    secondary_alt_km: float = float("nan")
    primary_age_days: float = float("nan")
    secondary_age_days: float = float("nan")
    entry_s: float | None = None
    exit_s: float | None = None
    primary_r_km: tuple = ()
    primary_v_km_s: tuple = ()
    secondary_r_km: tuple = ()
    secondary_v_km_s: tuple = ()
    profile_half_s: float = 0.0     # range profile spans TCA +- this
    range_profile_km: np.ndarray | tuple = ()  # PROFILE_SAMPLES ranges, evenly over the span
    relative_path_km: np.ndarray | tuple = ()  # (n, 3) secondary - primary (TEME), same instants
    risk: dict = dataclasses.field(default_factory=dict)   # filled by the risk layer
    identity: dict = dataclasses.field(default_factory=dict)  # designators and orbit sources

    @property
    def pc(self) -> float:
        return float(self.risk.get("pc", 0.0) or 0.0)

    @property
    def tca(self) -> _dt.datetime:
        return jd_to_datetime(self.window_jd, self.window_fr + self.tca_s / 86400.0)

    @property
    def tca_jd(self) -> tuple[float, float]:
        return self.window_jd, self.window_fr + self.tca_s / 86400.0

    def _iso(self, t_s):
        if t_s is None:
            return None
        return iso_z(jd_to_datetime(self.window_jd, self.window_fr + t_s / 86400.0), 6)

    def to_json(self) -> dict:
        return {
            "primary": self.primary, "primary_name": self.primary_name,
            "secondary": self.secondary, "secondary_name": self.secondary_name,
            "tca": self._iso(self.tca_s),
            "miss_km": self.miss_km, "radial_km": self.radial_km,
            "in_track_km": self.in_track_km, "cross_track_km": self.cross_track_km,
            "relative_speed_km_s": self.relative_speed_km_s,
            "crossing_angle_deg": self.crossing_angle_deg,
            "primary_alt_km": self.primary_alt_km, "secondary_alt_km": self.secondary_alt_km,
            "primary_elset_age_days": self.primary_age_days,
            "secondary_elset_age_days": self.secondary_age_days,
            "volume_entry": self._iso(self.entry_s), "volume_exit": self._iso(self.exit_s),
            "primary_state_teme": [*self.primary_r_km, *self.primary_v_km_s],
            "secondary_state_teme": [*self.secondary_r_km, *self.secondary_v_km_s],
            "profile_half_s": self.profile_half_s,
            "range_profile_km": np.asarray(self.range_profile_km, float).tolist(),
            **self.identity,
            **self.risk,
        }


def make_encounter(pop, i: int, j: int, tca_s: float, jd0: float, fr0: float) -> Encounter:
    ri, vi, _ = pop.state_at(i, jd0, fr0, tca_s)
    rj, vj, _ = pop.state_at(j, jd0, fr0, tca_s)
    rho = rj - ri
    w = vj - vi
    ric = to_ric(rho, ri, vi)
    cosang = np.dot(vi, vj) / (np.linalg.norm(vi) * np.linalg.norm(vj))
    tjd, tfr = jd0, fr0 + tca_s / 86400.0
    ei, ej = pop.epoch(i), pop.epoch(j)
    return Encounter(
        primary=pop.ids[i], primary_name=pop.names[i],
        secondary=pop.ids[j], secondary_name=pop.names[j],
        tca_s=float(tca_s), window_jd=jd0, window_fr=fr0,
        miss_km=float(np.linalg.norm(rho)),
        radial_km=float(ric[0]), in_track_km=float(ric[1]), cross_track_km=float(ric[2]),
        relative_speed_km_s=float(np.linalg.norm(w)),
        crossing_angle_deg=float(np.degrees(np.arccos(np.clip(cosang, -1.0, 1.0)))),
        primary_age_days=(tjd - ei[0]) + (tfr - ei[1]),
        secondary_age_days=(tjd - ej[0]) + (tfr - ej[1]),
        primary_r_km=tuple(map(float, ri)), primary_v_km_s=tuple(map(float, vi)),
        secondary_r_km=tuple(map(float, rj)), secondary_v_km_s=tuple(map(float, vj)),
    )


def fill_altitudes(encounters: list[Encounter]) -> None:
    """Geodetic altitudes at TCA for both objects, one vectorised frame call."""
    if not encounters:
        return
    from ..propagation.frames import geodetic

    jd0, fr0 = encounters[0].window_jd, encounters[0].window_fr
    t = np.array([e.tca_s for e in encounters] * 2)
    r = np.array([e.primary_r_km for e in encounters] + [e.secondary_r_km for e in encounters])
    _, _, h = geodetic(r, jd0, fr0, t)
    n = len(encounters)
    for k, e in enumerate(encounters):
        e.primary_alt_km = float(h[k])
        e.secondary_alt_km = float(h[n + k])


def add_range_profile(pop, e: Encounter, i: int, j: int) -> None:
    """Sample range around TCA for plots: +-(PROFILE_REACH_KM / speed), 30 s to 1800 s."""
    half = float(np.clip(PROFILE_REACH_KM / max(e.relative_speed_km_s, 1e-6), 30.0, 1800.0))
    t = e.tca_s + np.linspace(-half, half, PROFILE_SAMPLES)
    r, _, code = pop.states(e.window_jd, e.window_fr, t, rows=[i, j])
    rel = r[1] - r[0]
    rng = np.linalg.norm(rel, axis=1)
    bad = (code[0] != 0) | (code[1] != 0)
    rng[bad] = np.nan
    e.profile_half_s = half
    # arrays, not tuples of floats: a dense-shell run holds tens of thousands of these
    e.range_profile_km = rng
    e.relative_path_km = np.ascontiguousarray(rel[~bad])
