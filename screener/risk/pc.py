"""Collision probability for short encounters in the 2-D encounter plane.

Inputs are in the encounter plane: miss (xm, ym) in metres along the principal axes of the
combined covariance, standard deviations sx, sy (m), hard-body radius R (m).  The relative
position is Gaussian N(0, diag(sx^2, sy^2)); Pc is its mass inside the disk of radius R centred
on the miss.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy import optimize, special


# Gauss-Legendre nodes on [-pi/2, pi/2] for the fixed rule (numpy's leggauss).  24 nodes
# agree with 64 to 1.4e-13 relative on 20,000 random geometries inside the rule's range (disk
# up to half a sigma, miss up to 12 sigma); 16 nodes would be off by 1e-8 there.
GL_NODES = 24
_GL_NODES, _GL_WEIGHTS = np.polynomial.legendre.leggauss(GL_NODES)
_GL_THETA = _GL_NODES * (math.pi / 2)
_GL_W = _GL_WEIGHTS * (math.pi / 2)
_GL_SIN, _GL_COS = np.sin(_GL_THETA), np.cos(_GL_THETA)
# The fixed rule is used while the disk is small against the Gaussian (R <= FIXED_RULE_MAX_R
# sigmas along both axes): the integrand in theta is then analytic and smooth over the whole
# interval and GL_NODES nodes reach round-off (checked against the adaptive rule in the tests);
# a sharper Gaussian goes to the adaptive rule.
FIXED_RULE_MAX_R = 0.5


def pc_quadrature(xm: float, ym: float, sx: float, sy: float, R: float) -> float:
    """Reference method: 1-D integral over x of the Gaussian times the y-mass of the chord
    (Foster & Estes 1992, NASA JSC-25898; the erf form as in Alfano 2005).  Substituting
    x = xm + R sin(theta) removes the square-root end points.  A fixed 24-node Gauss-Legendre
    rule when the disk is small against the Gaussian, else scipy's adaptive quad."""
    if R <= FIXED_RULE_MAX_R * min(sx, sy):
        return float(pc_quadrature_fixed(xm, ym, np.asarray(sx, float), np.asarray(sy, float), R))
    return pc_quadrature_adaptive(xm, ym, sx, sy, R)


def pc_quadrature_fixed(xm: float, ym: float, sx, sy, R: float):
    """The quadrature with the fixed rule, for one geometry and any array of (sx, sy) (the
    covariance-scale search evaluates many sizes at once)."""
    xm, ym, sx, sy, R = np.broadcast_arrays(*(np.asarray(v, float) for v in (xm, ym, sx, sy, R)))
    return _fixed_rows(xm, ym, sx, sy, R)


BATCH_ROWS = 32768     # geometries x nodes per array operation in the batch functions (memory bound)


def _fixed_rows(xm, ym, sx, sy, R):
    """The fixed rule over rows: every argument an array of the same shape (..., ), in one
    compiled loop (plane_kernels.fixed_rule)."""
    from .plane_kernels import fixed_rule

    shape = np.shape(xm)
    flat = [np.ascontiguousarray(v, float).ravel() for v in (xm, ym, sx, sy, R)]
    out = np.empty(flat[0].shape[0])
    fixed_rule(*flat, _GL_SIN, _GL_COS, _GL_W, out)
    return out.reshape(shape)


def pc_quadrature_many(xm, ym, sx, sy, R) -> np.ndarray:
    """pc_quadrature for many geometries at once (1-D arrays, or scalars broadcast): the fixed
    rule in array operations where it applies, the adaptive rule for the others."""
    xm, ym, sx, sy, R = np.broadcast_arrays(*(np.asarray(v, float) for v in (xm, ym, sx, sy, R)))
    out = np.zeros(xm.shape)
    ok = R <= FIXED_RULE_MAX_R * np.minimum(sx, sy)
    idx = np.nonzero(ok)[0]
    for a in range(0, len(idx), BATCH_ROWS):
        k = idx[a:a + BATCH_ROWS]
        out[k] = _fixed_rows(xm[k], ym[k], sx[k], sy[k], R[k])
    for k in np.nonzero(~ok)[0]:
        out[k] = pc_quadrature_adaptive(xm[k], ym[k], sx[k], sy[k], R[k])
    return out


