"""Pc for slow or long encounters, where the 2-D short-encounter assumption fails.

Monte Carlo along the nominal relative path: sample a position offset delta from the combined
covariance at TCA, hold it fixed over the encounter (errors taken as a rigid translation for
the span of the path, an approximation stated with the result), and count the samples whose
path rho(t) + delta comes within the hard-body radius at any time.  The path is piecewise
linear between its samples; distance to each segment is exact, so a coarse time step loses
nothing as long as the true path is smooth between samples.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from scipy import special

from .pc import Z99, MonteCarloPc, wilson

PATH_MC_SAMPLES = 50_000        # first batch; Wilson 99 % interval reported with every estimate
PATH_MC_MAX_SAMPLES = 400_000   # sampling doubles up to this while a threshold is unresolved
BOUND_FLOOR = 1e-30             # pc_path_upper_bound never goes below this (tail underflow)
REACH_SIGMA = 6.0               # segments farther than this many sigma (+ HBR) cannot be hit


TREE_MAX_POINTS = 200_000       # the hit test's point index is skipped for longer paths ...
TREE_MIN_SEGMENTS = 128         # ... and for fewer segments than this (measured break-even
                                # against the compiled exact test, 40,000 offsets near a slow
                                # drift: 64 segments 10.1 ms indexed, 6.5 ms exact; 128
                                # segments 11.0 against 12.6 ms)


@dataclasses.dataclass(frozen=True)
class _Path:
    """The path segments that can be hit, and an index of points along them every hbr/2
    (see hits)."""
    a: np.ndarray        # (s, 3) segment starts, km
    seg: np.ndarray      # (s, 3) segment vectors
    seg2: np.ndarray     # (s,) squared lengths
    tree: object = None  # cKDTree of points along the segments, spacing at most `spacing_km`
    spacing_km: float = 0.0

    @classmethod
    def near(cls, path_km, cov_km2, hbr_km) -> "_Path":
        p = np.asarray(path_km, float)
        a, b = p[:-1], p[1:]
        seg = b - a
        seg2 = np.maximum(np.einsum("ij,ij->i", seg, seg), 1e-30)
        reach = REACH_SIGMA * float(np.sqrt(np.linalg.eigvalsh(cov_km2).max())) + hbr_km
        u0 = np.clip(np.einsum("sk,sk->s", -a, seg) / seg2, 0.0, 1.0)
        keep = np.linalg.norm(a + u0[:, None] * seg, axis=1) <= reach
        a, seg, seg2 = a[keep], seg[keep], seg2[keep]
        tree, spacing = None, 0.5 * hbr_km
        n_pts = np.ceil(np.sqrt(seg2) / spacing).astype(int) + 1
        if len(a) >= TREE_MIN_SEGMENTS and spacing > 0 and n_pts.sum() <= TREE_MAX_POINTS:
            from scipy.spatial import cKDTree

            pts = np.concatenate([a[k] + np.linspace(0.0, 1.0, n)[:, None] * seg[k]
                                  for k, n in enumerate(n_pts)])
            tree = cKDTree(pts)
        return cls(a, seg, seg2, tree, spacing)

    def hits(self, delta: np.ndarray, hbr_km: float) -> np.ndarray:
        """Which offsets (n, 3) bring the shifted path within hbr of the origin, i.e. which
        points -delta lie within hbr of the path.  With the point index, the distance d to
        the nearest indexed point bounds the distance to the path from both sides (the path
        is within spacing/2 of an indexed point everywhere): d <= hbr is a hit, d > hbr +
        spacing/2 a miss, and only the thin shell between gets the exact segment test.  The
        same hits as the exact test alone, at a fraction of its cost."""
        if not len(self.a):
            return np.zeros(len(delta), bool)
        if self.tree is None or self.spacing_km != 0.5 * hbr_km:
            return self._exact(delta, hbr_km)
        d, _ = self.tree.query(-delta, distance_upper_bound=hbr_km + 0.5 * self.spacing_km)
        out = d <= hbr_km
        maybe = np.isfinite(d) & ~out
        if maybe.any():
            out[maybe] = self._exact(delta[maybe], hbr_km)
        return out

    def _exact(self, delta: np.ndarray, hbr_km: float) -> np.ndarray:
        """Exact point-to-segment distances, every offset against every segment (compiled:
        `path_kernels.segment_hits`)."""
        from .path_kernels import segment_hits

        return segment_hits(np.ascontiguousarray(delta, float), self.a, self.seg, self.seg2,
                            float(hbr_km))


def pc_path_monte_carlo(path_km: np.ndarray, cov_km2: np.ndarray, hbr_km: float,
                        samples: int = PATH_MC_SAMPLES, seed: int = 1,
                        chunk: int = 8_192, near: "_Path | None" = None) -> MonteCarloPc:
    """Plain Monte Carlo.  path_km: (m, 3) relative positions (secondary - primary) around
    TCA, inertial, km; cov_km2: 3x3 combined position covariance, same frame.  `near`: the
    path's `_Path.near`, when the caller has built it already."""
    cov = np.asarray(cov_km2, float)
    path = near or _Path.near(path_km, cov, hbr_km)
    if not len(path.a):
        return wilson(0, samples)
    rng = np.random.default_rng(seed)
    L = np.linalg.cholesky(cov + 1e-18 * np.eye(3))
    hits, done = 0, 0
    while done < samples:
        n = min(chunk, samples - done)
        delta = rng.standard_normal((n, 3)) @ L.T                 # (n, 3)
        hits += int(np.count_nonzero(path.hits(delta, hbr_km)))
        done += n
    return wilson(hits, samples)


