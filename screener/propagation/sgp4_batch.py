"""Batch SGP4 through sgp4.api.SatrecArray, chunked so memory stays bounded.

Times are seconds from a window start given as a split Julian date (jd0, fr0); they reach SGP4
as (jd0, fr0 + t_s/86400), two floats, never one.
"""

from __future__ import annotations

import math
import sys
from typing import Sequence

import numpy as np
from numba import njit
from sgp4.api import SatrecArray, accelerated

from ..constants import MAX_RADIUS_KM, MIN_ALTITUDE_KM, MU_EARTH_KM3_S2, RE_WGS72_KM
from ..elements.record import ElementSet
from . import codes

DEFAULT_CHUNK_SAMPLES = 2_000_000  # objects x times per SatrecArray call (~100 MB of output)
_warned = False


def warn_if_slow(stream=sys.stderr) -> bool:
    """Say loudly once per process when sgp4's compiled extension is missing (~15x slower)."""
    global _warned
    if not accelerated and not _warned:
        _warned = True
        print("WARNING: sgp4's compiled extension is not available; propagation will be about "
              "15x slower. Reinstall sgp4 from a wheel for this platform.", file=stream)
    return accelerated


def apply_gates(r_km: np.ndarray, v_km_s: np.ndarray, code: np.ndarray) -> None:
    """Mark physically implausible SGP4 output (error code 0 but nonsense) in `code`, in place."""
    rmag = np.sqrt(np.einsum("...i,...i->...", r_km, r_km))
    v2 = np.einsum("...i,...i->...", v_km_s, v_km_s)
    ok = code == codes.OK
    with np.errstate(invalid="ignore", divide="ignore"):
        low = ok & (rmag < RE_WGS72_KM + MIN_ALTITUDE_KM)
        far = ok & (rmag > MAX_RADIUS_KM)
        fast = ok & (v2 > 1.05 * 2.0 * MU_EARTH_KM3_S2 / rmag)
    code[low] = codes.BELOW_100_KM
    code[far] = codes.IMPLAUSIBLE_RADIUS
    code[fast & ~low & ~far] = codes.IMPLAUSIBLE_SPEED


@njit(cache=True, nogil=True)
def _screen_compiled(r_km, v_km_s, code, gates, low_km, far_km, escape_factor):
    """In place over (k, 3) states and (k,) codes: NaN where SGP4 reported an error, and, with
    `gates`, apply_gates' three marks (the same tests in the same order), in one pass with no
    temporaries."""
    for k in range(code.shape[0]):
        if code[k] != 0:
            for c in range(3):
                r_km[k, c] = np.nan
                v_km_s[k, c] = np.nan
        elif gates:
            r2 = r_km[k, 0] * r_km[k, 0] + r_km[k, 1] * r_km[k, 1] + r_km[k, 2] * r_km[k, 2]
            v2 = v_km_s[k, 0] * v_km_s[k, 0] + v_km_s[k, 1] * v_km_s[k, 1] + v_km_s[k, 2] * v_km_s[k, 2]
            rmag = np.sqrt(r2)
            if rmag < low_km:
                code[k] = 10
            elif rmag > far_km:
                code[k] = 12
            elif v2 > escape_factor / rmag:
                code[k] = 11


def screen_states(r_km: np.ndarray, v_km_s: np.ndarray, code: np.ndarray, gates: bool = True) -> None:
    """NaN for every sample SGP4 reported as failed (it sometimes returns numbers with an error
    code: never use them) and, with `gates`, the sanity gates, in place."""
    if r_km.flags.c_contiguous and v_km_s.flags.c_contiguous and code.flags.c_contiguous:
        _screen_compiled(r_km.reshape(-1, 3), v_km_s.reshape(-1, 3), code.reshape(-1), gates,
                         RE_WGS72_KM + MIN_ALTITUDE_KM, MAX_RADIUS_KM, 1.05 * 2.0 * MU_EARTH_KM3_S2)
        return
    failed = code != codes.OK
    if failed.any():
        r_km[failed] = np.nan
        v_km_s[failed] = np.nan
    if gates:
        apply_gates(r_km, v_km_s, code)


def _sgp4_into(sats: SatrecArray, jd: np.ndarray, fr: np.ndarray, code: np.ndarray,
               r_km: np.ndarray, v_km_s: np.ndarray) -> None:
    """SatrecArray's propagation written straight into the caller's (contiguous) slices: its
    public call returns new arrays, which then had to be copied, and on this kind of run the
    copies and the fresh memory cost as much as SGP4 itself (measured: 30,000 objects x 181
    times, 2.0 s of SGP4 in a 2.9-9.2 s call)."""
    shape = (len(sats), len(jd))
    if (hasattr(sats, "_sgp4") and code.shape == shape and r_km.shape == shape + (3,)
            and v_km_s.shape == shape + (3,) and code.dtype == np.int8
            and all(a.flags.c_contiguous for a in (code, r_km, v_km_s))):
        sats._sgp4(jd, fr, code.view(np.uint8), r_km, v_km_s)
        return
    e, rr, vv = sats.sgp4(jd, fr)
    code[...], r_km[...], v_km_s[...] = e, rr, vv


