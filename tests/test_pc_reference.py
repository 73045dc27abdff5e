"""Pc methods against published cases and reference libraries.

Sources:
- Chan (2008), Spacecraft Collision Probability, test cases 1-12, as tabulated by Serra et al.
  (2016), J. Guidance, Control and Dynamics 39(5): expected Pc from exact quadrature.
- scipy.stats.ncx2 (reference library) for the isotropic exact form.
- Alfriend et al. (1999); Alfano (2005), J. Astronaut. Sci. 53(2): max Pc = R^2/(e d^2).
"""

from __future__ import annotations

import math

import pytest
from scipy import stats

from screener.risk.pc import (chan_is_reliable, cumulative, in_dilution_region, pc_chan,
                              pc_isotropic_exact, pc_max_isotropic, pc_max_scaled,
                              pc_monte_carlo, pc_quadrature)

# (xm, ym, sigma_x, sigma_y, R) in metres -> Pc
SERRA_2016_CHAN_CASES = [
    ((0, 10, 25, 50, 5), 9.7415e-3), ((10, 0, 25, 50, 5), 9.1811e-3),
    ((0, 10, 25, 75, 5), 6.5712e-3), ((10, 0, 25, 75, 5), 6.1250e-3),
    ((0, 1000, 1000, 3000, 10), 1.5766e-5), ((1000, 0, 1000, 3000, 10), 1.0109e-5),
    ((0, 1e4, 1000, 3000, 10), 6.4432e-8), ((1e4, 0, 1000, 3000, 10), 3.2186e-27),
    ((0, 1e4, 1000, 1e4, 10), 3.0326e-6), ((1e4, 0, 1000, 1e4, 10), 9.6557e-28),
    ((0, 5000, 1000, 3000, 50), 1.0387e-4), ((5000, 0, 1000, 3000, 50), 1.5644e-9),
]


@pytest.mark.parametrize("args,expected", SERRA_2016_CHAN_CASES)
def test_reference_quadrature_matches_serra_2016_table(args, expected):
    assert pc_quadrature(*args) == pytest.approx(expected, rel=1e-4)


@pytest.mark.parametrize("args,expected", SERRA_2016_CHAN_CASES)
def test_chan_series_within_its_gate_is_close_to_the_table(args, expected):
    ok, _ = chan_is_reliable(*args)
    if ok:
        # Chan's equal-area approximation: within 1 % on these cases (Serra et al. 2016 show
        # the same order of error for the series against exact quadrature)
        assert pc_chan(*args) == pytest.approx(expected, rel=1e-2)


def test_chan_gate_rejects_a_large_body_against_a_thin_covariance():
    ok, why = chan_is_reliable(0, 10, 2, 50, 5)
    assert not ok and "hard-body" in why


@pytest.mark.parametrize("d,s,R", [(0.0, 100.0, 10.0), (50.0, 100.0, 10.0), (500.0, 200.0, 20.0),
                                   (2000.0, 300.0, 5.0)])
def test_isotropic_cases_against_scipy_ncx2(d, s, R):
    q = pc_quadrature(d, 0.0, s, s, R)
    if d == 0:
        exact = 1 - math.exp(-R * R / (2 * s * s))  # closed form at zero miss
    else:
        exact = stats.ncx2.cdf(R * R / (s * s), 2, d * d / (s * s))
    assert q == pytest.approx(exact, rel=1e-6)
    assert pc_isotropic_exact(d, s, R) == pytest.approx(exact, rel=1e-9)


def test_max_pc_isotropic_handbook_value():
    """d = 1000 m, R = 10 m: R^2/(e d^2) = 3.679e-5, reached at sigma = d/sqrt(2)."""
    assert pc_max_isotropic(1000.0, 10.0) == pytest.approx(3.679e-5, rel=1e-3)
    worst, k = pc_max_scaled(1000.0, 0.0, 1.0, 1.0, 10.0)
    assert k == pytest.approx(1000.0 / math.sqrt(2), rel=1e-3)
    assert worst == pytest.approx(3.679e-5, rel=1e-3)


@pytest.mark.parametrize("args", [(0, 10, 25, 50, 5), (10, 0, 25, 75, 5), (30, 40, 60, 20, 8)])
def test_monte_carlo_agrees_with_reference_inside_its_99_interval(args):
    mc = pc_monte_carlo(*args, samples=2_000_000, seed=42)
    assert mc.lo99 <= pc_quadrature(*args) <= mc.hi99


def test_dilution_region_flagged_when_covariance_is_large_against_miss():
    assert in_dilution_region(1000.0, 0.0, 5000.0, 5000.0, 10.0)
    assert not in_dilution_region(1000.0, 0.0, 100.0, 100.0, 10.0)


def test_cumulative_risk():
    assert cumulative([1e-4, 1e-4]) == pytest.approx(1 - (1 - 1e-4) ** 2, rel=1e-12)
