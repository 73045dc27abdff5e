"""Pc sensitivity of one encounter: Pc against the hard-body radius, and against a scale factor
on the combined covariance (the same shape, every variance times the factor).

Both curves are in the encounter plane with the encounter's own miss and principal sigmas.
A factor f on the covariance scales each sigma by sqrt(f).  The largest Pc over the factor (any
f, not only the plotted span) comes from risk.pc.pc_max_scaled.  When that maximum lies at a
factor below 1, the event is in the dilution region: its Pc is low because its uncertainty is
large, and better orbit determination could raise it (shown with the curves).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from .pc import pc_max_scaled, pc_quadrature_many

HBR_SPAN_M = (1.0, 30.0)
SCALE_SPAN = (0.1, 10.0)
POINTS = 41


@dataclasses.dataclass
class Sensitivity:
    hbr_m: list[float]
    pc_by_hbr: list[float]
    scale: list[float]                 # factor on the combined covariance
    pc_by_scale: list[float]
    hbr_now_m: float
    pc_now: float
    pc_max: float                      # over every covariance factor
    scale_at_max: float                # the factor where it is reached
    dilution: bool                     # the maximum lies at a factor below 1

    def explain(self) -> str:
        where = (f"at {self.scale_at_max:.3g}x the covariance"
                 + ("" if SCALE_SPAN[0] <= self.scale_at_max <= SCALE_SPAN[1] else
                    f" (outside the plotted {SCALE_SPAN[0]:g}-{SCALE_SPAN[1]:g}x)"))
        if self.dilution:
            return (f"dilution region: 2-D Pc {self.pc_now:.1e} lies past the maximum {self.pc_max:.1e} "
                    f"{where}; a smaller covariance (better orbit determination) would raise Pc, "
                    f"so a low Pc here is not reassuring")
        return (f"not diluted: the maximum {self.pc_max:.1e} is {where}; a smaller covariance "
                f"lowers the 2-D Pc from {self.pc_now:.1e}")

    def to_json(self) -> dict:
        return {**dataclasses.asdict(self), "explain": self.explain()}


def geometric(lo: float, hi: float, n: int = POINTS) -> np.ndarray:
    return np.exp(np.linspace(math.log(lo), math.log(hi), n))


def sensitivity(xm_m: float, ym_m: float, sx_m: float, sy_m: float, hbr_m: float,
                hbr_span_m=HBR_SPAN_M, scale_span=SCALE_SPAN, n: int = POINTS) -> Sensitivity:
    """Both curves for one encounter-plane geometry (miss xm, ym along the principal axes of
    the combined covariance, its sigmas sx, sy; all in metres)."""
    radii = geometric(*hbr_span_m, n)
    scales = geometric(*scale_span, n)
    by_r = pc_quadrature_many(xm_m, ym_m, sx_m, sy_m, radii)
    root = np.sqrt(scales)
    by_s = pc_quadrature_many(xm_m, ym_m, sx_m * root, sy_m * root, hbr_m)
    now = float(pc_quadrature_many([xm_m], ym_m, sx_m, sy_m, hbr_m)[0])
    top, k = pc_max_scaled(xm_m, ym_m, sx_m, sy_m, hbr_m)      # k scales the sigmas
    return Sensitivity([float(x) for x in radii], [float(x) for x in by_r],
                       [float(x) for x in scales], [float(x) for x in by_s], float(hbr_m), now,
                       float(top), float(k * k), bool(k < 1.0))


def of_encounter(e: dict) -> Sensitivity | None:
    """The curves of a stored or exported encounter (its plane_* figures), or None where it has
    no encounter-plane geometry."""
    try:
        return sensitivity(e["plane_xm_m"], e["plane_ym_m"], e["plane_sx_m"], e["plane_sy_m"],
                           e["hbr_m"])
    except (KeyError, TypeError):
        return None