def empty_states(n: int):
    """Uninitialised r (n, 3), v (n, 3) and code (n,) arrays for states at n instants."""
    return np.empty((n, 3)), np.empty((n, 3)), np.empty(n, dtype=np.int8)


class Sgp4Batch:
    """A fixed list of element sets, propagated together.  Satrecs are built once, here."""

    def __init__(self, records: Sequence[ElementSet]):
        warn_if_slow()
        self.records = list(records)
        self._sats = [r.make_satrec() for r in self.records]

    def __len__(self) -> int:
        return len(self.records)

    def states(self, jd0: float, fr0: float, t_s: np.ndarray, gates: bool = True,
               chunk_samples: int = DEFAULT_CHUNK_SAMPLES, rows: Sequence[int] | None = None,
               out: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None):
        """Positions (n, m, 3) km and velocities (n, m, 3) km/s in TEME, and codes (n, m) int8.

        Rows whose SGP4 call failed are NaN with SGP4's error code; `gates` additionally marks
        implausible states (they keep their numbers; use `code == 0` as the usable mask).
        """
        t_s = np.ascontiguousarray(t_s, dtype=np.float64)
        idx = np.arange(len(self._sats)) if rows is None else np.asarray(rows)
        n, m = len(idx), len(t_s)
        if out is None:
            r = np.empty((n, m, 3))
            v = np.empty((n, m, 3))
            code = np.empty((n, m), dtype=np.int8)
        else:
            r, v, code = out
        jd = np.full(m, jd0)
        fr = fr0 + t_s / 86400.0
        per = max(1, chunk_samples // max(1, m))
        for a in range(0, n, per):
            b = min(n, a + per)
            sub = SatrecArray([self._sats[k] for k in idx[a:b]])
            if m * (b - a) <= chunk_samples:
                _sgp4_into(sub, jd, fr, code[a:b], r[a:b], v[a:b])
            else:  # one object, very many times: chunk over time
                step = chunk_samples
                for c in range(0, m, step):
                    _sgp4_into(sub, jd[c:c + step], fr[c:c + step], code[a:b, c:c + step],
                               r[a:b, c:c + step], v[a:b, c:c + step])
        screen_states(r, v, code, gates)
        return r, v, code

    def states_at(self, rows: np.ndarray, jd0: float, fr0: float, t_s: np.ndarray,
                  gates: bool = True):
        """Each of rows[n] at its own time t_s[n] (root finding over many pairs at once):
        r (n, 3), v (n, 3), code (n,).  One call per distinct row with all of its times, so
        the numbers are those of `state_at`, at a fraction of the per-call cost."""
        rows, t_s, (r, v, code) = np.asarray(rows, int), np.asarray(t_s, float), empty_states(len(rows))
        n = len(rows)
        if n == 0:
            return r, v, code
        order = np.argsort(rows, kind="stable")
        rs = rows[order]
        fr = fr0 + t_s[order] / 86400.0
        jd = np.full(n, jd0)
        starts = np.flatnonzero(np.r_[True, rs[1:] != rs[:-1]])
        ends = np.r_[starts[1:], n]
        # in sorted order, each object's run written in place (no arrays per call: these are
        # many short calls), then put back in the callers' order once
        sr, sv, se = empty_states(n)
        direct = hasattr(self._sats[0], "_sgp4") if self._sats else False
        su = se.view(np.uint8)
        for a, b in zip(starts.tolist(), ends.tolist()):
            sat = self._sats[rs[a]]
            if direct:
                sat._sgp4(jd[a:b], fr[a:b], su[a:b], sr[a:b], sv[a:b])
            else:
                se[a:b], sr[a:b], sv[a:b] = sat.sgp4_array(jd[a:b], fr[a:b])
        r[order], v[order], code[order] = sr, sv, se
        screen_states(r, v, code, gates)
        return r, v, code

    def state_at(self, k: int, jd0: float, fr0: float, t_s: float):
        """One object, one time (for root finding): r, v arrays (3,), code int."""
        sat = self._sats[k]
        e, r, v = sat.sgp4(jd0, fr0 + t_s / 86400.0)
        r = np.array(r)
        v = np.array(v)
        if e != 0:
            r[:] = np.nan
            v[:] = np.nan
            return r, v, int(e)
        rm2 = r @ r
        if rm2 < (RE_WGS72_KM + MIN_ALTITUDE_KM) ** 2:
            return r, v, codes.BELOW_100_KM
        if rm2 > MAX_RADIUS_KM**2:
            return r, v, codes.IMPLAUSIBLE_RADIUS
        if v @ v > 1.05 * 2.0 * MU_EARTH_KM3_S2 / math.sqrt(rm2):
            return r, v, codes.IMPLAUSIBLE_SPEED
        return r, v, codes.OK


def chunk_count(n_objects: int, n_times: int, chunk_samples: int = DEFAULT_CHUNK_SAMPLES) -> int:
    return math.ceil(n_objects / max(1, chunk_samples // max(1, n_times)))
