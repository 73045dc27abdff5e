"""Pc with both objects' covariances, each given in its own RTN frame, against a direct
numerical integral.

Reference (written here, independently of screener.risk): each covariance is rotated to the
inertial frame with the object's own RTN basis written out by hand (R = r/|r|,
N = r x v/|r x v|, T = N x R; Vallado, Fundamentals of Astrodynamics and Applications), the two
are summed (uncorrelated errors, common practice), projected on an orthonormal pair of axes
normal to the relative velocity (the encounter plane of the short-encounter model, Foster &
Estes 1992), and the bivariate normal density of the relative position is integrated over the
hard-body disk with scipy.integrate.dblquad in polar coordinates around the miss vector.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from screener.risk.assess import assess

MU_KM3_S2 = 398600.4418  # common practice (IERS / WGS-84 value)


def _rtn_rows(r, v):
    R = r / np.linalg.norm(r)
    N = np.cross(r, v)
    N = N / np.linalg.norm(N)
    return np.stack([R, np.cross(N, R), N])


def _cov_rtn_m2(sig_r, sig_t, sig_n, rho_rt=0.0, rho_tn=0.0):
    c = np.diag([sig_r**2, sig_t**2, sig_n**2]).astype(float)
    c[0, 1] = c[1, 0] = rho_rt * sig_r * sig_t
    c[1, 2] = c[2, 1] = rho_tn * sig_t * sig_n
    return c


def reference_pc(r1, v1, c1_rtn_m2, r2, v2, c2_rtn_m2, hbr_m):
    B1, B2 = _rtn_rows(r1, v1), _rtn_rows(r2, v2)
    c = B1.T @ c1_rtn_m2 @ B1 + B2.T @ c2_rtn_m2 @ B2            # inertial, m^2
    w = v2 - v1
    e3 = w / np.linalg.norm(w)
    helper = np.array([0.0, 0.0, 1.0]) if abs(e3[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    e1 = np.cross(e3, helper)
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(e3, e1)
    P = np.stack([e1, e2])
    c2 = P @ c @ P.T
    m = P @ ((r2 - r1) * 1e3)
    inv = np.linalg.inv(c2)
    norm = 1.0 / (2.0 * math.pi * math.sqrt(np.linalg.det(c2)))

    def density(rho, phi):
        x = m + rho * np.array([math.cos(phi), math.sin(phi)])
        return norm * math.exp(-0.5 * x @ inv @ x) * rho

    val, _ = integrate.dblquad(density, 0.0, 2.0 * math.pi, 0.0, hbr_m, epsabs=0.0, epsrel=1e-11)
    return val


def _geometry(crossing_deg, miss_r_m, miss_n_m, alt_km=600.0):
    """Primary on a circular equatorial orbit at +x; secondary through nearly the same point on
    a circular orbit inclined by the crossing angle (a node at +x), offset by the miss."""
    a = 6378.137 + alt_km
    v = math.sqrt(MU_KM3_S2 / a)
    r1 = np.array([a, 0.0, 0.0])
    v1 = np.array([0.0, v, 0.0])
    c, s = math.cos(math.radians(crossing_deg)), math.sin(math.radians(crossing_deg))
    r2 = r1 + np.array([miss_r_m, 0.0, miss_n_m]) * 1e-3
    v2 = np.array([0.0, v * c, v * s])
    return r1, v1, r2, v2


CASES = [
    # crossing angle, miss radial / normal (m), primary RTN sigmas + correlations,
    # secondary RTN sigmas + correlations, hard-body radius (m)
    (10.0, 60.0, 150.0, (40.0, 400.0, 25.0, 0.3, 0.0), (90.0, 1500.0, 70.0, -0.5, 0.2), 15.0),
    (45.0, 120.0, -80.0, (30.0, 250.0, 20.0, 0.6, 0.1), (150.0, 900.0, 40.0, 0.0, -0.4), 20.0),
    (90.0, -50.0, 200.0, (60.0, 600.0, 30.0, -0.4, 0.0), (80.0, 300.0, 200.0, 0.5, 0.3), 10.0),
    (170.0, 30.0, 40.0, (25.0, 200.0, 15.0, 0.2, 0.2), (40.0, 700.0, 35.0, -0.7, 0.0), 8.0),
]


@pytest.mark.parametrize("angle,mr,mn,s1,s2,hbr", CASES)
def test_pc_with_two_covariances_matches_direct_integration(angle, mr, mn, s1, s2, hbr):
    r1, v1, r2, v2 = _geometry(angle, mr, mn)
    c1, c2 = _cov_rtn_m2(*s1), _cov_rtn_m2(*s2)
    want = reference_pc(r1, v1, c1, r2, v2, c2, hbr)
    assert 1e-7 < want < 0.1  # resolvable cases
    out = assess(r1, v1, c1 * 1e-6, r2, v2, c2 * 1e-6, hbr, "test")
    assert out["pc_quadrature"] == pytest.approx(want, rel=1e-6)
    assert out["miss_km"] == pytest.approx(math.hypot(mr, mn) * 1e-3, rel=1e-12)
    if out["pc_method"] == "Chan series":
        assert out["pc"] == pytest.approx(want, rel=2e-2)  # Chan's equal-area approximation
