"""Atmospheric density for the drag term of the numerical propagator: an exponential model
by altitude band, rho(h) = rho0 * exp(-(h - h0) / H) with (h0, rho0, H) from the band that
holds h.

Numbers: the exponential atmosphere table of Vallado, Fundamentals of Astrodynamics and
Applications (Table 8-4, based on CIRA-72 below 25 km and the 1976 US Standard Atmosphere
above), recalled from memory.  It is a static, mean-solar-activity model: real densities
at 500 km vary by a factor of ten over the solar cycle.  Drag enters a manoeuvre trade only
through the difference between a burned and an unburned trajectory, where this error is of
second order (DEVELOPERS.md gives the measured figure).
"""

from __future__ import annotations

import bisect
import math

import numpy as np

# base altitude km, nominal density kg/m^3, scale height km
_TABLE = np.array([
    (0.0, 1.225, 7.249), (25.0, 3.899e-2, 6.349), (30.0, 1.774e-2, 6.682),
    (40.0, 3.972e-3, 7.554), (50.0, 1.057e-3, 8.382), (60.0, 3.206e-4, 7.714),
    (70.0, 8.770e-5, 6.549), (80.0, 1.905e-5, 5.799), (90.0, 3.396e-6, 5.382),
    (100.0, 5.297e-7, 5.877), (110.0, 9.661e-8, 7.263), (120.0, 2.438e-8, 9.473),
    (130.0, 8.484e-9, 12.636), (140.0, 3.845e-9, 16.149), (150.0, 2.070e-9, 22.523),
    (180.0, 5.464e-10, 29.740), (200.0, 2.789e-10, 37.105), (250.0, 7.248e-11, 45.546),
    (300.0, 2.418e-11, 53.628), (350.0, 9.518e-12, 53.298), (400.0, 3.725e-12, 58.515),
    (450.0, 1.585e-12, 60.828), (500.0, 6.967e-13, 63.822), (600.0, 1.454e-13, 71.835),
    (700.0, 3.614e-14, 88.667), (800.0, 1.170e-14, 124.64), (900.0, 5.245e-15, 181.05),
    (1000.0, 3.019e-15, 268.00),
])
_BASE_ALT_KM = _TABLE[:, 0].tolist()
_ROWS = [tuple(row) for row in _TABLE.tolist()]


def density_kg_m3(alt_km: float) -> float:
    """Density at geodetic altitude alt_km (the top band's law continues above 1000 km;
    below 0 km the sea-level value)."""
    if alt_km <= 0.0:
        return _ROWS[0][1]
    h0, rho0, scale = _ROWS[bisect.bisect_right(_BASE_ALT_KM, alt_km) - 1]
    return rho0 * math.exp(-(alt_km - h0) / scale)