IS_DEFENSIVE = 0.2      # share of importance samples drawn from the covariance itself
IS_FIRST_BATCH = 2_500  # importance samples in the first batch (each later one doubles)


def pc_path_importance(path_km: np.ndarray, cov_km2: np.ndarray, hbr_km: float,
                       samples: int, seed: int = 2, chunk: int = 8_192,
                       near: "_Path | None" = None) -> MonteCarloPc:
    """Importance sampling around the hard-body tube: offsets drawn from a mixture with one
    Gaussian per path segment, centred on -(segment midpoint), spread half the segment's
    length along it and the hard-body radius across it, each weighted by the covariance's
    density there; plus a defensive share drawn from the covariance itself.  Each hit counts
    p/q (unbiased); the 99 % interval is the normal one on the weighted mean.  `near`: the
    path's `_Path.near`, when the caller has built it already."""
    from .path_kernels import log_mixture

    cov = np.asarray(cov_km2, float)
    path = near or _Path.near(path_km, cov, hbr_km)
    if not len(path.a):
        return MonteCarloPc(0.0, 0.0, 0.0, samples)
    centres = np.ascontiguousarray(-(path.a + 0.5 * path.seg))
    length = np.sqrt(path.seg2)
    axis = path.seg / length[:, None]
    s_along = np.maximum(0.5 * length, hbr_km)
    s_across = hbr_km
    inv = np.linalg.inv(cov)
    logdet = float(np.linalg.slogdet(cov)[1])

    def log_p(x):
        return -0.5 * np.einsum("ni,ij,nj->n", x, inv, x) - 0.5 * (3 * np.log(2 * np.pi) + logdet)

    lw = log_p(centres)
    pi = np.exp(lw - lw.max())
    pi = np.maximum(pi / pi.sum(), 1e-300)
    pi /= pi.sum()
    log_comp_norm = np.log(pi) - 1.5 * np.log(2 * np.pi) - np.log(s_along) - 2 * np.log(s_across)
    rng = np.random.default_rng(seed)
    L = np.linalg.cholesky(cov + 1e-18 * np.eye(3))
    total, total2, done = 0.0, 0.0, 0
    while done < samples:
        n = min(chunk, samples - done)
        k = rng.choice(len(centres), size=n, p=pi)
        z = rng.standard_normal((n, 3))
        x = centres[k] + s_across * z
        # replace the along-axis part of the spread: s_across -> s_along for that direction
        x += ((s_along[k] - s_across) * np.einsum("ni,ni->n", z, axis[k]))[:, None] * axis[k]
        prior = rng.random(n) < IS_DEFENSIVE
        x[prior] = rng.standard_normal((int(prior.sum()), 3)) @ L.T
        # a miss weighs 0 whatever its density: the mixture (n x K) is evaluated for hits only
        hit = path.hits(x, hbr_km)
        w = np.zeros(n)
        if hit.any():
            xh = np.ascontiguousarray(x[hit])
            log_mix = log_mixture(xh, centres, axis, s_along, float(s_across), log_comp_norm)
            lp = log_p(xh)
            log_q = np.logaddexp(np.log(IS_DEFENSIVE) + lp, np.log1p(-IS_DEFENSIVE) + log_mix)
            w[hit] = np.exp(lp - log_q)
        total += float(w.sum())
        total2 += float((w * w).sum())
        done += n
    mean = total / samples
    sd = np.sqrt(max(total2 / samples - mean * mean, 0.0) / samples)
    return MonteCarloPc(mean, max(0.0, mean - Z99 * sd), mean + Z99 * sd, samples)


