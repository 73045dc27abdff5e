"""Trajectories with one interface, whatever backs them: SGP4 element sets or OEM ephemerides.

A `Population` holds the objects of one screening.  SGP4-backed members are propagated together
through Sgp4Batch; OEM-backed members are interpolated.  Both return TEME km and km/s and a
per-sample code (propagation.codes), so the screening engine mixes them freely.
"""

from __future__ import annotations

import dataclasses
from typing import Sequence

import numpy as np

from ..elements.oem import Oem, OemSegment
from ..elements.record import ElementSet
from ..errors import PropagationError
from . import codes
from .frames import to_teme
from .orbit import OrbitSize, orbit_from_mean_motion
from .sgp4_batch import Sgp4Batch, empty_states

from ..constants import MU_EARTH_KM3_S2 as MU  # IERS value (one definition, in constants)


@dataclasses.dataclass
class _TemeSegment:
    t_s: np.ndarray         # seconds from the segment's whole Julian day
    start_jd: float
    r_km: np.ndarray
    v_km_s: np.ndarray
    t0_s: float
    t1_s: float
    degree: int
    hermite: bool


TOUCH_S = 1e-3      # segments whose stop and next start are this close cover a span together


class OemTrajectory:
    """Interpolates an OEM (converted once to TEME at its nodes); never across segments and
    never outside a segment's usable span."""

    def __init__(self, oem: Oem):
        self.oem = oem
        self.catalog_id = oem.object_id
        self.name = oem.object_name
        self._segs = [self._to_teme(s) for s in oem.segments]
        self.epoch_jd = oem.segments[0].start_jd
        self.epoch_fr = oem.segments[0].t_s[0] / 86400.0

    @staticmethod
    def _to_teme(seg: OemSegment) -> _TemeSegment:
        r, v = to_teme(seg.frame, seg.r_km, seg.v_km_s, seg.start_jd, 0.0, seg.t_s)
        return _TemeSegment(seg.t_s, seg.start_jd, np.asarray(r), np.asarray(v),
                            seg.useable_start_s, seg.useable_stop_s,
                            seg.degree, seg.interpolation == "HERMITE")

    def span(self) -> list[tuple[float, float, float]]:
        """(whole Julian day, start s, stop s) of each usable segment."""
        return [(s.start_jd, s.t0_s, s.t1_s) for s in self._segs]

    def covers(self, jd0: float, fr0: float, t0_s: float, t1_s: float) -> bool:
        """Whether usable segments cover [t0_s, t1_s] of the window at (jd0, fr0).  Segments
        that meet end to start (a manoeuvre splits an ephemeris so) cover it together; a gap
        between them never does."""
        spans = sorted(((jd0 - s.start_jd) * -86400.0 - fr0 * 86400.0 + s.t0_s,
                        (jd0 - s.start_jd) * -86400.0 - fr0 * 86400.0 + s.t1_s) for s in self._segs)
        merged: list[list[float]] = []
        for a, b in spans:
            if merged and a <= merged[-1][1] + TOUCH_S:
                merged[-1][1] = max(merged[-1][1], b)
            else:
                merged.append([a, b])
        return any(a - 1e-6 <= t0_s and t1_s <= b + 1e-6 for a, b in merged)

    def states(self, jd0: float, fr0: float, t_s: np.ndarray, strict: bool = False):
        t_s = np.atleast_1d(np.asarray(t_s, float))
        m = len(t_s)
        r = np.full((m, 3), np.nan)
        v = np.full((m, 3), np.nan)
        code = np.full(m, codes.OUTSIDE_EPHEMERIS, dtype=np.int8)
        for s in self._segs:
            tt = (jd0 - s.start_jd) * 86400.0 + fr0 * 86400.0 + t_s
            inside = (tt >= s.t0_s - 1e-9) & (tt <= s.t1_s + 1e-9) & (code != codes.OK)
            if inside.any():
                r[inside], v[inside] = _interpolate(s, tt[inside])
                code[inside] = codes.OK
        if strict and (code != codes.OK).any():
            bad = t_s[code != codes.OK][0]
            raise PropagationError(
                f"{self.oem.path}: time {bad:.3f} s past the window start lies outside the "
                f"ephemeris' usable span; refusing to extrapolate")
        return r, v, code

    def state_at(self, jd0: float, fr0: float, t_s: float):
        r, v, c = self.states(jd0, fr0, np.array([t_s]))
        return r[0], v[0], int(c[0])

    def orbit(self) -> OrbitSize:
        s = self._segs[0]
        r, v = s.r_km[0], s.v_km_s[0]
        rm = np.linalg.norm(r)
        a = 1.0 / (2.0 / rm - v @ v / MU)
        h = np.cross(r, v)
        e = np.linalg.norm(np.cross(v, h) / MU - r / rm)
        return orbit_from_mean_motion(np.sqrt(MU / a**3), float(e), MU)