GOLDEN_STEPS = 24      # a bracket of 1.0 in log scale narrowed to 1e-5 (0.618^24): Pc within ~1e-10 of the peak


def pc_max_scaled_many(xm, ym, sx, sy, R) -> tuple[np.ndarray, np.ndarray]:
    """pc_max_scaled for many geometries, in array operations: where the disk is small
    against the covariance near the peak, successive parabolas through log Pc around the
    small-disk peak (VERTEX_STEPS); elsewhere, and wherever that search cannot vouch for its
    answer, the same log-scale grid as pc_max_scaled and a golden-section search inside each
    geometry's bracket.  Returns (max Pc, k)."""
    xm, ym, sx, sy, R = np.broadcast_arrays(*(np.asarray(v, float) for v in (xm, ym, sx, sy, R)))
    n = len(xm)
    best_pc, best_k = np.zeros(n), np.ones(n)
    d = np.hypot(xm, ym)
    inside = d <= R
    best_pc[inside], best_k[inside] = 1.0, math.exp(SCALE_GRID[0])
    # Small-disk limit: Pc(k) ~ R^2 / (2 sx sy k^2) exp(-v / (2 k^2)), v the squared
    # Mahalanobis miss, peaks at k = sqrt(v / 2); log Pc against log k is near a parabola
    # there (curvature -4).
    v = (xm / sx) ** 2 + (ym / sy) ** 2
    k_star = np.sqrt(np.maximum(v, 1e-300) / 2.0)
    failed = _max_by_vertex(np.nonzero(~inside)[0], np.log(k_star), xm, ym, sx, sy, R,
                            best_pc, best_k)
    _max_over_rows(failed, xm, ym, sx, sy, R, d, best_pc, best_k)
    return best_pc, best_k


# Half-widths in log k of the successive parabolas.  With g = log Pc against x = log k, the
# vertex of a parabola through three points h apart is off the true peak by about
# g3 h^2 / (6 |g2|) (g2, g3 the second and third derivatives: -4 and 8 in the small-disk
# limit, so h^2 / 3), plus the square of the previous offset: 0.2, 0.02, 0.002 leave about
# 1e-6 in log k, so about 2e-12 relative in the maximum (|g2| offset^2 / 2).  Checked against
# the grid-and-golden search and against a dense search in the tests.
VERTEX_STEPS = (0.2, 0.02, 0.002)


