"""The primary's radial / in-track / cross-track frame (RIC, also called RTN/RSW)."""

from __future__ import annotations

import numpy as np


def ric_basis(r_km: np.ndarray, v_km_s: np.ndarray) -> np.ndarray:
    """Rows: R = r/|r|, C = r x v / |r x v|, I = C x R.  Shape (..., 3, 3)."""
    r = np.asarray(r_km, float)
    v = np.asarray(v_km_s, float)
    R = r / np.linalg.norm(r, axis=-1, keepdims=True)
    h = np.cross(r, v)
    C = h / np.linalg.norm(h, axis=-1, keepdims=True)
    I = np.cross(C, R)
    return np.stack([R, I, C], axis=-2)


def to_ric(vec: np.ndarray, r_km: np.ndarray, v_km_s: np.ndarray) -> np.ndarray:
    """Inertial vector(s) -> components in the RIC frame of the state (r, v)."""
    B = ric_basis(r_km, v_km_s)
    return np.einsum("...ij,...j->...i", B, vec)
