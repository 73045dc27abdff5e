"""An encounter: one local minimum of range between a primary and a secondary."""

from __future__ import annotations

import dataclasses
import datetime as _dt
from typing import Iterator

import numpy as np

from ..propagation.ephemeris import lagrange_weights
from ..timeutil import iso_us_many, iso_z, jd_to_datetime
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

    def to_json(self, tca: str | None = None, range_profile_km: list | None = None) -> dict:
        """The encounter's record.  `tca` and `range_profile_km`, when given, are this
        record's TCA text and rounded profile made already (json_records makes them for
        many encounters at once)."""
        return {
            "primary": self.primary, "primary_name": self.primary_name,
            "secondary": self.secondary, "secondary_name": self.secondary_name,
            "tca": self._iso(self.tca_s) if tca is None else tca,
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
            # to 1 mm, what a plot of it can show (the miss itself is miss_km, unrounded): 61
            # numbers at 17 digits were a third of every stored record
            "range_profile_km": (np.round(np.asarray(self.range_profile_km, float), 6).tolist()
                                 if range_profile_km is None else range_profile_km),
            **self.identity,
            **self.risk,
        }


JSON_BLOCK = 4096     # encounters whose records json_records makes at once


def json_records(encounters) -> Iterator[dict]:
    """Encounter.to_json() of each encounter, in order, for orjson to write (what `screen
    --json` and the store do, with OPT_SERIALIZE_NUMPY): the same text, but each rounded range
    profile is a row of one numpy array instead of a list (the lists took 0.7 s to make at
    70,000 encounters; orjson writes the rows as fast as the lists).  The TCA texts and the
    rounded profiles are made for a block of encounters at once (numpy's rounding and date
    arithmetic, the same operations as jd_to_datetime and np.round one at a time).  A
    generator: a block at a time is held."""
    encounters = list(encounters)
    for a in range(0, len(encounters), JSON_BLOCK):
        block = encounters[a:a + JSON_BLOCK]
        tca = iso_us_many(np.array([e.window_jd for e in block]),
                          np.array([e.window_fr + e.tca_s / 86400.0 for e in block]))
        profiles = _rounded_profiles(block)
        for e, t, prof in zip(block, tca, profiles):
            yield e.to_json(tca=t, range_profile_km=prof)


def _rounded_profiles(block) -> list:
    """np.round(profile, 6) of each encounter (contiguous float64 rows), rounded together when
    they have one length (the usual case)."""
    profs = [np.asarray(e.range_profile_km, float) for e in block]
    lengths = {len(p) for p in profs}
    if len(lengths) == 1 and profs:
        return list(np.round(np.stack(profs), 6))
    return [np.round(p, 6) for p in profs]


def make_encounters(pop, i: np.ndarray, j: np.ndarray, tca_s: np.ndarray, jd0: float,
                    fr0: float) -> list[Encounter]:
    """Encounters of pairs (i[n], j[n]) at tca_s[n], with the states at TCA taken in one
    batched propagator call and the geometry in array operations."""
    i, j, tca_s = np.asarray(i, int), np.asarray(j, int), np.asarray(tca_s, float)
    n = len(i)
    if n == 0:
        return []
    r, v, _ = pop.states_at(np.r_[i, j], jd0, fr0, np.r_[tca_s, tca_s])
    ri, rj, vi, vj = r[:n], r[n:], v[:n], v[n:]
    rho, w = rj - ri, vj - vi
    ric = to_ric(rho, ri, vi)
    miss = np.linalg.norm(rho, axis=1)
    speed = np.linalg.norm(w, axis=1)
    cosang = np.einsum("ni,ni->n", vi, vj) / (np.linalg.norm(vi, axis=1) * np.linalg.norm(vj, axis=1))
    angle = np.degrees(np.arccos(np.clip(cosang, -1.0, 1.0)))
    epochs = {k: pop.epoch(k) for k in set(i.tolist()) | set(j.tolist())}
    out = []
    for k in range(n):
        a, b, t = int(i[k]), int(j[k]), float(tca_s[k])
        tfr = fr0 + t / 86400.0
        ea, eb = epochs[a], epochs[b]
        out.append(Encounter(
            primary=pop.ids[a], primary_name=pop.names[a],
            secondary=pop.ids[b], secondary_name=pop.names[b],
            tca_s=t, window_jd=jd0, window_fr=fr0,
            miss_km=float(miss[k]),
            radial_km=float(ric[k, 0]), in_track_km=float(ric[k, 1]), cross_track_km=float(ric[k, 2]),
            relative_speed_km_s=float(speed[k]), crossing_angle_deg=float(angle[k]),
            primary_age_days=(jd0 - ea[0]) + (tfr - ea[1]),
            secondary_age_days=(jd0 - eb[0]) + (tfr - eb[1]),
            primary_r_km=tuple(ri[k].tolist()), primary_v_km_s=tuple(vi[k].tolist()),
            secondary_r_km=tuple(rj[k].tolist()), secondary_v_km_s=tuple(vj[k].tolist()),
        ))
    return out


