"""Screening volumes: a sphere, or an ellipsoid / box in the primary's RIC frame."""

from __future__ import annotations

import dataclasses

import numpy as np

# Default half-sizes by orbit regime, km (radial, in-track, cross-track).  These are common
# practice for a first screen: tight radial, long in-track where along-track uncertainty is
# largest; larger at GEO where orbit knowledge is coarser.  Configurable everywhere.
DEFAULT_RIC_KM = {
    "LEO": (2.0, 25.0, 25.0),
    "HEO": (10.0, 40.0, 40.0),
    "MEO": (10.0, 40.0, 40.0),
    "GEO": (20.0, 50.0, 50.0),
}


@dataclasses.dataclass(frozen=True)
class Volume:
    """shape: 'sphere' (radius = half_km[0]), 'ellipsoid' or 'box' (RIC half-sizes)."""

    shape: str
    half_km: tuple[float, float, float]

    @classmethod
    def sphere(cls, radius_km: float) -> "Volume":
        if not radius_km > 0:
            raise ValueError("screening radius must be positive")
        return cls("sphere", (radius_km, radius_km, radius_km))

    @classmethod
    def ellipsoid(cls, r_km: float, i_km: float, c_km: float) -> "Volume":
        if min(r_km, i_km, c_km) <= 0:
            raise ValueError("RIC half-sizes must be positive")
        return cls("ellipsoid", (r_km, i_km, c_km))

    @classmethod
    def box(cls, r_km: float, i_km: float, c_km: float) -> "Volume":
        if min(r_km, i_km, c_km) <= 0:
            raise ValueError("RIC half-sizes must be positive")
        return cls("box", (r_km, i_km, c_km))

    @property
    def bounding_radius_km(self) -> float:
        """Radius of a sphere that contains the volume (what the sieve screens with)."""
        h = np.array(self.half_km)
        return float(np.sqrt((h**2).sum()) if self.shape == "box" else h.max())

    def norm(self, ric_km: np.ndarray) -> np.ndarray:
        """<= 1 inside.  ric_km (..., 3)."""
        ric = np.asarray(ric_km, float)
        if self.shape == "sphere":
            return np.linalg.norm(ric, axis=-1) / self.half_km[0]
        q = ric / np.array(self.half_km)
        if self.shape == "ellipsoid":
            return np.linalg.norm(q, axis=-1)
        return np.abs(q).max(axis=-1)

    def contains(self, ric_km: np.ndarray) -> np.ndarray:
        return self.norm(ric_km) <= 1.0

    def describe(self) -> str:
        if self.shape == "sphere":
            return f"sphere, radius {self.half_km[0]:g} km"
        r, i, c = self.half_km
        return f"RIC {self.shape} {r:g} x {i:g} x {c:g} km (half-sizes)"
