"""Fine stage: bracket each range minimum on the interpolated relative motion, then find TCA
on the real propagator.

Range minima are the roots, from negative to positive, of f(t) = rho . rho_dot.  Inside a
candidate interval the relative motion is the cubic Hermite of both objects' sampled states
(positions and velocities); f is sampled at `SUBDIVISIONS` points to bracket its sign changes.
Each bracket is then solved with Brent's method on the propagator itself to `tca_tol_s`
(Alfano & Negron 1993, J. Astronaut. Sci. 41(2); Denenberg 2020, Acta Astronautica 170).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy.optimize import brentq

from ..constants import MU_EARTH_KM3_S2 as MU

SUBDIVISIONS = 16
TCA_TOL_S = 1e-6          # Brent's tolerance on TCA (the brief asks 1 ms; we keep 1 µs)
MAX_BRACKET_GROWTH = 8    # widen a bracket this many times before giving up on it


@dataclasses.dataclass
class Bracket:
    i: int          # population index, first object (primary)
    j: int          # second object (secondary)
    t_lo_s: float
    t_hi_s: float
    est_miss_km: float


def brackets_from_candidates(t_grid_s, r, v, cand_i, cand_j, cand_k, reach_km,
                             row_of) -> list[Bracket]:
    """r, v are (rows, m, 3) grid states; row_of maps population index -> row of r/v.
    Returns brackets whose estimated miss is within reach_km, one per sign change of f from
    negative to non-negative among the candidate intervals' SUBDIVISIONS sub-intervals (the
    compiled `bracket_scan.bracket_scan`)."""
    from .bracket_scan import bracket_scan      # numba compiles (or loads) it on first use

    if len(cand_i) == 0:
        return []
    h = t_grid_s[1] - t_grid_s[0]
    cand_k = np.asarray(cand_k, np.int64)
    found = bracket_scan(np.ascontiguousarray(r, float), np.ascontiguousarray(v, float),
                         np.ascontiguousarray(row_of[cand_i], np.int64),
                         np.ascontiguousarray(row_of[cand_j], np.int64), cand_k, float(h),
                         SUBDIVISIONS, float(reach_km))
    n_idx, s_idx = found[:, 0].astype(np.int64), found[:, 1].astype(np.int64)
    dt_sub = h / SUBDIVISIONS
    t0 = t_grid_s[cand_k[n_idx]] + s_idx * dt_sub
    return [Bracket(int(a), int(b), float(lo), float(lo + dt_sub), float(e))
            for a, b, lo, e in zip(cand_i[n_idx], cand_j[n_idx], t0, found[:, 2])]


def range_rate_function(pop, i: int, j: int, jd0: float, fr0: float):
    """f(t) = rho . rho_dot on the real propagator; raises _Unusable where a state is not."""

    def f(t_s: float) -> float:
        ri, vi, ci = pop.state_at(i, jd0, fr0, t_s)
        rj, vj, cj = pop.state_at(j, jd0, fr0, t_s)
        if ci or cj:
            raise _Unusable(ci or cj)
        return float(np.dot(rj - ri, vj - vi))

    return f


class _Unusable(Exception):
    def __init__(self, code):
        self.code = code


def solve_tca(pop, b: Bracket, jd0: float, fr0: float, t_min_s: float, t_max_s: float,
              tol_s: float = TCA_TOL_S) -> float | None:
    """TCA (s from window start) of the minimum bracketed by b, or None if it lies outside
    [t_min_s, t_max_s] or cannot be bracketed on the real propagator."""
    f = range_rate_function(pop, b.i, b.j, jd0, fr0)
    lo, hi = max(b.t_lo_s, t_min_s), min(b.t_hi_s, t_max_s)
    width = max(hi - lo, 1e-3)
    try:
        flo, fhi = f(lo), f(hi)
        grow = 0
        while not (flo < 0.0 <= fhi) and grow < MAX_BRACKET_GROWTH:
            grow += 1
            if flo >= 0.0:
                if lo <= t_min_s:
                    return None          # range already rising at the window start
                lo = max(t_min_s, lo - width)
                flo = f(lo)
            if fhi < 0.0:
                if hi >= t_max_s:
                    return None          # still closing at the window end
                hi = min(t_max_s, hi + width)
                fhi = f(hi)
            width *= 2.0
        if not (flo < 0.0 <= fhi):
            return None
        if fhi == 0.0:
            return hi
        return brentq(f, lo, hi, xtol=tol_s, rtol=4 * np.finfo(float).eps, maxiter=200)
    except _Unusable:
        return None


NEWTON_MAX_STEPS = 60    # bisection alone takes 23 steps from a 7.5 s bracket to 1 us

def _range_rate_many(pop, i: np.ndarray, j: np.ndarray, jd0: float, fr0: float,
                     t_s: np.ndarray):
    """f = rho . rho_dot on the real propagator for pairs (i[n], j[n]) at t_s[n], its
    derivative with two-body accelerations (rho_dot . rho_dot + rho . (a_j - a_i)), and
    whether both states are usable."""
    n = len(i)
    r, v, c = pop.states_at(np.r_[i, j], jd0, fr0, np.r_[t_s, t_s])
    rho, w = r[n:] - r[:n], v[n:] - v[:n]
    rm = np.linalg.norm(r, axis=1)
    acc = -MU * r / (rm**3)[:, None]
    f = np.einsum("ni,ni->n", rho, w)
    fdot = np.einsum("ni,ni->n", w, w) + np.einsum("ni,ni->n", rho, acc[n:] - acc[:n])
    return f, fdot, (c[:n] == 0) & (c[n:] == 0)


def solve_tcas(pop, brackets: list[Bracket], jd0: float, fr0: float, t_min_s: float,
               t_max_s: float, tol_s: float = TCA_TOL_S) -> np.ndarray:
    """TCA (s from the window start) of every bracket, NaN where `solve_tca` gives None, with
    all open brackets evaluated together, one batched propagator call per step.

    Each step is Newton's on f = rho . rho_dot, kept inside the bracket [lo, hi] with
    f(lo) < 0 <= f(hi) on the real propagator: a step that would leave it, or a derivative
    that is not positive, is replaced by bisection, and every evaluation narrows the bracket
    by its sign.  The derivative uses two-body accelerations (J2 and drag change it by about
    1e-3), which changes how fast the steps converge, not where: the root is that of the
    exact f.  A bracket converges when a step or its width is under tol_s.  Brackets whose
    ends do not straddle a root on the real propagator (the interpolated minimum sat at an
    edge) and the few that do not converge go to `solve_tca`, which widens them."""
    n = len(brackets)
    out = np.full(n, np.nan)
    if n == 0:
        return out
    i = np.array([b.i for b in brackets])
    j = np.array([b.j for b in brackets])
    lo = np.maximum(np.array([b.t_lo_s for b in brackets]), t_min_s)
    hi = np.minimum(np.array([b.t_hi_s for b in brackets]), t_max_s)
    f_lo, _, ok_lo = _range_rate_many(pop, i, j, jd0, fr0, lo)
    f_hi, _, ok_hi = _range_rate_many(pop, i, j, jd0, fr0, hi)
    straddle = ok_lo & ok_hi & (f_lo < 0.0) & (f_hi >= 0.0) & (hi > lo)
    at_hi = straddle & (f_hi == 0.0)
    out[at_hi] = hi[at_hi]
    fallback = list(np.nonzero(~straddle)[0])
    act = np.nonzero(straddle & ~at_hi)[0]
    lo, hi = lo[act], hi[act]
    t = lo - f_lo[act] * (hi - lo) / (f_hi[act] - f_lo[act])     # regula falsi: inside
    for _ in range(NEWTON_MAX_STEPS):
        if not len(act):
            break
        f, fdot, ok = _range_rate_many(pop, i[act], j[act], jd0, fr0, t)
        neg = f < 0.0
        lo = np.where(neg, t, lo)
        hi = np.where(neg, hi, t)
        with np.errstate(divide="ignore", invalid="ignore"):
            t_new = t - f / fdot
        bisect = ~((fdot > 0.0) & (t_new > lo) & (t_new < hi))
        t_new = np.where(bisect, 0.5 * (lo + hi), t_new)
        done = ok & ((f == 0.0) | (np.abs(t_new - t) < tol_s) | (hi - lo < tol_s))
        out[act[done]] = np.where(f[done] == 0.0, t[done], t_new[done])
        # a state that is not usable inside the bracket: no TCA, as solve_tca
        live = ok & ~done
        act, t, lo, hi = act[live], t_new[live], lo[live], hi[live]
    fallback += list(act)
    for k in fallback:
        tca = solve_tca(pop, brackets[k], jd0, fr0, t_min_s, t_max_s, tol_s)
        out[k] = np.nan if tca is None else tca
    return out


CROSSING_STEP_S = 30.0       # the volume function's sampling step around slow passes
CROSSING_BLOCK = 64           # samples per cached block (32 min at 30 s)
CROSSING_MAX_SPAN_S = 86400.0


class VolumeCrossings:
    """Entry and exit times (s) of secondaries through the volume around the TCAs of slow
    passes.  For each pair, g = volume norm - 1 is sampled every CROSSING_STEP_S on one grid
    anchored at the window start, in blocks of CROSSING_BLOCK that are computed once: the
    recurring passes of a co-orbiting pair, minutes or hours apart, share them.  From each TCA
    the samples are scanned outward to the first one outside the volume; the crossing between
    it and the sample before (or TCA) is then solved with Brent's method to 1 ms.  A side is
    None where the secondary is still inside at the window's edge (or CROSSING_MAX_SPAN_S
    away), or a state is not usable before it leaves."""

    def __init__(self, pop, jd0: float, fr0: float, volume, t_min_s: float, t_max_s: float):
        self.pop, self.jd0, self.fr0, self.volume = pop, jd0, fr0, volume
        self.t_min_s, self.t_max_s = t_min_s, t_max_s
        self._blocks: dict[tuple[int, int, int], np.ndarray] = {}

    def _g(self, i: int, j: int, t_s: np.ndarray) -> np.ndarray:
        from .ric import to_ric

        r, v, c = self.pop.states(self.jd0, self.fr0, t_s, rows=[i, j])
        g = self.volume.norm(to_ric(r[1] - r[0], r[0], v[0])) - 1.0
        return np.where((c[0] == 0) & (c[1] == 0), g, np.nan)

    def _block(self, i: int, j: int, b: int) -> np.ndarray:
        key = (i, j, b)
        if key not in self._blocks:
            k = b * CROSSING_BLOCK + np.arange(CROSSING_BLOCK)
            self._blocks[key] = self._g(i, j, k * CROSSING_STEP_S)
        return self._blocks[key]

    def _solve(self, i: int, j: int, t_a: float, t_b: float) -> float:
        from .ric import to_ric

        def g(t_s):
            ri, vi, _ = self.pop.state_at(i, self.jd0, self.fr0, t_s)
            rj, vj, _ = self.pop.state_at(j, self.jd0, self.fr0, t_s)
            return float(self.volume.norm(to_ric(rj - ri, ri, vi))) - 1.0

        return brentq(g, min(t_a, t_b), max(t_a, t_b), xtol=1e-3)

    def _edge(self, i: int, j: int, tca_s: float, sign: int, end_s: float) -> float | None:
        step, n = CROSSING_STEP_S, CROSSING_BLOCK
        k = math.floor(tca_s / step) + 1 if sign > 0 else math.ceil(tca_s / step) - 1
        prev = tca_s
        while True:
            b = k // n
            g_blk = self._block(i, j, b)
            pos = np.arange(k - b * n, n) if sign > 0 else np.arange(k - b * n, -1, -1)
            ks = b * n + pos
            beyond = sign * (ks * step - end_s) >= 0.0
            n_in = int(np.argmax(beyond)) if beyond.any() else len(pos)
            g = g_blk[pos[:n_in]]
            out = ~(g <= 0.0)                  # outside, or not usable
            if out.any():
                q = int(np.argmax(out))
                if not np.isfinite(g[q]):
                    return None
                return self._solve(i, j, prev if q == 0 else float(ks[q - 1] * step),
                                   float(ks[q] * step))
            if n_in:
                prev = float(ks[n_in - 1] * step)
            if n_in < len(pos):                # the end of the search comes first
                g_end = float(self._g(i, j, np.array([end_s]))[0])
                return self._solve(i, j, prev, end_s) if g_end > 0.0 else None
            k = b * n + (n if sign > 0 else -1)

    def times(self, i: int, j: int, tca_s: float) -> tuple[float | None, float | None]:
        if not (self._g(i, j, np.array([tca_s]))[0] <= 0):
            return None, None
        lo = max(self.t_min_s, tca_s - CROSSING_MAX_SPAN_S)
        hi = min(self.t_max_s, tca_s + CROSSING_MAX_SPAN_S)
        return self._edge(i, j, tca_s, -1, lo), self._edge(i, j, tca_s, 1, hi)
