"""The along-path Monte Carlo (slow and long encounters) against independent estimates, at
the sample counts production uses, and the attention level it is allowed to set.

References (written here, independently of screener.risk.pc_path):
- On a straight relative path the along-path Pc and the 2-D encounter-plane Pc are the same
  quantity (Foster & Estes 1992); the 2-D value comes from scipy's dblquad over the disk.
- On a curved path: numpy's multivariate_normal offsets (another generator, another seed),
  each tested against the path sampled so densely that point spacing is under 2 % of the
  hard-body radius.
Tolerances are binomial: the production estimate p_hat from N samples must lie within
3.29 standard errors (two-sided 99.9 %) of the reference, sqrt(p (1 - p) / N).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from screener.risk.attention import ACT, WATCH, Thresholds
from screener.risk.pc_path import (IS_FIRST_BATCH, PATH_MC_MAX_SAMPLES, PATH_MC_SAMPLES,
                                   pc_path_resolved)

Z999 = 3.29


def _plane_pc(xm, ym, sx, sy, R):
    def density(rho, phi):
        x, y = xm + rho * math.cos(phi), ym + rho * math.sin(phi)
        return math.exp(-0.5 * (x / sx) ** 2 - 0.5 * (y / sy) ** 2) / (2 * math.pi * sx * sy) * rho

    return integrate.dblquad(density, 0.0, 2 * math.pi, 0.0, R, epsabs=0.0, epsrel=1e-10)[0]


def _straight(xm_m, sx_m, sy_m):
    t = np.linspace(-900.0, 900.0, 61)
    w = np.array([0.0, 0.0, 0.004])                       # 4 m/s along z: the plane is x-y
    path = np.array([xm_m / 1e3, 0.0, 0.0]) + t[:, None] * w
    cov = np.diag([(sx_m / 1e3) ** 2, (sy_m / 1e3) ** 2, 0.5 ** 2])
    return path, cov


def _within(p_hat, p, n):
    return abs(p_hat - p) <= Z999 * math.sqrt(p * (1 - p) / n) + 1.0 / n


@pytest.mark.parametrize("xm_m,sx_m,sy_m,hbr_m", [(30.0, 50.0, 50.0, 10.0),
                                                  (60.0, 40.0, 150.0, 15.0),
                                                  (0.0, 120.0, 30.0, 6.0)])
def test_straight_path_estimate_against_dblquad(xm_m, sx_m, sy_m, hbr_m):
    path, cov = _straight(xm_m, sx_m, sy_m)
    want = _plane_pc(xm_m, 0.0, sx_m, sy_m, hbr_m)
    mc, resolved = pc_path_resolved(path, cov, hbr_m / 1e3, (1e-5, 1e-4))
    assert resolved and mc.samples == PATH_MC_SAMPLES      # far from both thresholds
    assert _within(mc.pc, want, mc.samples), (mc, want)


def test_curved_path_estimate_against_a_dense_brute_force():
    """A co-orbital-like relative path: a 2 km ellipse-like arc passing 40 m from the primary
    over +-30 min, sampled every 60 s for the production code and every 0.2 s here."""
    hbr_km = 0.012
    # strongly correlated and anisotropic (sigmas 30, 54, 35 m): a wrong factorisation of it
    # (L^T L instead of L L^T) more than doubles the estimate
    A = np.array([[0.03, 0.0, 0.0], [0.05, 0.02, 0.0], [0.01, 0.03, 0.015]])
    cov = A @ A.T   # km^2

    def rel(t_s):
        u = 2 * math.pi * np.asarray(t_s) / 5600.0
        return np.stack([0.04 + 1.0 * (1 - np.cos(u)), 2.0 * np.sin(u), 0.3 * np.sin(u)], axis=-1)

    coarse = rel(np.arange(-1800.0, 1800.1, 60.0))
    mc, _ = pc_path_resolved(coarse, cov, hbr_km, (1e-5, 1e-4))
    fine = rel(np.arange(-1800.0, 1800.1, 0.2))
    rng = np.random.Generator(np.random.PCG64(20261202))
    n_ref, hits = 100_000, 0
    near = fine[np.linalg.norm(fine, axis=1) < 0.6]           # 0.6 km: over 9 sigma away
    for k in range(0, n_ref, 2_000):
        d = rng.multivariate_normal(np.zeros(3), cov, size=2_000)
        dist2 = ((near[None, :, :] + d[:, None, :]) ** 2).sum(axis=2).min(axis=1)
        hits += int(np.count_nonzero(dist2 <= hbr_km ** 2))
    ref = hits / n_ref
    assert 1e-3 < ref < 0.2
    tol = Z999 * math.sqrt(ref * (1 - ref) * (1.0 / n_ref + 1.0 / mc.samples))
    assert abs(mc.pc - ref) <= tol, (mc, ref)


def test_a_slow_pass_between_the_thresholds_is_ranked_watch_not_routine():
    """Exact Pc 3e-5: a plain batch of 50,000 samples sees about 1.5 hits (often none), which
    once ranked it routine; importance sampling (at once: the bound rules out a Pc the plain
    batch could decide) goes on until the 99 % interval clears both thresholds."""
    sx = sy = 400.0
    hbr = 10.0
    # find the miss for Pc = 3e-5 on the straight path
    from scipy.optimize import brentq
    xm = brentq(lambda x: _plane_pc(x, 0.0, sx, sy, hbr) - 3e-5, 0.0, 3000.0)
    path, cov = _straight(xm, sx, sy)
    mc, resolved = pc_path_resolved(path, cov, hbr / 1e3, (1e-5, 1e-4))
    assert resolved and mc.samples >= IS_FIRST_BATCH
    assert 1e-5 <= mc.lo99 and mc.hi99 < 1e-4
    assert Thresholds().level(mc.pc, 0.0, False)[0] == WATCH
    assert _within(mc.pc, 3e-5, mc.samples)


def test_unresolvable_pass_is_ranked_by_its_upper_bound():
    """Exact Pc at the act threshold: no sample count separates it; the cap is reached and
    the interval still holds 1e-4, so the level must come from the upper bound (act)."""
    from scipy.optimize import brentq

    from screener.risk.attach import _path_pc

    sx = sy = 300.0
    hbr = 10.0
    xm = brentq(lambda x: _plane_pc(x, 0.0, sx, sy, hbr) - 1e-4, 0.0, 3000.0)
    path, cov = _straight(xm, sx, sy)
    mc, resolved = pc_path_resolved(path, cov, hbr / 1e3, (1e-5, 1e-4))
    assert mc.samples == PATH_MC_MAX_SAMPLES
    if resolved:       # a draw that happened to clear the threshold: nothing more to check
        return
    assert mc.lo99 < 1e-4 <= mc.hi99

    class _E:  # the fields _path_pc reads of an Encounter
        primary_r_km, primary_v_km_s = (7000.0, 0.0, 0.0), (0.0, 7.5, 0.0)
        secondary_r_km, secondary_v_km_s = (7000.0, 0.0, 0.0), (0.0, 7.5, 0.004)
        relative_path_km = path.tolist()
        profile_half_s = 900.0

    half = np.diag([(sx / 1e3) ** 2 / 2, (sy / 1e3) ** 2 / 2, 0.5 ** 2 / 2])
    # the RTN frames here are (nearly) the inertial axes: the two halves sum to cov
    out = {"pc": 0.0, "pc_method": "x", "pc_max": 0.0, "dilution_region": False}
    _path_pc(_E, half, half, out, hbr, Thresholds())
    assert out["pc_mc_resolved"] is False
    assert out["attention"] == ACT and "upper bound" in out["attention_reason"]


@pytest.mark.parametrize("xm_m,sx_m,sy_m,hbr_m", [(30.0, 50.0, 50.0, 10.0), (60.0, 40.0, 150.0, 15.0),
                                                  (400.0, 100.0, 100.0, 10.0), (900.0, 60.0, 300.0, 20.0)])
def test_upper_bound_holds_against_dblquad_and_is_not_vacuous(xm_m, sx_m, sy_m, hbr_m):
    from screener.risk.pc_path import pc_path_upper_bound

    path, cov = _straight(xm_m, sx_m, sy_m)
    exact = _plane_pc(xm_m, 0.0, sx_m, sy_m, hbr_m)
    bound = pc_path_upper_bound(path, cov, hbr_m / 1e3)
    assert bound >= exact or bound == 1e-30      # 1e-30: the stated floor (tail underflow)
    assert bound <= max(50 * exact, 1e-30)   # tight enough to decide remote passes


def test_a_remote_slow_pass_is_decided_by_the_bound_without_samples():
    """2 km miss, 10-20 sigma (Pc ~1e-40): the rigorous path bound is far below what a batch
    could resolve, so no samples are drawn; the upper end reported is that bound, not below
    the exact value (2-D quadrature, Foster & Estes 1992)."""
    path, cov = _straight(2000.0, 100.0, 200.0)
    mc, resolved = pc_path_resolved(path, cov, 0.01, (1e-5, 1e-4))
    assert resolved and mc.samples == 0 and mc.pc == 0.0 and mc.hi99 < 1e-10
    assert _plane_pc(2000.0, 0.0, 100.0, 200.0, 10.0) <= mc.hi99


@pytest.mark.parametrize("xm_m,sx_m,sy_m,hbr_m", [(300.0, 150.0, 400.0, 10.0),
                                                  (900.0, 300.0, 300.0, 10.0),
                                                  (100.0, 40.0, 200.0, 5.0)])
def test_importance_sampling_against_dblquad(xm_m, sx_m, sy_m, hbr_m):
    """The tube-centred importance sampler on straight paths, 50,000 samples: within 3.29 of
    its own standard errors of the dblquad value, and within 10 % (it must be sharp enough to
    separate a threshold from a value twice or half of it)."""
    from screener.risk.pc_path import pc_path_importance

    path, cov = _straight(xm_m, sx_m, sy_m)
    want = _plane_pc(xm_m, 0.0, sx_m, sy_m, hbr_m)
    est = pc_path_importance(path, cov, hbr_m / 1e3, samples=50_000, seed=7)
    se = (est.hi99 - est.pc) / 2.5758293035489004
    assert abs(est.pc - want) <= 3.29 * se + 1e-300, (est, want)
    assert est.pc == pytest.approx(want, rel=0.10)


def test_importance_sampling_on_the_curved_path():
    from screener.risk.pc_path import pc_path_importance

    A = np.array([[0.03, 0.0, 0.0], [0.05, 0.02, 0.0], [0.01, 0.03, 0.015]])
    cov = A @ A.T

    def rel(t_s):
        u = 2 * math.pi * np.asarray(t_s) / 5600.0
        return np.stack([0.04 + 1.0 * (1 - np.cos(u)), 2.0 * np.sin(u), 0.3 * np.sin(u)], axis=-1)

    coarse = rel(np.arange(-1800.0, 1800.1, 60.0))
    plain = __import__("screener.risk.pc_path", fromlist=["x"]).pc_path_monte_carlo(
        coarse, cov, 0.012, samples=1_000_000, seed=11)
    est = pc_path_importance(coarse, cov, 0.012, samples=50_000, seed=5)
    assert plain.pc > 1e-3
    se = (est.hi99 - est.pc) / 2.5758293035489004
    tol = 3.29 * math.sqrt(se ** 2 + plain.pc * (1 - plain.pc) / plain.samples)
    assert abs(est.pc - plain.pc) <= tol, (est, plain)



@pytest.mark.parametrize("hbr_m", [5.0, 12.0, 40.0])
def test_the_indexed_hit_test_gives_the_exact_hits(hbr_m):
    """The point index of the path (points every hbr/2) only sorts offsets into sure hits,
    sure misses and a thin shell tested exactly; the hits are those of the exact
    point-to-segment test on every offset (elementary geometry: every point of a segment is
    within half the spacing of an indexed point)."""
    from screener.risk.pc_path import _Path

    # a slow co-orbital drift (4 m/s in-track over +-30 min, a slight weave), large in-track
    # uncertainty: every segment of it can be hit
    t = np.arange(-1800.0, 1800.1, 20.0)
    path = np.stack([0.02 + 0.0 * t, 0.004 * t, 0.003 * np.sin(t / 500.0)], axis=-1)
    cov = np.diag([0.02, 2.0, 0.03]) ** 2
    p = _Path.near(path, cov, hbr_m / 1000.0)
    assert p.tree is not None
    rng = np.random.default_rng(int(hbr_m))
    d = rng.standard_normal((40_000, 3)) @ np.linalg.cholesky(cov).T
    got, exact = p.hits(d, hbr_m / 1000.0), p._exact(d, hbr_m / 1000.0)
    assert exact.sum() > 20
    assert np.array_equal(got, exact)
    # the compiled exact test against the point-to-segment distance written out in numpy
    # (offsets within 1e-9 km of the radius left out: rounding may put them either side)
    q = -d[:, None, :] - p.a[None]
    u = np.clip(np.einsum("nsk,sk->ns", q, p.seg) / p.seg2, 0.0, 1.0)
    dist = np.linalg.norm(q - u[..., None] * p.seg[None], axis=2).min(axis=1)
    clear = np.abs(dist - hbr_m / 1000.0) > 1e-9
    assert np.array_equal(exact[clear], (dist <= hbr_m / 1000.0)[clear])