def pc_path_upper_bound(path_km: np.ndarray, cov_km2: np.ndarray, hbr_km: float) -> float:
    """A rigorous upper bound on the along-path Pc.  A hit needs the offset delta inside the
    tube of radius hbr around -path.  Whitened by the covariance (delta becomes a standard
    normal z), the tube lies inside the union over segments of capsules of radius
    r = hbr/sigma_min, and each capsule inside a cylinder section: a disk of radius r in the
    plane across the segment times the segment's extent along it, widened by r.  The normal
    is independent across those directions, so each section's mass is exact:
    P(noncentral chi-square(2, d^2) <= r^2) x (Phi(b + r) - Phi(a - r)), d the distance of
    the segment's line from the origin, [a, b] the segment along the line.  Their sum, and the
    3-D chi-square tail beyond the tube's nearest point, both bound Pc; the smaller is
    returned."""
    p = np.asarray(path_km, float)
    cov = np.asarray(cov_km2, float)
    L = np.linalg.cholesky(cov + 1e-18 * np.eye(3))
    q = np.linalg.solve(L, p.T).T                        # whitened path
    r_w = hbr_km / float(np.sqrt(np.linalg.eigvalsh(cov).min()))
    a, seg = q[:-1], q[1:] - q[:-1]
    seg_len = np.sqrt(np.maximum(np.einsum("ij,ij->i", seg, seg), 1e-30))
    e = seg / seg_len[:, None]
    s0 = np.einsum("ij,ij->i", a, e)                      # start along the line
    foot = a - s0[:, None] * e                            # origin's nearest point on each line
    d_line = np.linalg.norm(foot, axis=1)
    u = np.clip(-s0 / seg_len, 0.0, 1.0)
    d_seg = float(np.linalg.norm(a + (u * seg_len)[:, None] * e, axis=1).min())
    d_min = d_seg - r_w
    # scipy.stats' chi2.sf, ncx2.cdf and norm.cdf are these special functions (the same
    # values, without the import of scipy.stats or its per-call checks)
    tail = 1.0 if d_min <= 0 else float(special.chdtrc(3, d_min * d_min))
    nc = d_line * d_line
    with np.errstate(over="ignore"):
        across = np.where(nc != 0, special.chndtr(r_w * r_w, 2, nc), special.chdtr(2, r_w * r_w))
    along = special.ndtr(s0 + seg_len + r_w) - special.ndtr(s0 - r_w)
    union = float(np.sum(across * along))
    # the special functions underflow to 0 far in the tails: never claim less than the floor
    return max(BOUND_FLOOR, min(1.0, tail, union))


NO_HIT_EXPECTED = 0.01     # expected hits of the plain batch below which it is not drawn
# The plain batch decides a pass only when its Pc is well above the thresholds (its 99 %
# interval spans a factor of about 25 at 5 hits): below this multiple of the highest threshold
# the bound says that cannot be, and importance sampling starts at once (measured on dense-
# shell slow passes: 117 of 151 went on to importance sampling after a plain batch of 50,000)
PLAIN_BATCH_MIN_BOUND = 30.0


def pc_path_resolved(path_km: np.ndarray, cov_km2: np.ndarray, hbr_km: float,
                     thresholds: tuple[float, ...], samples: int = PATH_MC_SAMPLES,
                     max_samples: int = PATH_MC_MAX_SAMPLES, seed: int = 1
                     ) -> tuple[MonteCarloPc, bool]:
    """A plain Monte Carlo batch first where the bound leaves room for a Pc it can decide
    (its Wilson 99 % interval, the upper end lowered to pc_path_upper_bound where that is
    tighter); while the interval still straddles a threshold, or at once where the plain batch
    could not decide, importance sampling around the hard-body tube takes over, doubling its
    count until the total reaches max_samples.  Returns (estimate, resolved); resolved means
    the interval lies on one side of every threshold."""
    bound = pc_path_upper_bound(path_km, cov_km2, hbr_km)

    def clear(e):
        return all(not (e.lo99 < t <= e.hi99) for t in thresholds)

    if bound * samples < NO_HIT_EXPECTED and clear(MonteCarloPc(0.0, 0.0, bound, 0)):
        # fewer than NO_HIT_EXPECTED hits expected from the batch: it would all but surely
        # find none, and the rigorous bound is a better upper end than its interval
        return MonteCarloPc(0.0, 0.0, bound, 0), True
    done = 0
    near = _Path.near(path_km, np.asarray(cov_km2, float), hbr_km)    # once for every batch
    if bound >= PLAIN_BATCH_MIN_BOUND * max(thresholds, default=0.0) or samples >= max_samples:
        mc = pc_path_monte_carlo(path_km, cov_km2, hbr_km, samples=samples, seed=seed,
                                 near=near)
        est = MonteCarloPc(mc.pc, min(mc.lo99, bound), min(mc.hi99, bound), mc.samples)
        if clear(est) or samples >= max_samples:
            return est, clear(est)
        done = samples
    batch, k = IS_FIRST_BATCH, 0
    while True:
        est = pc_path_importance(path_km, cov_km2, hbr_km, samples=batch, seed=seed + 1 + k,
                                 near=near)
        done_total = done + batch
        est = MonteCarloPc(est.pc, min(est.lo99, bound), min(est.hi99, bound), done_total)
        if clear(est) or done_total >= max_samples:
            return est, clear(est)
        done, batch, k = done_total, min(2 * batch, max_samples - done_total), k + 1
