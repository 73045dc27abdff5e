"""The chosen burn's trajectory as a CCSDS OEM: the form an operator shares with a screening
service before a burn, and the form the re-screen reads (so both see the same numbers)."""

from __future__ import annotations

import math

import numpy as np

from .. import CAUTION, MANEUVER_CAUTION
from ..elements.oem import Oem, OemCovariance, SegmentOut, format_oem, read_oem
from .tracks import BurnedTrack

OEM_STEP_S = 60.0          # Lagrange degree 7 at 60 s: interpolation error well under 1 mm in LEO
OEM_DEGREE = 7
MIN_NODES = OEM_DEGREE + 1


def _times(t0_s: float, t1_s: float) -> np.ndarray:
    """Nodes t0_s, then whole multiples of OEM_STEP_S, then t1_s (none closer than 1 s to an
    end); evenly spaced instead when that gives fewer than MIN_NODES."""
    inner = np.arange(math.floor(t0_s / OEM_STEP_S) + 1, math.ceil(t1_s / OEM_STEP_S)) * OEM_STEP_S
    inner = inner[(inner > t0_s + 1.0) & (inner < t1_s - 1.0)]
    if len(inner) + 2 < MIN_NODES:
        return np.linspace(t0_s, t1_s, MIN_NODES)
    return np.concatenate([[t0_s], inner, [t1_s]])


def manoeuvred_oem_text(track: BurnedTrack, burn_s: float, window_s: float, object_name: str,
                        object_id: str, burn_comment: str, cov_rtn_km2: np.ndarray | None,
                        period_s: float, creation: str | None = None) -> str:
    """Two segments meeting at the burn (pre-burn and post-burn velocity are both kept; the
    reader never interpolates across segments).  A burn at the window start gives one."""
    jd0, day_s = track.jd0, track.fr0 * 86400.0
    segs = []
    if burn_s > 1.0:
        t = _times(0.0, burn_s)
        y = track.states(t[:-1])
        y = np.concatenate([y, track.base.states([burn_s])])      # pre-burn velocity
        segs.append(SegmentOut(jd0, day_s + t, y[:, :3], y[:, 3:], ("before the burn",)))
    t = _times(max(burn_s, 0.0), window_s)
    y = track.states(t)
    cov = ()
    if cov_rtn_km2 is not None:
        # position block: the covariance the trade used at TCA (RTN); velocity block not
        # estimated: each axis sigma_pos x mean motion, uncorrelated (a circular-orbit scale)
        n = 2.0 * math.pi / period_s
        c6 = np.zeros((6, 6))
        c6[:3, :3] = cov_rtn_km2
        c6[3:, 3:] = np.diag(np.diag(cov_rtn_km2)) * n * n
        cov = (OemCovariance(jd0, (day_s + burn_s) / 86400.0, "RTN", c6),)
    segs.append(SegmentOut(jd0, day_s + t, y[:, :3], y[:, 3:],
                           (burn_comment, "trajectory: the screened one plus the burn's effect "
                            "(burned minus unburned, numerically integrated)"), cov))
    return format_oem(object_name, object_id, segs, creation=creation, degree=OEM_DEGREE,
                      comments=(CAUTION, MANEUVER_CAUTION))


def read_back(text: str, path: str = "<manoeuvred OEM>") -> Oem:
    return read_oem(path, text)
