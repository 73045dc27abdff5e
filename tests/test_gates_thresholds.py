"""Gates and thresholds pinned at their values, on both sides.

Sources:
- Attention thresholds act at Pc >= 1e-4, watch at Pc >= 1e-5: common practice (the figures
  widely used by operators for manoeuvre planning and close watch).
- The 100 km altitude gate: common practice (below about 100 km an object is re-entering and
  SGP4's theory no longer describes it); checked at a sample where the sgp4 library itself
  reports no error.
- Max Pc over the covariance size: Alfriend et al. (1999), Alfano (2005) for the isotropic
  R^2/(e d^2); the line bound (covariance collapsed along the miss) is the maximum over sigma
  of a 1-D normal mass over the chord, computed here with scipy.stats.norm and
  scipy.optimize.minimize_scalar.
- The dilution region: Pc rises when the covariance shrinks (Alfano 2005); checked with an
  independent scipy dblquad of the encounter-plane Gaussian.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats
from sgp4.api import WGS72, Satrec

from screener.elements import ElementSet
from screener.propagation import Sgp4Batch
from screener.propagation import codes
from screener.risk.attention import ACT, ROUTINE, WATCH, Thresholds
from screener.risk.pc import pc_max_line, pc_max_scaled, pc_quadrature

from .nightly import screener, write_config

RE_WGS72_KM = 6378.135  # WGS-72 equatorial radius (the constant inside SGP4)


# ---- attention thresholds ------------------------------------------------------------------
@pytest.mark.parametrize("pc,level", [
    (1e-4, ACT), (1.0001e-4, ACT), (0.9999e-4, WATCH), (1.5e-5, WATCH), (3e-5, WATCH),
    (1e-5, WATCH), (0.9999e-5, ROUTINE), (1e-7, ROUTINE), (0.0, ROUTINE), (0.5, ACT),
])
def test_default_thresholds_on_both_sides(pc, level):
    assert Thresholds().level(pc, pc, False)[0] == level
    assert Thresholds().is_default


def test_configured_thresholds_on_both_sides():
    t = Thresholds(act_pc=1e-3, watch_pc=1e-6)
    assert t.level(1e-3, 0, False)[0] == ACT and t.level(0.99e-3, 0, False)[0] == WATCH
    assert t.level(1e-6, 0, False)[0] == WATCH and t.level(0.99e-6, 0, False)[0] == ROUTINE
    with pytest.raises(ValueError):
        Thresholds(act_pc=1e-6, watch_pc=1e-4)


def test_dilution_raises_to_watch_only_when_max_pc_reaches_watch():
    t = Thresholds()
    assert t.level(1e-7, 1e-5, True)[0] == WATCH
    assert t.level(1e-7, 0.99e-5, True)[0] == ROUTINE
    assert t.level(1e-7, 1e-3, False)[0] == ROUTINE   # not in dilution: max Pc alone is no reason


# ---- the 100 km gate ------------------------------------------------------------------------
def test_altitude_gate_marks_a_sample_sgp4_itself_accepts():
    """An eccentric orbit whose perigee lies at about 90 km altitude: the sgp4 library gives
    code 0 there, our batch marks the sample BELOW_100_KM and keeps the others usable."""
    perigee_km, apogee_km = RE_WGS72_KM + 90.0, RE_WGS72_KM + 1500.0
    a = (perigee_km + apogee_km) / 2
    e = (apogee_km - perigee_km) / (apogee_km + perigee_km)
    n_rad_min = math.sqrt(398600.8 / a**3) * 60.0        # WGS-72 mu
    sat = Satrec()
    sat.sgp4init(WGS72, "i", 0, 27000.0, 0.0, 0.0, 0.0, e, 0.0, math.radians(50.0), 0.0,
                 n_rad_min, 0.0)
    t_min = np.linspace(0.0, 2 * math.pi / n_rad_min, 200)
    alt, err = [], []
    for tm in t_min:
        k, r, _ = sat.sgp4_tsince(tm)
        err.append(k)
        alt.append(np.linalg.norm(r) - RE_WGS72_KM)
    alt, err = np.array(alt), np.array(err)
    low = (alt < 100.0) & (err == 0)
    assert low.any() and (alt > 100.0).any()
    rec = ElementSet(catalog_id="99990", name="LOW-PERIGEE", epoch_jd=2433281.5 + 27000.0,
                     epoch_fr=0.0, mean_motion_rev_day=n_rad_min * 1440.0 / (2 * math.pi),
                     eccentricity=e, inclination_deg=50.0, raan_deg=0.0, arg_perigee_deg=0.0,
                     mean_anomaly_deg=0.0, bstar_per_earth_radius=0.0)
    _, _, code = Sgp4Batch([rec]).states(rec.epoch_jd, rec.epoch_fr, t_min * 60.0)
    assert (code[0][low] == codes.BELOW_100_KM).all()
    assert (code[0][alt > 100.5] == codes.OK).all()
    k = int(np.argmax(low))
    assert Sgp4Batch([rec]).state_at(0, rec.epoch_jd, rec.epoch_fr, t_min[k] * 60.0)[2] == codes.BELOW_100_KM


def test_compiled_gates_agree_with_the_numpy_gates():
    """The one-pass compiled gates (screen_states, used on every batch) give the codes and the
    NaNs of apply_gates written out in numpy, on states chosen to hit each gate, their edges
    and SGP4 error codes (the gates' thresholds: 100 km altitude, 500,000 km radius, 1.05 x
    escape speed)."""
    from screener.constants import MAX_RADIUS_KM, MIN_ALTITUDE_KM, MU_EARTH_KM3_S2
    from screener.propagation.sgp4_batch import apply_gates, screen_states

    rng = np.random.default_rng(7)
    n = 4000
    radius = np.concatenate([rng.uniform(RE_WGS72_KM, RE_WGS72_KM + 300.0, n // 4),
                             rng.uniform(6500.0, 50000.0, n // 4),
                             rng.uniform(0.9, 1.1, n // 4) * MAX_RADIUS_KM,
                             # 1 mm either side of the 100 km edge (at the edge itself the
                             # last bit of the rounding decides)
                             RE_WGS72_KM + MIN_ALTITUDE_KM + rng.choice([-1e-6, 1e-6], n // 4)])
    u = rng.normal(size=(n, 3))
    r = radius[:, None] * u / np.linalg.norm(u, axis=1)[:, None]
    speed = np.sqrt(2.0 * MU_EARTH_KM3_S2 / radius) * rng.uniform(0.5, 1.1, n)
    w = rng.normal(size=(n, 3))
    v = speed[:, None] * w / np.linalg.norm(w, axis=1)[:, None]
    code = np.where(rng.uniform(size=n) < 0.05, rng.integers(1, 7, n), 0).astype(np.int8)
    r, v, code = r.reshape(40, 100, 3), v.reshape(40, 100, 3), code.reshape(40, 100)
    want_r, want_v, want_c = r.copy(), v.copy(), code.copy()
    failed = want_c != codes.OK
    want_r[failed], want_v[failed] = np.nan, np.nan
    apply_gates(want_r, want_v, want_c)
    screen_states(r, v, code)
    assert set(np.unique(want_c)) >= {codes.OK, codes.BELOW_100_KM, codes.IMPLAUSIBLE_SPEED,
                                      codes.IMPLAUSIBLE_RADIUS, 1, 6}
    assert np.array_equal(code, want_c)
    assert np.array_equal(r, want_r, equal_nan=True) and np.array_equal(v, want_v, equal_nan=True)


# ---- maximum Pc ------------------------------------------------------------------------------
def _line_max_scipy(d, R):
    """max over sigma of P(d - R < X < d + R), X ~ N(0, sigma^2)."""
    f = lambda ls: -(stats.norm.cdf((d + R) / math.exp(ls)) - stats.norm.cdf((d - R) / math.exp(ls)))
    res = optimize.minimize_scalar(f, bounds=(math.log(d) - 5, math.log(d) + 5), method="bounded",
                                   options={"xatol": 1e-9})
    return -res.fun


@pytest.mark.parametrize("d,R", [(1000.0, 10.0), (500.0, 5.0), (3000.0, 20.0)])
def test_line_bound_against_scipy(d, R):
    assert pc_max_line(d, R) == pytest.approx(_line_max_scipy(d, R), rel=1e-3)


@pytest.mark.parametrize("aspect", [1.0, 3.0, 10.0, 100.0])
def test_scaled_maximum_at_several_aspect_ratios(aspect):
    """The scaled maximum equals a dense grid search over the size (our quadrature, itself
    pinned to published values) and never exceeds the line bound."""
    xm, ym, R = 700.0, 300.0, 10.0
    sx, sy = 1.0, aspect
    worst, k = pc_max_scaled(xm, ym, sx, sy, R)
    grid = np.exp(np.linspace(math.log(10.0), math.log(1e5), 2001))
    vals = np.array([pc_quadrature(xm, ym, g * sx, g * sy, R) for g in grid])
    assert worst >= vals.max() * (1 - 1e-6)
    assert worst <= vals.max() * (1 + 1e-3)
    assert worst <= pc_max_line(math.hypot(xm, ym), R)


def test_scaled_maximum_approaches_the_line_bound_for_a_thin_covariance_along_the_miss():
    d, R = 1000.0, 10.0
    worst, _ = pc_max_scaled(d, 0.0, 1.0, 1e-3, R)
    assert worst == pytest.approx(pc_max_line(d, R), rel=1e-2)
    iso, _ = pc_max_scaled(d, 0.0, 1.0, 1.0, R)
    assert iso == pytest.approx(R * R / (math.e * d * d), rel=1e-2)
    assert iso < worst


# ---- dilution region and the watch rule, end to end ------------------------------------------
def _plane_pc(xm, ym, sx, sy, R):
    def density(rho, phi):
        x, y = xm + rho * math.cos(phi), ym + rho * math.sin(phi)
        return math.exp(-0.5 * (x / sx) ** 2 - 0.5 * (y / sy) ** 2) / (2 * math.pi * sx * sy) * rho

    return integrate.dblquad(density, 0.0, 2 * math.pi, 0.0, R, epsabs=0.0, epsrel=1e-9)[0]


@pytest.fixture(scope="module")
def diluted_run(tmp_path_factory):
    """The demo scenario with a very large, anisotropic covariance configured for every LEO
    catalog object: several encounters fall in the dilution region."""
    d = tmp_path_factory.mktemp("dilution")
    extra = ('[covariance]\nuse_history = false\n[covariance.regimes.LEO]\n'
             'sigma_rtn_km = [0.5, 20.0, 2.0]\ngrowth_rtn_km_per_day = [0.1, 5.0, 0.2]\n')
    cfg = write_config(d / "c.toml", days=1.0, extra=extra)
    p = screener("run", "--config", cfg, "--store", str(d / "s.sqlite"), "--quiet", "--no-exports",
                 "--json", str(d / "out.json"))
    assert p.returncode == 0, p.stderr
    return json.load(open(d / "out.json"))


def test_dilution_flag_and_the_watch_rule_on_an_anisotropic_case(diluted_run):
    enc = diluted_run["encounters"]
    diluted = [e for e in enc if e["dilution_region"] and e.get("pc_2d") is None]
    assert diluted, "the configured covariance should put some fast pass in the dilution region"
    raised = 0
    for e in diluted:
        args = (e["plane_xm_m"], e["plane_ym_m"], e["plane_sx_m"], e["plane_sy_m"], e["hbr_m"])
        assert abs(args[2] / args[3] - 1) > 0.5                     # anisotropic in the plane
        here = _plane_pc(*args)
        shrunk = _plane_pc(args[0], args[1], 0.9 * args[2], 0.9 * args[3], args[4])
        assert shrunk > here                                          # what the flag means
        assert e["pc"] == pytest.approx(here, rel=2e-2)
        if e["pc"] < 1e-5:
            want = WATCH if e["pc_max"] >= 1e-5 else ROUTINE
            assert e["attention"] == want, e
            raised += want == WATCH
    assert raised >= 1, "expected at least one event raised to watch by its max Pc"
