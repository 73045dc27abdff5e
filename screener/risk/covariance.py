"""Position covariance for each object at TCA, from the best source at hand.

Order of preference (the first that applies wins, and its name travels with the Pc):
  1. "OEM covariance"       the own-ship ephemeris' covariance block nearest TCA
  2. "CDM covariance"       given in a received CDM (used by `screener risk --cdm`)
  3. "configured"           per object, or per orbit regime, from the configuration file
  4. "element-set history"  fitted from the object's own successive element sets
  5. "assumed covariance"   a regime model growing with element-set age (ASSUMED_MODEL)

All covariances here are 3x3 position blocks in the object's own RTN (= RIC) frame, km^2.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Mapping, Sequence

import numpy as np

from ..elements.oem import Oem
from ..elements.record import ElementSet
from ..propagation.frames import rotation_to_teme, to_teme
from ..screening.ric import ric_basis

OEM = "OEM covariance"
CONFIGURED = "configured"
HISTORY = "element-set history"
ASSUMED = "assumed covariance"

# Assumed one-sigma position errors of an SGP4 element set, (radial, in-track, cross-track) km
# at epoch and their growth in km per day of age.  ORDER-OF-MAGNITUDE VALUES FROM MEMORY,
# shaped after published TLE-accuracy studies (Flohrer, Krag & Klinkrad 2008, which report
# regime-dependent errors of roughly 0.1-1 km at epoch, in-track largest); the paper was not
# at hand, so none of these is a quoted figure.  Pc computed with them is labelled
# "assumed covariance" everywhere it is shown.
ASSUMED_MODEL: dict[str, tuple[tuple[float, float, float], tuple[float, float, float]]] = {
    #        sigma at epoch (R, I, C) km      growth (R, I, C) km/day
    "LEO": ((0.10, 0.50, 0.15), (0.05, 1.00, 0.05)),
    "MEO": ((0.30, 1.00, 0.30), (0.05, 0.50, 0.05)),
    "GEO": ((0.50, 2.00, 0.50), (0.05, 0.50, 0.05)),
    "HEO": ((1.00, 4.00, 0.80), (0.30, 3.00, 0.20)),
}
HISTORY_MIN_SETS = 3             # the newest plus at least two older sets
HISTORY_MAX_SPAN_DAYS = 30.0     # older sets than this are not used in the fit
HISTORY_SAMPLES_PER_ORBIT = 8    # differences taken at this many points around one orbit
HISTORY_FLOOR_KM = 0.02          # no fitted sigma below 20 m (SGP4 theory error alone is larger)


@dataclasses.dataclass(frozen=True)
class CovarianceEstimate:
    cov_rtn_km2: np.ndarray      # 3x3 position covariance, object's RTN frame
    source: str                  # one of the names above
    detail: str = ""             # e.g. "LEO, age 1.3 d"

    @property
    def assumed(self) -> bool:
        return self.source == ASSUMED

    def label(self) -> str:
        return f"{self.source} ({self.detail})" if self.detail else self.source

    @property
    def sigma_rtn_km(self) -> tuple[float, float, float]:
        c = self.cov_rtn_km2
        return (math.sqrt(c[0, 0]), math.sqrt(c[1, 1]), math.sqrt(c[2, 2]))


def diag_km2(sigma_rtn_km: Sequence[float]) -> np.ndarray:
    out = np.zeros((3, 3))
    r, i, c = (float(x) for x in sigma_rtn_km)
    out[0, 0], out[1, 1], out[2, 2] = r * r, i * i, c * c
    return out


@dataclasses.dataclass(frozen=True)
class SigmaGrowth:
    """Configured sigma (R, I, C) km at epoch and growth km/day."""
    sigma_km: tuple[float, float, float]
    growth_km_per_day: tuple[float, float, float] = (0.0, 0.0, 0.0)

    def at(self, age_days: float) -> np.ndarray:
        a = abs(age_days)
        return diag_km2([s + g * a for s, g in zip(self.sigma_km, self.growth_km_per_day)])


def assumed(regime: str, age_days: float) -> CovarianceEstimate:
    s0, g = ASSUMED_MODEL.get(regime, ASSUMED_MODEL["HEO"])
    cov = SigmaGrowth(s0, g).at(age_days)
    return CovarianceEstimate(cov, ASSUMED, _assumed_detail(regime, age_days))


def _assumed_detail(regime: str, age_days: float) -> str:
    return f"{regime} model, element set {age_days:.1f} d old"


def assumed_many(regimes: Sequence[str], ages_days: np.ndarray) -> np.ndarray:
    """assumed()'s covariances for many objects at once, (n, 3, 3): the same arithmetic
    (sigma = s0 + g |age|, squared), so the same values."""
    names = list(ASSUMED_MODEL)
    index = {k: i for i, k in enumerate(names)}
    heo = index["HEO"]
    which = np.array([index.get(r, heo) for r in regimes], int)
    s0 = np.array([ASSUMED_MODEL[k][0] for k in names], float)[which]
    g = np.array([ASSUMED_MODEL[k][1] for k in names], float)[which]
    sig = s0 + g * np.abs(np.asarray(ages_days, float))[:, None]
    cov = np.zeros((len(which), 3, 3))
    cov[:, [0, 1, 2], [0, 1, 2]] = sig * sig
    return cov


@dataclasses.dataclass(frozen=True)
class Estimates:
    """Covariance estimates of many objects as columns: what CovarianceEstimate gives of one."""
    cov_rtn_km2: np.ndarray      # (n, 3, 3)
    source: list[str]
    label: list[str]             # CovarianceEstimate.label()

    @property
    def assumed(self) -> np.ndarray:
        return np.array([s == ASSUMED for s in self.source], bool)

    @property
    def sigma_rtn_km(self) -> np.ndarray:
        """(n, 3): the square roots of the diagonals (as CovarianceEstimate.sigma_rtn_km)."""
        return np.sqrt(np.diagonal(self.cov_rtn_km2, axis1=1, axis2=2))


def from_oem(oem: Oem, tca_jd: float, tca_fr: float) -> CovarianceEstimate | None:
    """The covariance block nearest TCA, rotated to RTN.  Block and state are both taken to
    TEME first (each from its own frame: COV_REF_FRAME may differ from the segment's
    REF_FRAME, and an Earth-fixed velocity is not the inertial one that defines in-track);
    the RTN basis is that of the OEM's state nearest the block.  Not propagated to TCA: the
    gap is reported."""
    best = None
    for seg in oem.segments:
        for c in seg.covariances:
            gap_d = abs((c.epoch_jd - tca_jd) + (c.epoch_fr - tca_fr))
            if best is None or gap_d < best[0]:
                best = (gap_d, seg, c)
    if best is None:
        return None
    gap_d, seg, c = best
    p = c.cov_km[:3, :3]
    if c.frame.upper() not in ("RTN", "RSW", "RIC"):
        t_s = ((c.epoch_jd - seg.start_jd) + c.epoch_fr) * 86400.0
        k = int(np.argmin(np.abs(seg.t_s - t_s)))
        at = np.array([seg.t_s[k]])
        r, v = to_teme(seg.frame, seg.r_km[k:k + 1], seg.v_km_s[k:k + 1], seg.start_jd, 0.0, at)
        R = rotation_to_teme(c.frame, seg.start_jd, 0.0, at)[0]
        B = ric_basis(r[0], v[0])
        p = B @ (R @ p @ R.T) @ B.T
    return CovarianceEstimate(0.5 * (p + p.T), OEM, f"block {gap_d * 24:.1f} h from TCA")


@dataclasses.dataclass(frozen=True)
class HistoryFit:
    """sigma(age) = a + b * age per RTN axis, fitted from successive element sets."""
    a_km: tuple[float, float, float]
    b_km_per_day: tuple[float, float, float]
    older_sets: int
    newest_epoch: tuple[float, float]

    def at(self, tca_jd: float, tca_fr: float) -> CovarianceEstimate:
        age = (tca_jd - self.newest_epoch[0]) + (tca_fr - self.newest_epoch[1])
        sig = np.maximum(HISTORY_FLOOR_KM, np.asarray(self.a_km) + np.asarray(self.b_km_per_day) * abs(age))
        return CovarianceEstimate(diag_km2(sig), HISTORY,
                                  f"{self.older_sets} older sets, element set {age:.1f} d old")


def fit_history(sets: Sequence[ElementSet]) -> HistoryFit | None:
    """Fit sigma(dt) = a + b dt (a, b >= 0) per RTN axis to the differences between older
    element sets propagated to the newest one's epoch (and around one orbit after it) and the
    newest set itself, taken as truth.  This is TLE differencing (cf. Geul et al. 2017, Adv.
    Space Res. 59(10)) in its simplest form: manoeuvre-sized jumps are dropped, no other
    outlier rejection, no correlation terms.  None when fewer than HISTORY_MIN_SETS usable."""
    from scipy.optimize import nnls

    from ..propagation.sgp4_batch import Sgp4Batch

    newest = sets[-1]

    def span_d(s):
        return (newest.epoch_jd - s.epoch_jd) + (newest.epoch_fr - s.epoch_fr)

    older = [s for s in sets[:-1] if 0.01 < span_d(s) <= HISTORY_MAX_SPAN_DAYS]
    if len(older) + 1 < HISTORY_MIN_SETS:
        return None
    t = np.arange(HISTORY_SAMPLES_PER_ORBIT) * newest.orbit().period_s / HISTORY_SAMPLES_PER_ORBIT
    r, v, code = Sgp4Batch([newest] + older).states(newest.epoch_jd, newest.epoch_fr, t)
    B = ric_basis(r[0], v[0])                                  # (m, 3, 3)
    rows_dt, rows_err = [], []
    for k, s in enumerate(older, start=1):
        if (code[k] != 0).any() or (code[0] != 0).any():
            continue
        d_ric = np.einsum("mij,mj->mi", B, r[k] - r[0])
        if np.abs(d_ric).max() > 50.0:                         # a manoeuvre, not an error
            continue
        rows_dt.append(span_d(s) + t / 86400.0)
        rows_err.append(np.abs(d_ric))
    if len(rows_dt) + 1 < HISTORY_MIN_SETS:
        return None
    dt = np.concatenate(rows_dt)
    err = np.concatenate(rows_err)
    A = np.stack([np.ones_like(dt), dt], axis=1)
    coef = [nnls(A, err[:, axis])[0] for axis in range(3)]
    return HistoryFit(tuple(float(c[0]) for c in coef), tuple(float(c[1]) for c in coef),
                      len(rows_dt), (newest.epoch_jd, newest.epoch_fr))


class CovarianceSources:
    """Chooses a covariance per object.  `configured` maps a catalog id or a regime name
    (LEO/MEO/GEO/HEO) to SigmaGrowth; ids win over regimes."""

    def __init__(self, oems: Sequence[Oem] = (), configured: Mapping[str, SigmaGrowth] | None = None,
                 history: Mapping[str, Sequence[ElementSet]] | None = None):
        self._oems = {}
        for o in oems:
            self._oems[o.object_id] = o
        self._configured = dict(configured or {})
        self._history = dict(history or {})
        self._fits: dict[str, HistoryFit | None] = {}

    def estimate(self, object_id: str, regime: str, age_days: float, tca_jd: float,
                 tca_fr: float, aliases: Sequence[str] = ()) -> CovarianceEstimate:
        for key in (object_id, *aliases):
            if key in self._oems:
                got = from_oem(self._oems[key], tca_jd, tca_fr)
                if got is not None:
                    return got
        for key in (object_id, *aliases, regime):
            if key in self._configured:
                where = "object" if key != regime else f"{regime} class"
                return CovarianceEstimate(self._configured[key].at(age_days), CONFIGURED,
                                          f"{where}, element set {age_days:.1f} d old")
        sets = self._history.get(object_id)
        if sets and len(sets) >= HISTORY_MIN_SETS:
            if object_id not in self._fits:
                self._fits[object_id] = fit_history(sets)
            if self._fits[object_id] is not None:
                return self._fits[object_id].at(tca_jd, tca_fr)
        return assumed(regime, age_days)

    def _beyond_model(self, object_id: str, regime: str, aliases: Sequence[str]) -> bool:
        """Whether estimate() may use a source other than the assumed model for this object."""
        return (any(k in self._oems for k in (object_id, *aliases))
                or any(k in self._configured for k in (object_id, *aliases, regime))
                or len(self._history.get(object_id) or ()) >= HISTORY_MIN_SETS)

    def estimate_many(self, object_ids: Sequence[str], regimes: Sequence[str], ages_days: Sequence[float],
                      tca_jd: Sequence[float], tca_fr: Sequence[float],
                      aliases: Mapping[str, Sequence[str]] | None = None) -> Estimates:
        """estimate() for many objects: those that have an OEM, a configured covariance or an
        element-set history one by one through estimate(), all others (the assumed model)
        in array operations; the same estimates either way."""
        aliases = aliases or {}
        n = len(object_ids)
        cov = assumed_many(regimes, ages_days) if n else np.zeros((0, 3, 3))
        source = [ASSUMED] * n
        label = [f"{ASSUMED} ({_assumed_detail(r, a)})" for r, a in zip(regimes, ages_days)]
        if self._oems or self._configured or self._history:
            for k, oid in enumerate(object_ids):
                al = aliases.get(oid, ())
                if self._beyond_model(oid, regimes[k], al):
                    est = self.estimate(oid, regimes[k], ages_days[k], tca_jd[k], tca_fr[k], al)
                    cov[k], source[k], label[k] = est.cov_rtn_km2, est.source, est.label()
        return Estimates(cov, source, label)
