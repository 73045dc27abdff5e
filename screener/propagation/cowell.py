"""Numerical orbit propagation (Cowell's method) for manoeuvred trajectories.

The equations of motion are integrated directly in Cartesian coordinates:
    r'' = -mu r / |r|^3 + a_zonal(r) + a_drag(r, v)
with Newtonian point-mass gravity (IERS mu), the zonal harmonics J2, J3, J4 of EGM96 (the
closed-form accelerations of the zonal potential U = mu/r [1 - sum J_n (R/r)^n P_n(z/r)]),
and optionally drag, -1/2 rho (Cd A/m) |v_rel| v_rel, with the exponential atmosphere of
propagation/atmosphere.py co-rotating with the Earth.  Constants: screener/constants.py.

Frame: TEME of the element sets (z is the true pole of date).  Over the few days of a
screening window it is treated as inertial: its precession, about 50 arcsec a year, moves a
LEO position by centimetres in a week, and a manoeuvre trade uses the difference of two
trajectories integrated in the same frame, where it cancels further.

Integrator: scipy's DOP853 (an explicit Runge-Kutta of order 8 with dense output) at
RTOL = 1e-11 and ATOL = 1e-9 km / km/s.  Measured over ten LEO orbits, two-body: specific
energy and angular momentum conserved to better than 1e-10 relative, position against the
Kepler solution within a few millimetres (tests/test_cowell.py).

Several trajectories can be integrated together as one system (shape (K, 6)); they then share
one step sequence, so integration error cancels in their differences.
"""

from __future__ import annotations

import dataclasses

import numpy as np
from scipy.integrate import solve_ivp

from ..constants import (EARTH_ROTATION_RAD_S, J2_EGM96, J3_EGM96, J4_EGM96, MU_EARTH_KM3_S2,
                         RE_WGS84_KM, WGS84_FLATTENING)
from .atmosphere import density_kg_m3

RTOL = 1e-11
ATOL = 1e-9          # km and km/s
METHOD = "DOP853"


@dataclasses.dataclass(frozen=True)
class ForceModel:
    """What the integration includes.  zonal_degree 0 is two-body; 2, 3, 4 add J2..Jn.
    drag_cd_area_m2_kg is Cd x A/m (0: no drag); 2.2 x 0.01 m^2/kg is a small LEO satellite
    (common practice for Cd; the area-to-mass ratio is the operator's to give)."""
    zonal_degree: int = 4
    drag_cd_area_m2_kg: float = 0.0

    def describe(self) -> str:
        grav = ("two-body" if self.zonal_degree < 2 else
                "point mass + " + ", ".join(f"J{n}" for n in range(2, self.zonal_degree + 1))
                + " (EGM96)")
        drag = (f"; drag Cd*A/m {self.drag_cd_area_m2_kg:g} m^2/kg, exponential atmosphere"
                if self.drag_cd_area_m2_kg > 0 else "; no drag")
        return f"Cowell, {grav}{drag}; DOP853 rtol {RTOL:g}, atol {ATOL:g} km"


DEFAULT_MODEL = ForceModel(zonal_degree=4, drag_cd_area_m2_kg=2.2 * 0.01)
# SGP4's drag term is B* = rho0 B / 2 with B = Cd A/m and rho0 = 0.15696615 kg/m^2 per Earth
# radius (Hoots & Roehrich 1980, Spacetrack Report #3; value from memory), so an element set's
# B* (1/Earth radii) gives Cd A/m = 2 B* / rho0 in m^2/kg.
BSTAR_RHO0_KG_M2_ER = 0.15696615
MAX_CD_AREA_M2_KG = 0.5


def model_for_bstar(bstar_per_earth_radius: float, zonal_degree: int = 4) -> ForceModel:
    """The force model whose drag matches an element set's B* (negative B*: no drag)."""
    cda = 2.0 * max(0.0, bstar_per_earth_radius) / BSTAR_RHO0_KG_M2_ER
    return ForceModel(zonal_degree, min(cda, MAX_CD_AREA_M2_KG))