def _interpolate(s: _TemeSegment, tt: np.ndarray):
    """Lagrange of the file's degree on positions and velocities (or cubic Hermite)."""
    n = len(s.t_s)
    if s.hermite:
        i = np.clip(np.searchsorted(s.t_s, tt) - 1, 0, n - 2)
        h = s.t_s[i + 1] - s.t_s[i]
        u = ((tt - s.t_s[i]) / h)[:, None]
        r0, r1, v0, v1 = s.r_km[i], s.r_km[i + 1], s.v_km_s[i] * h[:, None], s.v_km_s[i + 1] * h[:, None]
        return hermite_cubic(u, r0, v0, r1, v1, h[:, None])
    k = min(s.degree + 1, n)
    i = np.searchsorted(s.t_s, tt)
    lo = np.clip(i - k // 2, 0, n - k)
    idx = lo[:, None] + np.arange(k)[None, :]          # (m, k) node indices
    w = lagrange_weights(tt, s.t_s[idx])
    return (np.einsum("mk,mki->mi", w, s.r_km[idx]), np.einsum("mk,mki->mi", w, s.v_km_s[idx]))


def lagrange_weights(x: np.ndarray, nodes: np.ndarray) -> np.ndarray:
    """(len(x), k) weights of the interpolating polynomial through k nodes at each x; `nodes`
    is (k,), the same for every x, or (len(x), k), one set per x."""
    x = np.asarray(x, float)
    tn = np.broadcast_to(np.asarray(nodes, float), (len(x), np.shape(nodes)[-1]))
    k = tn.shape[1]
    w = np.ones((len(x), k))
    for j in range(k):
        for q in range(k):
            if q != j:
                w[:, j] *= (x - tn[:, q]) / (tn[:, j] - tn[:, q])
    return w


def hermite_cubic(u, r0, v0h, r1, v1h, h):
    """Cubic Hermite on u in [0,1]; v0h, v1h are velocities times the step h.  Returns r, v."""
    u2 = u * u
    u3 = u2 * u
    h00 = 2 * u3 - 3 * u2 + 1
    h10 = u3 - 2 * u2 + u
    h01 = -2 * u3 + 3 * u2
    h11 = u3 - u2
    r = h00 * r0 + h10 * v0h + h01 * r1 + h11 * v1h
    d00 = 6 * u2 - 6 * u
    d10 = 3 * u2 - 4 * u + 1
    d01 = -6 * u2 + 6 * u
    d11 = 3 * u2 - 2 * u
    v = (d00 * r0 + d10 * v0h + d01 * r1 + d11 * v1h) / h
    return r, v


class Population:
    """The objects of one screening, SGP4- and OEM-backed, in a fixed order."""

    def __init__(self, records: Sequence[ElementSet] = (), oems: Sequence[Oem] = ()):
        self.records = list(records)
        self.oems = [OemTrajectory(o) for o in oems]
        self._batch = Sgp4Batch(self.records)
        self.ids = [r.catalog_id for r in self.records] + [o.catalog_id for o in self.oems]
        self.names = [r.name for r in self.records] + [o.name for o in self.oems]

    def __len__(self) -> int:
        return len(self.records) + len(self.oems)

    def is_sgp4(self, k: int) -> bool:
        return k < len(self.records)

    def orbit(self, k: int) -> OrbitSize:
        return self.records[k].orbit() if self.is_sgp4(k) else self.oems[k - len(self.records)].orbit()

    def epoch(self, k: int) -> tuple[float, float]:
        if self.is_sgp4(k):
            r = self.records[k]
            return r.epoch_jd, r.epoch_fr
        o = self.oems[k - len(self.records)]
        return o.epoch_jd, o.epoch_fr

    def states(self, jd0: float, fr0: float, t_s: np.ndarray, rows: Sequence[int] | None = None):
        """(n, m, 3) r km, (n, m, 3) v km/s, (n, m) code, for `rows` (default all) at t_s."""
        rows = np.arange(len(self)) if rows is None else np.asarray(rows, int)
        t_s = np.asarray(t_s, float)
        n, m = len(rows), len(t_s)
        r = np.empty((n, m, 3))
        v = np.empty((n, m, 3))
        code = np.empty((n, m), dtype=np.int8)
        ns = len(self.records)
        sg = np.nonzero(rows < ns)[0]
        k = len(sg)
        if k and sg[-1] == k - 1:      # the SGP4 rows first (as always here): written in place
            self._batch.states(jd0, fr0, t_s, rows=rows[:k], out=(r[:k], v[:k], code[:k]))
        elif k:
            rr, vv, cc = self._batch.states(jd0, fr0, t_s, rows=rows[sg])
            r[sg], v[sg], code[sg] = rr, vv, cc
        for pos in np.nonzero(rows >= ns)[0]:
            r[pos], v[pos], code[pos] = self.oems[rows[pos] - ns].states(jd0, fr0, t_s)
        return r, v, code

    def states_at(self, rows, jd0: float, fr0: float, t_s):
        """Each of `rows` at its own time (s from the window start): r (n, 3) km,
        v (n, 3) km/s, code (n,)."""
        rows, t_s, (r, v, code) = np.asarray(rows, int), np.asarray(t_s, float), empty_states(len(rows))
        sg = rows < len(self.records)
        if sg.any():
            r[sg], v[sg], code[sg] = self._batch.states_at(rows[sg], jd0, fr0, t_s[sg])
        for k in np.unique(rows[~sg]).tolist():
            sel = rows == k
            r[sel], v[sel], code[sel] = self.oems[k - len(self.records)].states(jd0, fr0, t_s[sel])
        return r, v, code

    def state_at(self, k: int, jd0: float, fr0: float, t_s: float):
        if self.is_sgp4(k):
            return self._batch.state_at(k, jd0, fr0, t_s)
        return self.oems[k - len(self.records)].state_at(jd0, fr0, t_s)

    def check_coverage(self, jd0: float, fr0: float, t0_s: float, t1_s: float) -> None:
        """Refuse a window that an OEM-backed member does not cover (no extrapolation)."""
        from ..timeutil import iso_z, jd_to_datetime

        for o in self.oems:
            if not o.covers(jd0, fr0, t0_s, t1_s):
                spans = "; ".join(
                    f"{iso_z(jd_to_datetime(j, a / 86400), 3)} to {iso_z(jd_to_datetime(j, b / 86400), 3)}"
                    for j, a, b in o.span())
                raise PropagationError(
                    f"{o.oem.path}: ephemeris of {o.catalog_id} covers {spans}, which does not "
                    f"contain the screening window; shorten the window or supply a longer OEM")
