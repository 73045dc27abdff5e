"""Pc for slow or long encounters, where the 2-D short-encounter assumption fails.

Monte Carlo along the nominal relative path: sample a position offset delta from the combined
covariance at TCA, hold it fixed over the encounter (errors taken as a rigid translation for
the span of the path, an approximation stated with the result), and count the samples whose
path rho(t) + delta comes within the hard-body radius at any time.  The path is piecewise
linear between its samples; distance to each segment is exact, so a coarse time step loses
nothing as long as the true path is smooth between samples.
"""

from __future__ import annotations

import numpy as np

from scipy import stats

from .pc import MonteCarloPc, wilson

PATH_MC_SAMPLES = 50_000        # first batch; Wilson 99 % interval reported with every estimate
PATH_MC_MAX_SAMPLES = 400_000   # sampling doubles up to this while a threshold is unresolved
BOUND_FLOOR = 1e-30             # pc_path_upper_bound never goes below this (tail underflow)
REACH_SIGMA = 6.0               # segments farther than this many sigma (+ HBR) cannot be hit


def pc_path_monte_carlo(path_km: np.ndarray, cov_km2: np.ndarray, hbr_km: float,
                        samples: int = PATH_MC_SAMPLES, seed: int = 1,
                        chunk: int = 8_192) -> MonteCarloPc:
    """path_km: (m, 3) relative positions (secondary - primary) around TCA, inertial, km;
    cov_km2: 3x3 combined position covariance, same frame."""
    p = np.asarray(path_km, float)
    a, b = p[:-1], p[1:]
    seg = b - a
    seg2 = np.maximum(np.einsum("ij,ij->i", seg, seg), 1e-30)
    cov = np.asarray(cov_km2, float)
    reach = REACH_SIGMA * float(np.sqrt(np.linalg.eigvalsh(cov).max())) + hbr_km
    u0 = np.clip(np.einsum("sk,sk->s", -a, seg) / seg2, 0.0, 1.0)
    near = np.linalg.norm(a + u0[:, None] * seg, axis=1) <= reach
    a, seg, seg2 = a[near], seg[near], seg2[near]
    if not len(a):
        return wilson(0, samples)
    rng = np.random.default_rng(seed)
    L = np.linalg.cholesky(cov + 1e-18 * np.eye(3))
    hits, done = 0, 0
    r2 = hbr_km * hbr_km
    a_seg = np.einsum("sk,sk->s", a, seg)          # a . seg
    a2 = np.einsum("sk,sk->s", a, a)               # |a|^2
    while done < samples:
        n = min(chunk, samples - done)
        delta = rng.standard_normal((n, 3)) @ L.T                 # (n, 3)
        # q = -delta - a (the origin seen from the shifted segment start), all as (n, s) via
        # two matrix products: q.seg = -(delta.seg) - a.seg, |q|^2 = |delta|^2 + 2 delta.a + |a|^2
        d0, d1, d2_ = delta[:, 0:1], delta[:, 1:2], delta[:, 2:3]
        q_seg = -(d0 * seg[:, 0] + d1 * seg[:, 1] + d2_ * seg[:, 2]) - a_seg
        q2 = (d0 * d0 + d1 * d1 + d2_ * d2_) + 2.0 * (d0 * a[:, 0] + d1 * a[:, 1] + d2_ * a[:, 2]) + a2
        u = np.clip(q_seg / seg2, 0.0, 1.0)
        d2 = q2 - 2.0 * u * q_seg + u * u * seg2
        hits += int(np.count_nonzero((d2 <= r2).any(axis=1)))
        done += n
    return wilson(hits, samples)


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
    tail = 1.0 if d_min <= 0 else float(stats.chi2.sf(d_min * d_min, 3))
    across = stats.ncx2.cdf(r_w * r_w, 2, d_line * d_line)
    along = stats.norm.cdf(s0 + seg_len + r_w) - stats.norm.cdf(s0 - r_w)
    union = float(np.sum(across * along))
    # the special functions underflow to 0 far in the tails: never claim less than the floor
    return max(BOUND_FLOOR, min(1.0, tail, union))


def pc_path_resolved(path_km: np.ndarray, cov_km2: np.ndarray, hbr_km: float,
                     thresholds: tuple[float, ...], samples: int = PATH_MC_SAMPLES,
                     max_samples: int = PATH_MC_MAX_SAMPLES, seed: int = 1
                     ) -> tuple[MonteCarloPc, bool]:
    """Sample until the 99 % interval lies on one side of every threshold (so the attention
    level is decided by the data), doubling the count up to max_samples.  The interval is
    Wilson's, its upper end lowered to pc_path_upper_bound where that is tighter (it decides
    most remote passes at the first batch).  Returns (estimate, resolved); batches use
    independent seeds and their hits are pooled."""
    bound = pc_path_upper_bound(path_km, cov_km2, hbr_km)
    hits, done, batch, k = 0, 0, samples, 0
    while True:
        mc = pc_path_monte_carlo(path_km, cov_km2, hbr_km, samples=batch, seed=seed + k)
        hits += round(mc.pc * batch)
        done += batch
        est = wilson(hits, done)
        est = MonteCarloPc(est.pc, min(est.lo99, bound), min(est.hi99, bound), est.samples)
        if all(not (est.lo99 < t <= est.hi99) for t in thresholds):
            return est, True
        if done >= max_samples:
            return est, False
        batch, k = min(done, max_samples - done), k + 1
