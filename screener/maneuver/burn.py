"""The burn model: an impulsive delta-v in the primary's radial / in-track / cross-track frame,
applied as the difference between two numerically integrated trajectories.

The screening used an SGP4 (or OEM) trajectory for the primary.  A burn at t_b changes it by
    delta(t) = x_burned(t) - x_unburned(t),
both integrated (Cowell, propagation/cowell.py) from the same base state at t_b, the burned
one with the delta-v added, as one system so they share a step sequence.  The manoeuvred
trajectory is base(t) + delta(t).  So a zero burn gives the screened trajectory exactly, and
the numerical model's own error against SGP4 (kilometres a day, DEVELOPERS.md) enters only
through how the burn's effect depends on the force model (metres: measured in the same place).

For the search over delta-v magnitudes the effect is linearised: three unit burns (R, T, N)
integrated beside the unburned state give delta(t) ~ sum_k dv_k (x_k - x_0) / DV_UNIT_M_S.
Every figure reported for a burn comes from a full (non-linear) integration.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..propagation.cowell import DEFAULT_MODEL, ForceModel, Solution, propagate
from ..screening.ric import ric_basis
from .tracks import BurnedTrack, Track

DV_UNIT_M_S = 0.01          # the linearisation's unit burns: 1 cm/s along R, T and N


def dv_teme_km_s(dv_rtn_m_s, r_km, v_km_s) -> np.ndarray:
    """A delta-v given as [radial, in-track, cross-track] m/s -> TEME km/s."""
    basis = ric_basis(np.asarray(r_km, float), np.asarray(v_km_s, float))  # rows R, I, C
    return basis.T @ (np.asarray(dv_rtn_m_s, float) / 1000.0)


@dataclasses.dataclass
class Linearised:
    """The unburned trajectory from t_b and three unit-burn columns beside it."""
    burn_s: float
    sol: Solution

    def delta(self, dv_rtn_m_s, t_s) -> np.ndarray:
        y = self.sol.states(t_s)                         # (4, m, 6)
        cols = (y[1:] - y[0]) / DV_UNIT_M_S               # (3, m, 6) per m/s
        return np.tensordot(np.asarray(dv_rtn_m_s, float), cols, axes=1)


def linearise(base: Track, burn_s: float, until_s: float,
              model: ForceModel = DEFAULT_MODEL) -> Linearised:
    x0 = base.state(burn_s)
    rows = [x0]
    for k in range(3):
        dv = np.zeros(3)
        dv[k] = DV_UNIT_M_S
        x = x0.copy()
        x[3:] += dv_teme_km_s(dv, x0[:3], x0[3:])
        rows.append(x)
    return Linearised(burn_s, propagate(np.array(rows), burn_s, until_s, model))


def apply_burn(base: Track, burn_s: float, dv_rtn_m_s, until_s: float,
               model: ForceModel = DEFAULT_MODEL) -> BurnedTrack:
    """The manoeuvred trajectory over [.., until_s]: base + (burned - unburned)."""
    x0 = base.state(burn_s)
    x1 = x0.copy()
    x1[3:] += dv_teme_km_s(dv_rtn_m_s, x0[:3], x0[3:])
    return BurnedTrack(base, burn_s, propagate(np.array([x0, x1]), burn_s, until_s, model))


class LinearTrack(Track):
    """base + the linearised effect of one burn (for the search only)."""

    def __init__(self, base: Track, lin: Linearised, dv_rtn_m_s):
        self.base, self.lin, self.dv = base, lin, np.asarray(dv_rtn_m_s, float)
        self.jd0, self.fr0 = base.jd0, base.fr0
        self.label = base.label + " + linearised burn"

    def states(self, t_s) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t_s, float))
        out = self.base.states(t)
        after = t >= self.lin.burn_s
        if after.any():
            out[after] += self.lin.delta(self.dv, t[after])
        return out
