"""The two-body fill between exact SGP4 samples (propagation/kepler_fill.py) and its bound.

Sources:
- two-body motion: scipy's DOP853 integrator on r'' = -mu r / |r|^3 (reference library);
- the bound's inputs and the bound itself: the sgp4 library's own propagator (Satrec.sgp4init,
  SatrecArray), on seeded near-earth element sets spanning the fill's range (e up to 0.25,
  perigee 200 to 1,500 km, inclination 0 to 110 deg, B* up to 5e-4);
- the bound's form (a second-order comparison of |d|'' <= L |d| + F, L the gravity-gradient
  bound 2 mu / rho^3) is common practice in perturbation analysis.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from sgp4.api import WGS72, Satrec, SatrecArray

from screener.constants import MU_EARTH_KM3_S2 as MU
from screener.propagation.kepler_fill import (FILL_MIN_PERIGEE_KM, PERTURBATION_BOUND_KM_S2,
                                              VELOCITY_MISMATCH_KM_S, coarse_indices,
                                              fill_between, fill_pads, kepler_states)

RE_KM = 6378.135
EPOCH_JD = 2461000.5          # the sets' epoch (any date: the fill never looks at it)


def _near_earth_sats(n, seed=7):
    rng = np.random.default_rng(seed)
    sats = []
    while len(sats) < n:
        e = rng.uniform(0.0, 0.25)
        rp = RE_KM + rng.uniform(FILL_MIN_PERIGEE_KM, 1500.0)
        a = rp / (1.0 - e)
        no = np.sqrt(398600.8 / a**3) * 60.0            # rad/min (WGS72 mu, as sgp4init takes)
        if 2 * np.pi / no >= 225.0:                       # keep to SGP4's near-earth branch
            continue
        s = Satrec()
        s.sgp4init(WGS72, "i", len(sats), EPOCH_JD - 2433281.5, rng.uniform(0.0, 5e-4), 0.0, 0.0,
                   e, rng.uniform(0, 2 * np.pi), np.radians(rng.uniform(0.0, 110.0)),
                   rng.uniform(0, 2 * np.pi), no, rng.uniform(0, 2 * np.pi))
        sats.append(s)
    return SatrecArray(sats)


def _two_body(r0, v0, t):
    def rhs(_t, y):
        r = y[:3]
        return np.r_[y[3:], -MU * r / np.linalg.norm(r) ** 3]
    sol = solve_ivp(rhs, (0.0, t), np.r_[r0, v0], rtol=1e-12, atol=1e-10, method="DOP853")
    return sol.y[:3, -1], sol.y[3:, -1]


@pytest.mark.parametrize("e", [0.0005, 0.05, 0.25])
@pytest.mark.parametrize("tau_s", [-480.0, 240.0, 480.0, 1500.0])
def test_kepler_states_against_scipy_two_body(e, tau_s):
    rp = RE_KM + 400.0
    a = rp / (1 - e)
    vp = np.sqrt(MU * (2 / rp - 1 / a))
    r0 = np.array([rp * 0.6, rp * 0.8, 0.0])
    v0 = vp * np.array([-0.8 * np.cos(0.9), 0.6 * np.cos(0.9), np.sin(0.9)])
    r, v = kepler_states(r0[None], v0[None], np.array([tau_s]))
    r_ref, v_ref = _two_body(r0, v0, tau_s) if tau_s > 0 else _two_body_back(r0, v0, tau_s)
    assert np.abs(r[0] - r_ref).max() < 1e-6          # km
    assert np.abs(v[0] - v_ref).max() < 1e-9          # km/s


def _two_body_back(r0, v0, t):
    r, v = _two_body(r0, -v0, -t)                     # time reversal
    return r, -v


def test_the_bound_inputs_hold_on_sgp4_output():
    """F and V of the bound against what SGP4 does: its acceleration's departure from central
    gravity and its velocity's departure from the derivative of its position (central
    differences at 2 s: their own truncation is under 1e-8 km/s^2 and 1e-5 km/s)."""
    arr = _near_earth_sats(2000)
    h = 2.0
    worst_f = worst_v = 0.0
    for t_min in np.linspace(0.0, 3 * 1440.0, 120):
        fr = (t_min + np.array([-h, 0.0, h]) / 60.0) / 1440.0
        e, r, v = arr.sgp4(np.full(3, EPOCH_JD), fr)
        ok = (e == 0).all(axis=1)
        acc = (r[:, 2] - 2 * r[:, 1] + r[:, 0]) / h**2
        rm = np.linalg.norm(r[:, 1], axis=1)
        f = np.linalg.norm(acc + MU * r[:, 1] / rm[:, None] ** 3, axis=1)
        dv = np.linalg.norm((r[:, 2] - r[:, 0]) / (2 * h) - v[:, 1], axis=1)
        worst_f, worst_v = max(worst_f, f[ok].max()), max(worst_v, dv[ok].max())
    assert worst_f < PERTURBATION_BOUND_KM_S2 / 3, worst_f     # measured 2.7e-5
    assert worst_v < VELOCITY_MISMATCH_KM_S / 2, worst_v       # measured 2.0e-3


def test_fill_stays_within_its_bound_against_sgp4():
    """Exact states at every 4th point of a 240 s grid over two days, the two-body fill
    between, against SGP4 at every point: within fill_pads(480 s) in position and velocity,
    and the bound is not vacuous (the worst difference uses a sizeable share of it)."""
    arr = _near_earth_sats(600, seed=8)
    t = np.arange(0.0, 2 * 86400.0 + 1.0, 240.0)
    e, r_ref, v_ref = arr.sgp4(np.full(len(t), EPOCH_JD), 0.3 + t / 86400.0)
    ok = (e == 0).all(axis=1)
    r_ref, v_ref = r_ref[ok], v_ref[ok]
    r = np.full_like(r_ref, np.nan)
    v = np.full_like(v_ref, np.nan)
    c = coarse_indices(len(t))
    r[:, c], v[:, c] = r_ref[:, c], v_ref[:, c]
    tau_max = fill_between(r, v, t)
    assert tau_max == 480.0
    assert not np.isnan(r).any()
    pos_km, vel_km_s = fill_pads(tau_max)
    dr = np.linalg.norm(r - r_ref, axis=2).max()
    dv = np.linalg.norm(v - v_ref, axis=2).max()
    assert dr <= pos_km and dv <= vel_km_s, (dr, pos_km, dv, vel_km_s)
    assert dr > 0.02 * pos_km                      # the fill is not exact: the bound matters


def test_fill_handles_a_grid_whose_end_is_off_the_stride():
    t = np.arange(0.0, 240.0 * 10 + 1.0, 240.0)          # 11 points: exact 0, 4, 8 and 10
    assert coarse_indices(len(t)).tolist() == [0, 4, 8, 10]
    arr = _near_earth_sats(5, seed=9)
    e, r_ref, v_ref = arr.sgp4(np.full(len(t), EPOCH_JD), 0.1 + t / 86400.0)
    r = np.full_like(r_ref, np.nan)
    v = np.full_like(v_ref, np.nan)
    c = coarse_indices(len(t))
    r[:, c], v[:, c] = r_ref[:, c], v_ref[:, c]
    fill_between(r, v, t)
    assert np.linalg.norm(r - r_ref, axis=2).max() <= fill_pads(480.0)[0]
    assert np.array_equal(r[:, c], r_ref[:, c])          # exact samples untouched
