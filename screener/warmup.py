"""Compile the numba functions now (or load them from numba's cache): the two coarse sieves,
the bracket search, the state gates, the two-body fill, the 2-D Pc quadrature's fixed rule
and its adaptive rule's integrand (a C function), and the along-path Monte Carlo's kernels.
`make` runs this after installing and the test session before its first test, so that no
screening spends the compile time (about 10 s) on its first call.

    python -m screener.warmup
"""

from __future__ import annotations

import numpy as np


def warm() -> None:
    from .propagation.kepler_fill import fill_between, kepler_states
    from .propagation.sgp4_batch import screen_states
    from .risk.path_kernels import log_mixture, segment_hits
    from .risk.pc import pc_quadrature_many
    from .screening.refine import brackets_from_candidates
    from .screening.sieve import all_pairs_candidates, fleet_candidates, top_speeds

    r = np.zeros((2, 2, 3))
    r[:, :, 0] = 7000.0
    r[1] += 1.0
    v = np.zeros((2, 2, 3))
    v[:, :, 1] = 7.5
    usable = np.ones((2, 2), bool)
    all_pairs_candidates(r, v, usable, 120.0, 7.0, 2)
    fleet_candidates(r[0], v[0], usable[0], r, v, usable, np.array([1]), 240.0, 7.0,
                     top_speeds(v[1:]))
    kepler_states(r[0], v[0], np.array([10.0, 20.0]))
    fill_between(np.repeat(r[:1, :1], 3, axis=1), np.repeat(v[:1, :1], 3, axis=1),
                 np.array([0.0, 10.0, 20.0]))
    screen_states(r.copy(), v.copy(), np.zeros((2, 2), np.int8))
    one = np.array([0])
    brackets_from_candidates(np.array([0.0, 120.0]), r, v, one, one + 1, one, 7.0, np.arange(2))
    seg = r[1]
    segment_hits(seg, seg, seg, np.ones(2), 0.01)
    log_mixture(seg, seg, seg, np.ones(2), 0.01, np.zeros(2))
    pc_quadrature_many(np.ones(2), np.ones(2), np.ones(2), np.ones(2), np.full(2, 0.1))
    pc_quadrature_many(np.ones(2), np.ones(2), np.ones(2), np.ones(2), np.full(2, 2.0))  # adaptive


if __name__ == "__main__":
    warm()
