"""Propagation layer: element sets and ephemerides in, TEME states out."""

from . import codes
from .ephemeris import OemTrajectory, Population, hermite_cubic
from .frames import geodetic, teme_to_itrs_km, to_teme
from .orbit import OrbitSize, orbit_from_mean_motion, period_s, semi_major_axis_km
from .sgp4_batch import Sgp4Batch, apply_gates, warn_if_slow

__all__ = [
    "codes", "Population", "OemTrajectory", "Sgp4Batch", "apply_gates", "warn_if_slow",
    "hermite_cubic", "geodetic", "teme_to_itrs_km", "to_teme",
    "OrbitSize", "orbit_from_mean_motion", "period_s", "semi_major_axis_km",
]
