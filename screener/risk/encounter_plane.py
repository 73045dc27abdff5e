"""From 3-D states and covariances at TCA to the 2-D encounter plane."""

from __future__ import annotations

import dataclasses

import numpy as np


@dataclasses.dataclass
class PlaneGeometry:
    xm_m: float          # miss along the combined covariance's first principal axis, m
    ym_m: float
    sx_m: float          # principal standard deviations, m
    sy_m: float
    miss_m: float
    cov2_m2: np.ndarray  # 2x2 in the (miss direction, normal) plane frame
    basis: np.ndarray    # 2x3 rows: plane axes in the inertial frame


def plane_basis(rho_km: np.ndarray, w_km_s: np.ndarray) -> np.ndarray:
    """Rows: x = miss direction (rho with its along-w part removed), y = w_hat x x."""
    return plane_basis_many(np.asarray(rho_km, float)[None], np.asarray(w_km_s, float)[None])[0]


def project(rho_km, w_km_s, cov_combined_km2) -> PlaneGeometry:
    """Combined position covariance (3x3, km^2, inertial) -> principal axes in the plane.
    The two objects' errors are taken as uncorrelated, so the combined covariance is the sum."""
    return project_many(np.asarray(rho_km, float)[None], np.asarray(w_km_s, float)[None],
                        np.asarray(cov_combined_km2, float)[None])[0]


def ric_to_inertial_cov(cov_ric: np.ndarray, r_km, v_km_s) -> np.ndarray:
    return ric_to_inertial_cov_many(np.asarray(cov_ric, float)[None], np.asarray(r_km, float)[None],
                                    np.asarray(v_km_s, float)[None])[0]


def plane_basis_many(rho_km: np.ndarray, w_km_s: np.ndarray) -> np.ndarray:
    """plane_basis for (n, 3) arrays: (n, 2, 3).  Where rho has no part across w, x is taken
    along w_hat x z instead."""
    wh = w_km_s / np.linalg.norm(w_km_s, axis=1, keepdims=True)
    rp = rho_km - np.einsum("ni,ni->n", rho_km, wh)[:, None] * wh
    n = np.linalg.norm(rp, axis=1)
    alt = np.cross(wh, np.array([0.0, 0.0, 1.0]))
    with np.errstate(invalid="ignore", divide="ignore"):     # used only where n == 0
        alt /= np.linalg.norm(alt, axis=1, keepdims=True)
    x = np.where((n > 0)[:, None], rp / np.where(n > 0, n, 1.0)[:, None], alt)
    return np.stack([x, np.cross(wh, x)], axis=1)


def project_many(rho_km: np.ndarray, w_km_s: np.ndarray, cov_combined_km2: np.ndarray) -> list[PlaneGeometry]:
    """project() for many encounters at once: rho, w (n, 3) and combined covariances (n, 3, 3)
    (km, km/s, km^2); plane figures in metres."""
    m, sig, miss, c2, B = _plane_arrays(rho_km, w_km_s, cov_combined_km2)
    return [PlaneGeometry(float(m[k, 0]), float(m[k, 1]), float(sig[k, 0]), float(sig[k, 1]),
                          float(miss[k]), c2[k], B[k]) for k in range(len(m))]


def project_columns(rho_km: np.ndarray, w_km_s: np.ndarray, cov_combined_km2: np.ndarray):
    """project_many's figures as arrays, no PlaneGeometry objects: xm, ym, sx, sy, miss (m)."""
    m, sig, miss, _c2, _B = _plane_arrays(rho_km, w_km_s, cov_combined_km2)
    return m[:, 0], m[:, 1], sig[:, 0], sig[:, 1], miss


def _plane_arrays(rho_km, w_km_s, cov_combined_km2):
    B = plane_basis_many(rho_km, w_km_s)
    c2 = np.einsum("nij,njk,nlk->nil", B, cov_combined_km2, B) * 1e6
    miss2 = np.einsum("nij,nj->ni", B, rho_km) * 1e3
    vals, vecs = np.linalg.eigh(c2)
    vals = np.maximum(vals, 1e-12)
    m = np.einsum("nji,nj->ni", vecs, miss2)
    return m, np.sqrt(vals), np.linalg.norm(miss2, axis=1), c2, B


def ric_to_inertial_cov_many(cov_ric: np.ndarray, r_km: np.ndarray, v_km_s: np.ndarray) -> np.ndarray:
    """ric_to_inertial_cov for (n, 3, 3) covariances and (n, 3) states."""
    from ..screening.ric import ric_basis

    Bm = ric_basis(r_km, v_km_s)
    return np.einsum("nji,njk,nkl->nil", Bm, cov_ric, Bm)