class Solution:
    """Dense output of K trajectories integrated together, between t0_s and t1_s."""

    def __init__(self, sol, k: int, t0_s: float, t1_s: float, steps: int = 0):
        self._sol = sol
        self.k = k
        self.t0_s, self.t1_s = t0_s, t1_s
        self.steps = steps

    def states(self, t_s) -> np.ndarray:
        """(K, m, 6) TEME km, km/s at times t_s (seconds, inside [t0_s, t1_s])."""
        t = np.atleast_1d(np.asarray(t_s, float))
        y = self._sol(t)                                  # (6K, m)
        return y.reshape(self.k, 6, len(t)).transpose(0, 2, 1)


def derivative(model: ForceModel):
    """f(x, y, z, vx, vy, vz) -> d/dt of that TEME state (km, km/s), as plain floats: numpy's
    per-call overhead on 3-vectors would be most of an integration's time (measured: 13x)."""
    import math

    mu, R = MU_EARTH_KM3_S2, RE_WGS84_KM
    deg, cda = model.zonal_degree, model.drag_cd_area_m2_kg
    k2, k3, k4 = -1.5 * J2_EGM96 * mu * R**2, -2.5 * J3_EGM96 * mu * R**3, 1.875 * J4_EGM96 * mu * R**4
    w, f = EARTH_ROTATION_RAD_S, WGS84_FLATTENING

    def rhs(x, y, z, vx, vy, vz):
        r2 = x * x + y * y + z * z
        r1 = math.sqrt(r2)
        g = -mu / (r2 * r1)
        ax, ay, az = g * x, g * y, g * z
        if deg >= 2:
            s2 = z * z / r2
            c = k2 / (r2 * r2 * r1)
            ax += c * x * (1.0 - 5.0 * s2)
            ay += c * y * (1.0 - 5.0 * s2)
            az += c * z * (3.0 - 5.0 * s2)
            if deg >= 3:
                c = k3 / (r2 * r2 * r2 * r1)
                q = 3.0 * z - 7.0 * z * s2
                ax += c * x * q
                ay += c * y * q
                az += c * (6.0 * z * z - 7.0 * z * z * s2 - 0.6 * r2)
            if deg >= 4:
                c = k4 / (r2 * r2 * r2 * r1)
                q = 1.0 - 14.0 * s2 + 21.0 * s2 * s2
                ax += c * x * q
                ay += c * y * q
                az += c * z * (5.0 - 70.0 / 3.0 * s2 + 21.0 * s2 * s2)
        if cda > 0.0:
            ux, uy, uz = vx + w * y, vy - w * x, vz
            h = r1 - R * (1.0 - f * z * z / r2)
            # height above the WGS-84 ellipsoid to first order in the flattening (tens of
            # metres in LEO: enough for a density model good to tens of percent).  rho
            # [kg/m^3] x Cd A/m [m^2/kg] is 1/m; times v^2 [km^2/s^2] it is 1000 km/s^2.
            d = -0.5e3 * cda * density_kg_m3(h) * math.sqrt(ux * ux + uy * uy + uz * uz)
            ax += d * ux
            ay += d * uy
            az += d * uz
        return vx, vy, vz, ax, ay, az

    return rhs


def propagate(states0: np.ndarray, t0_s: float, t1_s: float, model: ForceModel = DEFAULT_MODEL,
              rtol: float = RTOL, atol: float = ATOL) -> Solution:
    """Integrate K states (K, 6) given at t0_s to t1_s (either direction)."""
    y0 = np.atleast_2d(np.asarray(states0, float))
    k = len(y0)
    row = derivative(model)

    def rhs(_t, y):
        s = y.tolist()
        out = []
        for i in range(0, 6 * k, 6):
            out.extend(row(*s[i:i + 6]))
        return np.array(out)

    if t1_s == t0_s:
        const = y0.ravel().copy()
        return Solution(lambda t: np.repeat(const[:, None], len(np.atleast_1d(t)), axis=1), k, t0_s, t1_s)
    res = solve_ivp(rhs, (t0_s, t1_s), y0.ravel(), method=METHOD, rtol=rtol, atol=atol,
                    dense_output=True)
    if not res.success:
        from ..errors import PropagationError

        raise PropagationError(f"numerical propagation failed: {res.message}")
    return Solution(res.sol, k, t0_s, t1_s, steps=len(res.t) - 1)


__all__ = ["ForceModel", "DEFAULT_MODEL", "model_for_bstar", "Solution", "propagate", "derivative", "RTOL", "ATOL"]
