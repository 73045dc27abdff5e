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

from .pc import MonteCarloPc, wilson

PATH_MC_SAMPLES = 50_000        # Wilson 99 % interval reported with every estimate
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
