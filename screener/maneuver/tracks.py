"""Trajectories a manoeuvre trade reads: states (m, 6) TEME km, km/s at seconds from a window
start (jd0, fr0), whatever backs them: an SGP4 element set, an OEM, a numerically propagated
state (a CDM's state at TCA), or one of those with a burn applied."""

from __future__ import annotations

import numpy as np

from ..elements.oem import Oem
from ..elements.record import ElementSet
from ..errors import PropagationError
from ..propagation.cowell import DEFAULT_MODEL, ForceModel, Solution, propagate
from ..propagation.ephemeris import OemTrajectory


class Track:
    jd0: float
    fr0: float
    label: str

    def states(self, t_s) -> np.ndarray:
        raise NotImplementedError

    def state(self, t_s: float) -> np.ndarray:
        return self.states([t_s])[0]


class Sgp4Track(Track):
    def __init__(self, rec: ElementSet, jd0: float, fr0: float):
        self.rec, self.jd0, self.fr0 = rec, jd0, fr0
        self._sat = rec.make_satrec()
        self.label = f"SGP4 element set ({rec.source})"

    def states(self, t_s) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t_s, float))
        e, r, v = self._sat.sgp4_array(np.full(len(t), self.jd0), self.fr0 + t / 86400.0)
        if np.any(e != 0):
            raise PropagationError(f"{self.rec.catalog_id}: SGP4 error {int(e[e != 0][0])} "
                                   f"inside the trade's time span")
        return np.concatenate([r, v], axis=1)


class OemTrack(Track):
    def __init__(self, oem: Oem, jd0: float, fr0: float):
        self._traj = OemTrajectory(oem)
        self.jd0, self.fr0 = jd0, fr0
        self.label = f"OEM {oem.path}"

    def states(self, t_s) -> np.ndarray:
        r, v, _code = self._traj.states(self.jd0, self.fr0, np.atleast_1d(t_s), strict=True)
        return np.concatenate([r, v], axis=1)


class NumericalTrack(Track):
    """A state at t_ref_s propagated numerically over [t0_s, t1_s] (both ways from t_ref)."""

    def __init__(self, state0: np.ndarray, t_ref_s: float, t0_s: float, t1_s: float,
                 jd0: float, fr0: float, model: ForceModel = DEFAULT_MODEL, label: str = ""):
        self.jd0, self.fr0 = jd0, fr0
        self.t_ref_s = t_ref_s
        self._back = propagate(state0, t_ref_s, t0_s, model) if t0_s < t_ref_s else None
        self._fwd = propagate(state0, t_ref_s, t1_s, model) if t1_s > t_ref_s else None
        self.span = (t0_s, t1_s)
        self.label = label or f"numerical ({model.describe()})"

    def states(self, t_s) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t_s, float))
        if t.min() < self.span[0] - 1e-6 or t.max() > self.span[1] + 1e-6:
            raise PropagationError("time outside the numerically propagated span")
        out = np.empty((len(t), 6))
        early = t < self.t_ref_s
        for mask, sol in ((early, self._back), (~early, self._fwd)):
            if mask.any():
                out[mask] = sol.states(t[mask])[0] if sol is not None else self._at_ref(t[mask])
        return out

    def _at_ref(self, t):
        sol = self._fwd or self._back
        return sol.states(np.full(len(t), self.t_ref_s))[0]


class BurnedTrack(Track):
    """base(t) before the burn; base(t) + (burned - unburned)(t) from it, where the two are
    integrated together from base's state at the burn (row 0 unburned, row 1 burned)."""

    def __init__(self, base: Track, burn_s: float, pair: Solution):
        self.base, self.burn_s, self._pair = base, burn_s, pair
        self.jd0, self.fr0 = base.jd0, base.fr0
        self.label = f"{base.label} + burn"

    @property
    def end_s(self) -> float:
        return self._pair.t1_s

    def delta(self, t_s) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t_s, float))
        out = np.zeros((len(t), 6))
        after = t >= self.burn_s
        if after.any():
            y = self._pair.states(t[after])
            out[after] = y[1] - y[0]
        return out

    def states(self, t_s) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t_s, float))
        return self.base.states(t) + self.delta(t)