def fill_altitudes(encounters: list[Encounter]) -> None:
    """Geodetic altitudes at TCA for both objects (`frames.height_km`, straight from TEME)."""
    if not encounters:
        return
    from ..propagation.frames import height_km

    h = height_km([e.primary_r_km for e in encounters] + [e.secondary_r_km for e in encounters])
    n = len(encounters)
    for k, e in enumerate(encounters):
        e.primary_alt_km = float(h[k])
        e.secondary_alt_km = float(h[n + k])


# Range profiles of fast passes interpolate PROFILE_NODES exact positions, spaced at most
# PROFILE_NODE_SPACING_S apart, with the one polynomial through them (degree 8).  For equally
# spaced nodes its error is at most h^9 max|r^(9)| / (4 * 9); with |r^(9)| about w^9 r for an
# angular rate w, that is under 1e-9 m even at a GTO perigee (w = 1.6e-3 rad/s, h = 15 s).
# Positions only: SGP4's deep-space velocities differ from the derivative of its positions by
# up to about 1 m/s (measured), which a Hermite interpolant would turn into a metre of error.
# Slower passes, whose profile is longer, are sampled exactly at every point.
PROFILE_NODES = 9
PROFILE_NODE_SPACING_S = 15.0


def profile_half_s(speed_km_s: np.ndarray) -> np.ndarray:
    """Half-span of the range profile around TCA: +-(PROFILE_REACH_KM / speed), 30 to 1800 s."""
    return np.clip(PROFILE_REACH_KM / np.maximum(speed_km_s, 1e-6), 30.0, 1800.0)


def add_range_profiles(pop, encs: list[Encounter], i: np.ndarray, j: np.ndarray) -> None:
    """Sample range around TCA for plots and slow-pass Pc, for every encounter at once."""
    i, j = np.asarray(i, int), np.asarray(j, int)
    if not encs:
        return
    jd0, fr0 = encs[0].window_jd, encs[0].window_fr
    tca = np.array([e.tca_s for e in encs])
    half = profile_half_s(np.array([e.relative_speed_km_s for e in encs]))
    frac = np.linspace(-1.0, 1.0, PROFILE_SAMPLES)
    quick = 2.0 * half / (PROFILE_NODES - 1) <= PROFILE_NODE_SPACING_S
    exact = list(np.nonzero(~quick)[0])
    q = np.nonzero(quick)[0]
    if len(q):
        node_frac = np.linspace(-1.0, 1.0, PROFILE_NODES)
        rel, ok = _relative_positions(pop, i[q], j[q], jd0, fr0,
                                      tca[q, None] + half[q, None] * node_frac[None])
        good = ok.all(axis=1)
        exact += list(q[~good])
        q, rel = q[good], rel[good]
        path = np.einsum("sm,nmi->nsi", lagrange_weights(frac, node_frac), rel)
        for k, p in zip(q.tolist(), path):
            _set_profile(encs[k], half[k], p, np.ones(PROFILE_SAMPLES, bool))
    if exact:
        x = np.array(exact)
        rel, ok = _relative_positions(pop, i[x], j[x], jd0, fr0,
                                      tca[x, None] + half[x, None] * frac[None])
        for n, k in enumerate(exact):
            _set_profile(encs[k], half[k], rel[n], ok[n])


def _relative_positions(pop, i, j, jd0, fr0, t_s):
    """Secondary minus primary position at t_s (n, m): (n, m, 3), and (n, m) usable."""
    n, m = t_s.shape
    rows = np.r_[np.repeat(i, m), np.repeat(j, m)]
    r, _, c = pop.states_at(rows, jd0, fr0, np.r_[t_s.ravel(), t_s.ravel()])
    k = n * m
    return (r[k:] - r[:k]).reshape(n, m, 3), ((c[:k] == 0) & (c[k:] == 0)).reshape(n, m)


def _set_profile(e: Encounter, half: float, rel: np.ndarray, ok: np.ndarray) -> None:
    rng = np.linalg.norm(rel, axis=1)
    rng[~ok] = np.nan
    e.profile_half_s = float(half)
    # arrays, not tuples of floats: a dense-shell run holds tens of thousands of these
    e.range_profile_km = rng
    e.relative_path_km = np.ascontiguousarray(rel[ok])

