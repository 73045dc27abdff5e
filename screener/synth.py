"""Invented scenarios: element sets fitted to chosen states, background catalogs, engineered
close approaches.  Used for the demo data, the benchmarks and the engine's test scenarios
(the tests check the engine against an independent reference, not against these numbers).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from .constants import MU_WGS72_KM3_S2, RE_WGS72_KM
from .elements.record import ElementSet, Source

DEG = math.pi / 180.0


def rv_to_mean_like(r, v, mu=MU_WGS72_KM3_S2):
    """Osculating classical elements from a state: (n rev/day, e, i, raan, argp, M) in degrees."""
    r = np.asarray(r, float)
    v = np.asarray(v, float)
    rm = np.linalg.norm(r)
    h = np.cross(r, v)
    hm = np.linalg.norm(h)
    inc = math.acos(max(-1.0, min(1.0, h[2] / hm)))
    node = np.cross([0.0, 0.0, 1.0], h)
    nm = np.linalg.norm(node)
    if nm < 1e-12:
        node, nm = np.array([1.0, 0.0, 0.0]), 1.0
    raan = math.atan2(node[1], node[0]) % (2 * math.pi)
    ev = np.cross(v, h) / mu - r / rm
    e = float(np.linalg.norm(ev))
    a = 1.0 / (2.0 / rm - v @ v / mu)
    if e < 1e-9:
        ev, e = node / nm * 1e-9, 1e-9
    argp = math.atan2(np.dot(np.cross(node / nm, ev), h / hm), np.dot(node / nm, ev)) % (2 * math.pi)
    nu = math.atan2(np.dot(np.cross(ev, r), h / hm) / e, np.dot(ev, r) / e) % (2 * math.pi)
    E = 2 * math.atan(math.sqrt((1 - e) / (1 + e)) * math.tan(nu / 2))
    M = (E - e * math.sin(E)) % (2 * math.pi)
    n = math.sqrt(mu / a**3) * 86400.0 / (2 * math.pi)
    return n, e, inc / DEG, raan / DEG, argp / DEG, M / DEG


def fit_elements(r_km, v_km_s, epoch_jd, epoch_fr, catalog_id, name="", bstar=0.0,
                 tol_km=1e-6, iterations=30) -> ElementSet:
    """SGP4 element set whose state at its epoch equals (r, v): fixed-point iteration on the
    Cartesian state handed to the osculating-element conversion."""
    target = np.concatenate([r_km, v_km_s])
    x = target.copy()
    rec = None
    for _ in range(iterations):
        n, e, i, raan, argp, M = rv_to_mean_like(x[:3], x[3:])
        rec = ElementSet(catalog_id=catalog_id, name=name, epoch_jd=epoch_jd, epoch_fr=epoch_fr,
                         mean_motion_rev_day=n, eccentricity=min(max(e, 1e-7), 0.99),
                         inclination_deg=i, raan_deg=raan, arg_perigee_deg=argp,
                         mean_anomaly_deg=M, bstar_per_earth_radius=bstar,
                         source=Source("<synthetic>", 0))
        err, rr, vv = rec.make_satrec().sgp4(epoch_jd, epoch_fr)
        if err:
            break
        diff = target - np.concatenate([rr, vv])
        x += diff
        if np.abs(diff[:3]).max() < tol_km:
            break
    return rec


def state_of(rec: ElementSet, jd: float, fr: float):
    e, r, v = rec.make_satrec().sgp4(jd, fr)
    return np.array(r), np.array(v)


def circular(catalog_id, name, alt_km, inc_deg, raan_deg, u_deg, epoch_jd, epoch_fr, bstar=1e-5,
             ecc=1e-4) -> ElementSet:
    a = RE_WGS72_KM + alt_km
    n = math.sqrt(MU_WGS72_KM3_S2 / a**3) * 86400.0 / (2 * math.pi)
    return ElementSet(catalog_id=catalog_id, name=name, epoch_jd=epoch_jd, epoch_fr=epoch_fr,
                      mean_motion_rev_day=n, eccentricity=ecc, inclination_deg=inc_deg,
                      raan_deg=raan_deg % 360, arg_perigee_deg=0.0, mean_anomaly_deg=u_deg % 360,
                      bstar_per_earth_radius=bstar, source=Source("<synthetic>", 0))


def rotate(vec, axis, angle_deg):
    """Rodrigues rotation of vec about axis."""
    k = np.asarray(axis, float) / np.linalg.norm(axis)
    a = angle_deg * DEG
    return vec * math.cos(a) + np.cross(k, vec) * math.sin(a) + k * np.dot(k, vec) * (1 - math.cos(a))


@dataclasses.dataclass
class Engineered:
    primary: str
    secondary: str
    tca_jd: float
    tca_fr: float
    kind: str


def engineer(primary: ElementSet | None, jd: float, fr: float, catalog_id: str, name: str, kind: str,
             miss_km: float = 0.5, epoch_back_days: float = 0.0, rng=None,
             state=None, angle_deg: float | None = None) -> ElementSet:
    """A secondary that passes `primary` near (jd, fr).  kind: head-on, crossing, slow, gto.
    `state` (r km, v km/s) passes that state instead (e.g. a manoeuvred trajectory's);
    angle_deg fixes a crossing's angle (else drawn from 40 to 120 deg)."""
    rng = rng or np.random.default_rng(0)
    r, v = (np.asarray(state[0], float), np.asarray(state[1], float)) if state is not None \
        else state_of(primary, jd, fr)
    rhat = r / np.linalg.norm(r)
    if kind == "head-on":
        vs = rotate(v, rhat, 170.0)
    elif kind == "crossing":
        vs = rotate(v, rhat, float(rng.uniform(40, 120)) if angle_deg is None else angle_deg)
    elif kind == "slow":
        vs = v + rotate(v / np.linalg.norm(v), rhat, 90.0) * 0.004  # 4 m/s cross-track
    elif kind == "gto":
        a = (np.linalg.norm(r) + 42164.0) / 2
        speed = math.sqrt(MU_WGS72_KM3_S2 * (2 / np.linalg.norm(r) - 1 / a))
        vs = rotate(v / np.linalg.norm(v), rhat, 25.0) * speed
    else:
        raise ValueError(kind)
    w = vs - v
    perp = np.cross(w, rhat)
    perp = perp / np.linalg.norm(perp)
    rs = r + perp * miss_km
    rec = fit_elements(rs, vs, jd, fr, catalog_id, name)
    if epoch_back_days:
        e_jd, e_fr = jd, fr - epoch_back_days
        r2, v2 = state_of(rec, e_jd, e_fr)
        rec = fit_elements(r2, v2, e_jd, e_fr, catalog_id, name)
    return rec


def background_catalog(n: int, epoch_jd: float, epoch_fr: float, seed: int = 7,
                       id_of=lambda k: f"{k}", age_days=(0.0, 2.0)) -> list[ElementSet]:
    """A synthetic catalog across LEO, MEO, GEO and GTO (proportions loosely like a real one)."""
    rng = np.random.default_rng(seed)
    out = []
    for k in range(n):
        u = rng.uniform()
        fr = epoch_fr - rng.uniform(*age_days)
        if u < 0.72:      # LEO, a third of it sun-synchronous-like
            alt = rng.uniform(350, 1400) if rng.uniform() < 0.8 else rng.uniform(1400, 1990)
            inc = rng.uniform(96.5, 99.5) if rng.uniform() < 0.35 else rng.uniform(0, 105)
            ecc = rng.uniform(0, 0.015)
            a = RE_WGS72_KM + alt / (1 - ecc) if ecc else RE_WGS72_KM + alt
            bstar = 10 ** rng.uniform(-5.5, -3.5)
        elif u < 0.82:    # MEO navigation-like shells
            a = RE_WGS72_KM + rng.uniform(19000, 23500)
            inc, ecc, bstar = rng.uniform(50, 66), rng.uniform(0, 0.01), 0.0
        elif u < 0.93:    # GEO belt
            a = 42164.0 + rng.normal(0, 60)
            inc, ecc, bstar = abs(rng.normal(0, 4)), rng.uniform(0, 0.003), 0.0
        else:             # GTO
            rp = RE_WGS72_KM + rng.uniform(200, 650)
            ra = 42164.0 + rng.normal(0, 300)
            a = (rp + ra) / 2
            ecc = (ra - rp) / (ra + rp)
            inc, bstar = rng.uniform(5, 30), 1e-4
        n_rev = math.sqrt(MU_WGS72_KM3_S2 / a**3) * 86400 / (2 * math.pi)
        out.append(ElementSet(catalog_id=id_of(k), name=f"BKG-{k:05d}", epoch_jd=epoch_jd,
                              epoch_fr=fr, mean_motion_rev_day=n_rev, eccentricity=ecc,
                              inclination_deg=inc, raan_deg=rng.uniform(0, 360),
                              arg_perigee_deg=rng.uniform(0, 360),
                              mean_anomaly_deg=rng.uniform(0, 360), bstar_per_earth_radius=bstar,
                              ndot_rev_day2=0.0, source=Source("<synthetic>", 0)))
    return out


@dataclasses.dataclass(frozen=True)
class Shell:
    """One invented Walker-type shell: `planes` planes evenly spaced in RAAN, `per_plane`
    satellites evenly spaced in each, neighbouring planes phased by `phasing` slots."""
    alt_km: float
    inc_deg: float
    planes: int
    per_plane: int
    phasing: int = 1

    @property
    def count(self) -> int:
        return self.planes * self.per_plane


# Eight invented shells shaped like today's dense LEO: several shells between 480 and 1,200 km,
# a few common inclinations, dozens of planes, 9,196 satellites in all.
DENSE_SHELLS = (
    Shell(540.0, 53.0, 72, 22, 17), Shell(550.0, 53.2, 72, 22, 39), Shell(560.0, 97.6, 36, 20, 5),
    Shell(570.0, 70.0, 36, 20, 11), Shell(610.0, 42.0, 48, 24, 7), Shell(630.0, 51.9, 34, 34, 3),
    Shell(1100.0, 87.9, 36, 30, 1), Shell(1200.0, 87.9, 40, 30, 13),
)


def constellation_shells(epoch_jd: float, epoch_fr: float, shells=DENSE_SHELLS, seed: int = 11,
                         id_of=lambda k: f"{k}", alt_spread_km: float = 0.4) -> list[ElementSet]:
    """Satellites in thin shells: each within about a kilometre of its shell's altitude (a
    normal spread of `alt_spread_km`, clipped at 1 km), near-circular, with small station-keeping
    scatter in RAAN and phase.  Neighbouring planes cross at high latitude every orbit, so
    pairs within a few kilometres recur all day: the hard case for a screening sieve."""
    rng = np.random.default_rng(seed)
    out = []
    k = 0
    for sh in shells:
        for p in range(sh.planes):
            raan = 360.0 * p / sh.planes
            for s in range(sh.per_plane):
                u = 360.0 * s / sh.per_plane + 360.0 * sh.phasing * p / sh.count
                alt = sh.alt_km + float(np.clip(rng.normal(0.0, alt_spread_km), -1.0, 1.0))
                rec = circular(id_of(k), f"SHELL{int(sh.alt_km)}-{p:02d}-{s:02d}", alt, sh.inc_deg,
                               raan + rng.normal(0.0, 0.02), u + rng.normal(0.0, 0.05), epoch_jd,
                               epoch_fr - rng.uniform(0.0, 1.0), bstar=10 ** rng.uniform(-5.0, -4.0),
                               ecc=float(rng.uniform(1e-4, 4e-4)))
                out.append(rec)
                k += 1
    return out