def _max_by_vertex(rows, log_k0, xm, ym, sx, sy, R, best_pc, best_k) -> np.ndarray:
    """The parabola search for the given rows, in place into best_pc, best_k.  Returns the
    rows it cannot vouch for: a point where the fixed rule does not apply, a zero or non-
    finite Pc, a non-concave triple, or a vertex more than one step from its centre."""
    failed = []
    step = max(1, BATCH_ROWS // 3)
    for a in range(0, len(rows), step):
        r = rows[a:a + step]
        c = log_k0[r]
        smin = np.minimum(sx[r], sy[r])
        good = np.ones(len(r), bool)
        for h in VERTEX_STEPS:
            lk = c[:, None] + np.array([-h, 0.0, h])[None, :]
            good &= R[r] <= FIXED_RULE_MAX_R * smin * np.exp(lk[:, 0])
            ks = np.exp(np.where(good[:, None], lk, 0.0))
            XM, YM, RR = (np.broadcast_to(v[r, None], ks.shape) for v in (xm, ym, R))
            vals = _fixed_rows(XM, YM, sx[r, None] * ks, sy[r, None] * ks, RR)
            with np.errstate(divide="ignore", invalid="ignore"):
                g = np.log(vals)
                curv = g[:, 2] - 2.0 * g[:, 1] + g[:, 0]
                shift = h * (g[:, 0] - g[:, 2]) / (2.0 * curv)
            good &= np.isfinite(g).all(axis=1) & (curv < 0) & (np.abs(shift) <= h)
            c = c + np.where(good, shift, 0.0)
        ks = np.exp(np.where(good, c, 0.0))
        top = _fixed_rows(xm[r], ym[r], sx[r] * ks, sy[r] * ks, R[r])
        good &= np.isfinite(top) & (top > 0)
        best_pc[r[good]], best_k[r[good]] = top[good], ks[good]
        failed.append(r[~good])
    return np.concatenate(failed).astype(int) if failed else np.empty(0, int)


def _max_over_rows(rows, xm, ym, sx, sy, R, d, best_pc, best_k) -> None:
    """SCALE_GRID, then golden section inside the best grid point's bracket, for the given
    rows (in place into best_pc, best_k)."""
    if not len(rows):
        return
    width = len(SCALE_GRID)
    step = max(1, BATCH_ROWS // width)
    for a in range(0, len(rows), step):
        r = rows[a:a + step]
        LG = np.broadcast_to(SCALE_GRID, (len(r), width))
        ks = np.exp(LG)
        gx, gy = sx[r, None] * ks, sy[r, None] * ks
        XM, YM, RR = (np.broadcast_to(v[r, None], ks.shape) for v in (xm, ym, R))
        ok = RR <= FIXED_RULE_MAX_R * np.minimum(gx, gy)
        # where the whole disk lies beyond 10 sigma (along the widest axis) Pc < 1e-22: taken as 0
        far = (d[r, None] - RR) > 10.0 * np.maximum(gx, gy)
        vals = np.zeros(ks.shape)
        vals[ok] = _fixed_rows(XM[ok], YM[ok], gx[ok], gy[ok], RR[ok])
        for i, j in zip(*np.nonzero(~ok & ~far)):
            vals[i, j] = pc_quadrature_adaptive(XM[i, j], YM[i, j], gx[i, j], gy[i, j], RR[i, j])
        g = np.argmax(vals, axis=1)
        rr = np.arange(len(r))
        lo = LG[rr, np.maximum(g - 1, 0)]
        hi = LG[rr, np.minimum(g + 1, width - 1)]
        f = lambda lk, r=r: pc_quadrature_many(xm[r], ym[r], sx[r] * np.exp(lk), sy[r] * np.exp(lk), R[r])  # noqa: E731
        inv = (math.sqrt(5.0) - 1.0) / 2.0
        c, e = hi - inv * (hi - lo), lo + inv * (hi - lo)
        fc, fe = f(c), f(e)
        for _ in range(GOLDEN_STEPS):
            # left: the maximum lies in [lo, e]; the old c becomes the new e and a new c is
            # needed; right: [c, hi], the old e becomes c and a new e is needed.  Each row
            # needs one new point per step.
            left = fc >= fe
            hi = np.where(left, e, hi)
            lo = np.where(left, lo, c)
            c_new = np.where(left, hi - inv * (hi - lo), e)
            e_new = np.where(left, c, lo + inv * (hi - lo))
            f_new = f(np.where(left, c_new, e_new))
            fc, fe = np.where(left, f_new, fe), np.where(left, fc, f_new)
            c, e = c_new, e_new
        mid = (lo + hi) / 2.0
        fm = f(mid)
        grid_best = vals[rr, g]
        use_mid = fm >= grid_best
        best_pc[r] = np.where(use_mid, fm, grid_best)
        best_k[r] = np.where(use_mid, np.exp(mid), ks[rr, g])


def pc_quadrature_adaptive(xm: float, ym: float, sx: float, sy: float, R: float) -> float:
    """The quadrature with scipy's adaptive rule (relative tolerance 1e-12).  The integrand is
    the fixed rule's, compiled as a C function that quad calls without entering Python
    (plane_kernels.node_at_theta: the same values, bitwise, as calling node_value from Python
    on 3,000 random geometries, in a sixth of the time)."""
    from scipy.integrate import quad     # here, not at the top: its import takes about 0.15 s

    val, _ = quad(_adaptive_integrand(), -math.pi / 2, math.pi / 2,
                  args=(float(xm), float(ym), float(sx), float(sy), float(R)),
                  epsabs=0.0, epsrel=1e-12, limit=200)
    return float(val)


_INTEGRAND = []


def _adaptive_integrand():
    """The LowLevelCallable of plane_kernels.node_at_theta, made once per process."""
    if not _INTEGRAND:
        from scipy import LowLevelCallable

        from .plane_kernels import node_at_theta

        _INTEGRAND.append(LowLevelCallable(node_at_theta.ctypes))
    return _INTEGRAND[0]


CHAN_MAX_TERMS = 5_000_000      # memory bound of one series evaluation (40 MB)
CHAN_TERM_LOG_FLOOR = -800.0    # terms bounded below e^-800 are left out (0.0 in double:
                                # the smallest subnormal is about e^-744.4)


def pc_chan(xm: float, ym: float, sx: float, sy: float, R: float, terms: int | None = None) -> float:
    """Chan's series (Chan 2008, Spacecraft Collision Probability): the ellipse replaced by the
    equal-area isotropic case, u = R^2/(sx sy), v = xm^2/sx^2 + ym^2/sy^2,
    Pc = e^(-v/2) sum_m (v/2)^m/m! [1 - e^(-u/2) sum_k<=m (u/2)^k/k!].
    Only the terms within 40 standard deviations of the Poisson weights' peak (m ~ v/2) are
    summed: the rest add less than e^-800 of the total, so memory grows as sqrt(v), not v;
    and of those only the ones that can exceed e^-800 (_chan_head_end)."""
    return float(_chan_series(*(np.array([x], float) for x in (xm, ym, sx, sy, R)), terms=terms)[0])


def _chan_head_end(x: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """For each u/2 = x < 1, the first m from which every term of Chan's series is below
    e^CHAN_TERM_LOG_FLOOR (hi where no such m <= hi; hi for x >= 1).  A term is a Poisson
    weight (<= 1) times P(m+1, x), the regularized lower incomplete gamma function, and
    P(a, x) = int_0^x t^(a-1) e^-t dt / Gamma(a) <= x^a / Gamma(a+1).  With Stirling's lower
    bound ln Gamma(z) >= (z - 1/2) ln z - z + ln(2 pi)/2 (z > 0), the term's logarithm is at
    most b(m) = (m+1) ln x - (m+3/2) ln(m+2) + (m+2) - ln(2 pi)/2, which falls with m when
    x < 1; the first m with b(m) < floor is found by bisection."""
    def bound(m):
        return (m + 1) * np.log(x) - (m + 1.5) * np.log(m + 2) + (m + 2) - 0.5 * math.log(2 * math.pi)

    top = hi.astype(float)
    with np.errstate(divide="ignore"):
        done = (x >= 1.0) | (bound(top) >= CHAN_TERM_LOG_FLOOR)   # no such m <= hi
        a, b = np.zeros(len(x)), top.copy()                       # bound(a) >= floor or a = 0
        for _ in range(64):
            open_ = ~done & (b - a > 1)
            if not open_.any():
                break
            mid = np.floor((a + b) / 2)
            below = bound(mid) < CHAN_TERM_LOG_FLOOR
            b = np.where(open_ & below, mid, b)
            a = np.where(open_ & ~below, mid, a)
        first = np.where(bound(a) < CHAN_TERM_LOG_FLOOR, a, b)
    return np.where(done, hi, first).astype(np.int64)


def _chan_series(xm, ym, sx, sy, R, terms: int | None = None) -> np.ndarray:
    """pc_chan for arrays of geometries: every geometry's terms in one array, so each array
    function is called once for all of them.  A geometry whose u or v is not a finite number
    gets NaN (no terms)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        u = R * R / (sx * sy)
        v = (xm / sx) ** 2 + (ym / sy) ** 2
    bad = ~(np.isfinite(u) & np.isfinite(v) & (u >= 0))
    u, v = np.where(bad, 0.0, u), np.where(bad, 0.0, v)
    half = v / 2
    spread = 40.0 * np.sqrt(half) + 50.0
    lo = np.maximum(0, np.floor(half - spread)).astype(np.int64)
    hi = np.floor(half + spread).astype(np.int64) if terms is None else np.full(len(u), int(terms))
    hi[bad] = lo[bad]
    widest = int((hi - lo).max()) if len(u) else 0
    if widest > CHAN_MAX_TERMS:
        raise ValueError(f"Chan's series would need {widest:,} terms; use pc_quadrature")
    end = np.maximum(np.minimum(np.maximum(hi, lo + 1), _chan_head_end(u / 2, hi)), lo)
    n = np.where(bad, 0, end - lo)
    out = np.where(bad, np.nan, 0.0)
    if not n.sum():
        return out
    starts = np.cumsum(n) - n            # each geometry's first term in the joined array
    owner = np.repeat(np.arange(len(u)), n)
    m = (np.arange(int(n.sum())) - starts[owner] + lo[owner]).astype(float)
    h = half[owner]
    with np.errstate(divide="ignore"):
        log_w = np.where(h > 0, m * np.log(np.where(h > 0, h, 1.0)), np.where(m == 0, 0.0, -np.inf))
    log_w = log_w - h - special.gammaln(m + 1)
    # 1 - e^(-u/2) sum_k<=m (u/2)^k/k! is the Poisson tail P(N(u/2) > m) = gammainc(m+1, u/2),
    # computed directly so it keeps its digits when it is tiny
    term = np.exp(log_w) * special.gammainc(m + 1, u[owner] / 2)
    has = n > 0
    out[has] = np.add.reduceat(term, starts[has])
    return out


# Chan's series is the Poisson-mixture form of the noncentral chi-square distribution with
# two degrees of freedom (common practice): Pc = P[chi'^2(2, v) <= u].  scipy's chndtr
# (Boost) gives it in one array call; measured against the series on 10,079 encounter
# geometries it agrees to 1.5e-14 relative down to 1e-60, and it returns 0 further out, where
# the series is summed as before.
CHAN_ARRAY_FLOOR = 1e-50


def pc_chan_many(xm, ym, sx, sy, R) -> np.ndarray:
    """pc_chan for many geometries (1-D arrays)."""
    xm, ym, sx, sy, R = np.broadcast_arrays(*(np.asarray(v, float) for v in (xm, ym, sx, sy, R)))
    out = special.chndtr(R * R / (sx * sy), 2.0, (xm / sx) ** 2 + (ym / sy) ** 2)
    far = ~(out >= CHAN_ARRAY_FLOOR)
    if far.any():
        out[far] = _chan_series(xm[far], ym[far], sx[far], sy[far], R[far])
    return out


# Our validity gate for Chan's equal-area approximation (engineering choices, checked against
# quadrature in the tests): squared Mahalanobis miss, disk against the smaller sigma, aspect.
CHAN_MAX_MISS_V = 1e6
CHAN_MAX_R_OVER_SIGMA = 0.2
CHAN_MAX_ASPECT = 20.0


def chan_reliable_many(xm, ym, sx, sy, R) -> np.ndarray:
    """chan_is_reliable's verdict for many geometries (its reasons from the scalar test)."""
    smin, smax = np.minimum(sx, sy), np.maximum(sx, sy)
    v = (xm / sx) ** 2 + (ym / sy) ** 2
    return (v <= CHAN_MAX_MISS_V) & (R <= CHAN_MAX_R_OVER_SIGMA * smin) & (smax / smin <= CHAN_MAX_ASPECT)


def chan_is_reliable(xm: float, ym: float, sx: float, sy: float, R: float) -> tuple[bool, str]:
    """The gate for Chan's series: the density must be nearly constant across the disk along
    the narrow axis (R small against the smaller sigma) and the aspect ratio moderate.
    Outside the gate the reference method is used and we say so."""
    smin, smax = min(sx, sy), max(sx, sy)
    v = (xm / sx) ** 2 + (ym / sy) ** 2
    if v > CHAN_MAX_MISS_V:
        return False, f"miss {math.sqrt(v):.0f} sigma out: the series is not needed"
    if R > CHAN_MAX_R_OVER_SIGMA * smin:
        return False, f"hard-body radius {R:g} m exceeds {CHAN_MAX_R_OVER_SIGMA:g} x the smaller sigma {smin:.1f} m"
    if smax / smin > CHAN_MAX_ASPECT:
        return False, f"covariance aspect ratio {smax / smin:.1f} above {CHAN_MAX_ASPECT:g}"
    return True, "ok"


def pc_isotropic_exact(d: float, s: float, R: float) -> float:
    """Isotropic covariance: Pc = P[noncentral chi-square(2, d^2/s^2) <= R^2/s^2]."""
    if d == 0:
        return float(-math.expm1(-R * R / (2 * s * s)))
    # scipy.stats' ncx2.cdf is this special function where the noncentrality is not 0 (the
    # same values; the special functions spare the import of scipy.stats, about 0.3 s)
    return float(special.chndtr(R * R / (s * s), 2, d * d / (s * s)))


def pc_max_isotropic(d: float, R: float) -> float:
    """Largest Pc over isotropic sigma for miss d: R^2/(e d^2), at sigma = d/sqrt(2)
    (Alfriend et al. 1999; Alfano 2005, J. Astronaut. Sci. 53(2)); small-R approximation."""
    return R * R / (math.e * d * d)


SCALE_GRID = np.linspace(-12.0, 12.0, 97)     # log scale factors tried first (step 0.25)


def pc_max_scaled(xm, ym, sx, sy, R) -> tuple[float, float]:
    """Worst case over the covariance's size with its shape (aspect ratio) kept: returns
    (max Pc, scale factor k on the sigmas at the maximum).  Pc is evaluated on a grid of
    log k in one array operation, then the bracket around the best grid point is refined by
    bounded scalar minimisation (Pc against the covariance's size has one maximum)."""
    ks = np.exp(SCALE_GRID)
    d = math.hypot(xm, ym)
    if d <= R:          # the miss is inside the hard-body disk: Pc -> 1 as the covariance shrinks
        return 1.0, float(ks[0])
    ok = R <= FIXED_RULE_MAX_R * np.minimum(sx, sy) * ks
    # where the whole disk lies beyond 10 sigma (along the widest axis) Pc < 1e-22: taken as 0
    far = (d - R) > 10.0 * max(sx, sy) * ks
    vals = np.zeros(len(ks))
    if ok.any():
        vals[ok] = pc_quadrature_fixed(xm, ym, sx * ks[ok], sy * ks[ok], R)
    for k in np.nonzero(~ok & ~far)[0]:
        vals[k] = pc_quadrature_adaptive(xm, ym, sx * ks[k], sy * ks[k], R)
    best = int(np.argmax(vals))
    lo = SCALE_GRID[max(best - 1, 0)]
    hi = SCALE_GRID[min(best + 1, len(SCALE_GRID) - 1)]
    res = optimize.minimize_scalar(lambda lk: -pc_quadrature(xm, ym, sx * math.exp(lk),
                                                             sy * math.exp(lk), R),
                                   bounds=(lo, hi), method="bounded", options={"xatol": 1e-6})
    if -res.fun >= vals[best]:
        return float(-res.fun), float(math.exp(res.x))
    return float(vals[best]), float(ks[best])


def pc_max_line(d: float, R: float) -> float:
    """Infinite-aspect-ratio bound: covariance collapsed to a line along the miss, sigma
    chosen worst (sigma = d): Pc <= 2R / (d sqrt(2 pi e)).  No covariance can do worse."""
    return 2.0 * R / (d * math.sqrt(2.0 * math.pi * math.e)) if d > R else 1.0


Z99 = float(special.ndtri(0.995))   # two-sided 99 % normal quantile (scipy.stats' norm.ppf)


@dataclasses.dataclass
class MonteCarloPc:
    pc: float
    lo99: float
    hi99: float
    samples: int


def pc_monte_carlo(xm, ym, sx, sy, R, samples=2_000_000, seed=1, chunk=1_000_000) -> MonteCarloPc:
    """Seeded vectorised Monte Carlo with a Wilson 99 % interval."""
    rng = np.random.default_rng(seed)
    hits = 0
    done = 0
    while done < samples:
        n = min(chunk, samples - done)
        x = rng.normal(0.0, sx, n)
        y = rng.normal(0.0, sy, n)
        hits += int(np.count_nonzero((x - xm) ** 2 + (y - ym) ** 2 <= R * R))
        done += n
    return wilson(hits, samples)


def wilson(hits: int, samples: int) -> MonteCarloPc:
    """Hit fraction with its Wilson score 99 % interval."""
    p = hits / samples
    z = Z99
    denom = 1 + z * z / samples
    centre = (p + z * z / (2 * samples)) / denom
    half = z * math.sqrt(p * (1 - p) / samples + z * z / (4 * samples * samples)) / denom
    return MonteCarloPc(p, max(0.0, centre - half), min(1.0, centre + half), samples)


def in_dilution_region(xm, ym, sx, sy, R) -> bool:
    """True when shrinking the covariance would raise Pc: a low Pc here comes from poor data,
    not from a safe geometry."""
    return pc_quadrature(xm, ym, sx * 0.9, sy * 0.9, R) > pc_quadrature(xm, ym, sx, sy, R)


def cumulative(pcs) -> float:
    """Risk over several encounters, 1 - prod(1 - Pc_i)."""
    return float(-np.expm1(np.sum(np.log1p(-np.clip(np.asarray(pcs, float), 0, 1 - 1e-16)))))
