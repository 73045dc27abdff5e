"""Seeded synthetic scenarios covering the screening hard cases (invented objects).

They only set up geometry; the truth they are checked against is the independent brute-force
reference in test_screening_reference.py (plain sgp4 sampling), never these numbers.
"""

from __future__ import annotations

import numpy as np

from screener import synth
from screener.timeutil import datetime_to_jd, parse_iso

WINDOW_START = "2026-12-02T00:00:00Z"
WINDOW_S = 86400.0


def hard_cases():
    jd0, fr0 = datetime_to_jd(parse_iso(WINDOW_START))
    rng = np.random.default_rng(11)
    P = synth.circular("900000001", "LARK-1", 550.0, 53.0, 10.0, 0.0, jd0, fr0 - 0.4)
    Q = synth.circular("900000002", "LARK-2", 700.0, 97.8, 200.0, 90.0, jd0, fr0 - 0.2)
    G = synth.circular("900000003", "LARK-GEO", 35786.0, 0.05, 75.0, 30.0, jd0, fr0 - 0.5,
                       bstar=0.0)
    sec = []

    def eng(prim, t_s, kind, miss, tag, back=0.3):
        sec.append(synth.engineer(prim, jd0, fr0 + t_s / 86400.0, tag, f"SYN-{tag}", kind,
                                  miss_km=miss, epoch_back_days=back, rng=rng))

    eng(P, 4 * 3600.0, "head-on", 0.4, "T0001")          # ~15 km/s head-on
    eng(P, 9 * 3600.0, "crossing", 1.2, "T0002")
    eng(P, 14 * 3600.0, "slow", 0.3, "T0003")            # co-orbital, m/s, recurring
    eng(P, 19 * 3600.0, "gto", 0.8, "T0004")             # eccentric object crossing LEO
    eng(Q, 3.0, "head-on", 0.6, "T0005", back=0.0)                 # TCA 3 s after the window start
    eng(Q, WINDOW_S - 4.0, "crossing", 0.9, "T0006", back=0.0)     # TCA 4 s before the window end
    eng(Q, 11 * 3600.0, "crossing", 2.0, "T0007")
    eng(G, 10 * 3600.0, "crossing", 1.5, "T0008")        # GEO neighbour
    decaying = synth.circular("T0009", "SYN-DECAY", 140.0, 51.0, 10.0, 0.0, jd0, fr0 - 0.1,
                              bstar=0.05)
    background = synth.background_catalog(40, jd0, fr0, seed=5, id_of=lambda k: f"U{k:04d}")
    return dict(jd0=jd0, fr0=fr0, primaries=[P, Q, G], secondaries=sec + [decaying] + background)
