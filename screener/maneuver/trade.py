"""The manoeuvre trade for one event: for each burn time and direction, the smallest delta-v
that meets a target (a Pc below a threshold, a miss distance or a radial separation), found
by root finding, and what that burn does to the event.

Search: along one direction the figure that decides the target (log Pc, miss or radial
separation) is sampled on a geometric grid of delta-v magnitudes with the linearised burn
(burn.py); the first grid interval where the target becomes met (the monotone part nearest
zero) brackets a root that brentq finds; then secant steps on the full non-linear burn move
it until the full figure is within FULL_TOL of the target, on the meeting side.  A direction
whose grid never meets the target up to the limit is reported at the limit, as not meeting it.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Callable

import numpy as np
from scipy.optimize import brentq

from ..propagation.cowell import DEFAULT_MODEL, ForceModel
from ..risk.attach import SLOW_PASS_KM_S
from ..timeutil import iso_z, jd_to_datetime
from .burn import LinearTrack, apply_burn, linearise
from .closest import Approach, Covariances, closest_approach, pc_of, pc_only
from .tracks import Track

DIRECTIONS = {"+T": (0.0, 1.0, 0.0), "-T": (0.0, -1.0, 0.0), "+R": (1.0, 0.0, 0.0),
              "-R": (-1.0, 0.0, 0.0), "+N": (0.0, 0.0, 1.0), "-N": (0.0, 0.0, -1.0)}
DIRECTION_NAMES = {"+T": "in-track +", "-T": "in-track -", "+R": "radial +", "-R": "radial -",
                   "+N": "cross-track +", "-N": "cross-track -"}
DEFAULT_DIRECTIONS = ("+T", "-T", "+R", "-R")
# Burn times: half an orbit and whole orbits more before TCA, where an in-track
# burn moves the primary most radially at TCA (2 dv / n (1 - cos n t) peaks at odd half orbits).
DEFAULT_LEADS_ORBITS = (0.5, 1.5, 2.5, 3.5, 4.5)
MAX_BURN_TIMES = 8
DEFAULT_MAX_DV_M_S = 1.0
MIN_DV_M_S = 1e-4
GRID_POINTS = 25
FULL_TOL = 1e-3            # relative (miss, radial) or in Pc; the target is met by at most this
SECANT_STEPS = 6
PC_FLOOR = 1e-300

Progress = Callable[[str, int, int], None]


@dataclasses.dataclass(frozen=True)
class Target:
    kind: str                 # "pc": Pc at or below value; "miss": miss at least value km;
    value: float              # "radial": |radial separation| at least value km

    def score(self, a: Approach, pc: float) -> float:
        """Positive when the target is met; in log10 Pc or in relative distance."""
        if self.kind == "pc":
            return math.log10(self.value) - math.log10(max(pc, PC_FLOOR))
        got = a.miss_km if self.kind == "miss" else abs(a.ric_km[0])
        return got / self.value - 1.0

    @property
    def tol(self) -> float:
        return math.log10(1.0 + FULL_TOL) if self.kind == "pc" else FULL_TOL

    def describe(self) -> str:
        if self.kind == "pc":
            return f"Pc at or below {self.value:.1e}"
        what = "miss distance" if self.kind == "miss" else "radial separation"
        return f"{what} at least {self.value * 1000:.0f} m"

    def to_json(self) -> dict:
        key = {"pc": "pc_max", "miss": "miss_km_min", "radial": "radial_km_min"}[self.kind]
        return {"kind": self.kind, key: self.value, "text": self.describe()}


@dataclasses.dataclass
class TradeEvent:
    """What the trade needs of one event; times are seconds from the window start."""
    primary_id: str
    primary_name: str
    secondary_id: str
    secondary_name: str
    jd0: float
    fr0: float
    window_s: float
    tca_s: float
    miss_km: float
    pc: float
    relative_speed_km_s: float
    primary_period_s: float
    primary: Track
    secondary: Track
    covariances: Covariances
    event_id: int | None = None
    run_id: int | None = None
    encounter_id: int | None = None
    source: str = ""

    def iso(self, t_s: float, digits: int = 3) -> str:
        return iso_z(jd_to_datetime(self.jd0, self.fr0 + t_s / 86400.0), digits)

    def summary_json(self) -> dict:
        return {"primary": self.primary_id, "primary_name": self.primary_name,
                "secondary": self.secondary_id, "secondary_name": self.secondary_name,
                "tca": self.iso(self.tca_s, 6), "miss_km": self.miss_km,
                "pc": self.pc if math.isfinite(self.pc) else None,
                "relative_speed_km_s": self.relative_speed_km_s, "event_id": self.event_id,
                "run_id": self.run_id, "encounter_id": self.encounter_id, "source": self.source,
                "hbr_m": self.covariances.hbr_m,
                "covariance_source": self.covariances.source}


@dataclasses.dataclass
class BurnOption:
    burn_s: float
    direction: str
    dv_m_s: float
    approach: Approach
    risk: dict
    meets: bool
    note: str = ""

    @property
    def dv_rtn_m_s(self) -> list[float]:
        return [c * self.dv_m_s for c in DIRECTIONS[self.direction]]

    @property
    def pc(self) -> float:
        return float(self.risk["pc"])

    def to_json(self, ev: TradeEvent) -> dict:
        a = self.approach
        return {
            "burn_time": ev.iso(self.burn_s, 3), "direction": self.direction,
            "direction_name": DIRECTION_NAMES[self.direction],
            "lead_orbits": (ev.tca_s - self.burn_s) / ev.primary_period_s,
            "dv_m_s": self.dv_m_s, "dv_rtn_m_s": self.dv_rtn_m_s,
            "new_tca": ev.iso(a.tca_s, 6), "new_miss_km": a.miss_km,
            "new_radial_km": a.ric_km[0], "new_in_track_km": a.ric_km[1],
            "new_cross_track_km": a.ric_km[2], "new_relative_speed_km_s": a.relative_speed_km_s,
            "new_pc": self.pc, "new_pc_method": self.risk.get("pc_method", ""),
            "meets_target": self.meets, "note": self.note,
        }


@dataclasses.dataclass
class Trade:
    event: TradeEvent
    target: Target
    max_dv_m_s: float
    model: ForceModel
    options: list[BurnOption]
    curves: dict                   # (burn_s, direction) -> list of (dv_m_s, pc, miss_km)
    already_met: bool
    notes: list[str]
    baseline: BurnOption | None = None   # zero burn: the event as the trade's model sees it

    @property
    def chosen(self) -> BurnOption | None:
        ok = [o for o in self.options if o.meets]
        return min(ok, key=lambda o: (o.dv_m_s, -o.burn_s)) if ok else None

    def to_json(self) -> dict:
        ch = self.chosen
        return {"event": self.event.summary_json(), "target": self.target.to_json(),
                "max_dv_m_s": self.max_dv_m_s, "force_model": self.model.describe(),
                "already_met": self.already_met, "notes": list(self.notes),
                "baseline": self.baseline.to_json(self.event) if self.baseline else None,
                "burns": [o.to_json(self.event) for o in self.options],
                "chosen": ch.to_json(self.event) if ch else None,
                "curves": [{"burn_time": self.event.iso(b, 3), "direction": d,
                            "points": [list(p) for p in pts]}
                           for (b, d), pts in self.curves.items()]}


def burn_times(ev: TradeEvent, window_h: tuple[float, float] | None = None,
               extra_s: list[float] = (), earliest_s: float = 0.0) -> tuple[list[float], list[str]]:
    """Burn times (seconds from the window start) and notes on any left out."""
    period = ev.primary_period_s
    notes = []
    if window_h is None:
        leads = [k * period for k in DEFAULT_LEADS_ORBITS]
    else:
        a_s, b_s = sorted(x * 3600.0 for x in window_h)
        leads = [(k + 0.5) * period for k in range(200) if a_s <= (k + 0.5) * period <= b_s]
        if not leads:
            leads = list(np.linspace(a_s, b_s, 5)) if b_s > a_s else [a_s]
        if len(leads) > MAX_BURN_TIMES:
            pick = np.linspace(0, len(leads) - 1, MAX_BURN_TIMES).round().astype(int)
            leads = [leads[i] for i in sorted(set(pick))]
    times = [ev.tca_s - lead for lead in leads] + list(extra_s)
    kept = []
    for t in sorted(set(round(t, 3) for t in times)):
        if t < earliest_s:
            notes.append(f"burn time {ev.iso(t, 0)} left out: before {ev.iso(earliest_s, 0)}, "
                         f"the earliest burn the trade considers (the window start)")
        elif t >= ev.tca_s - 60.0:
            notes.append(f"burn time {ev.iso(t, 0)} left out: not before TCA")
        else:
            kept.append(t)
    return kept, notes


def _horizon(ev: TradeEvent) -> tuple[float, float]:
    """The span the closest-approach search may use around TCA."""
    return 0.0, min(ev.window_s, ev.tca_s + 0.3 * ev.primary_period_s)


def approach_of(ev: TradeEvent, primary: Track) -> Approach:
    lo, hi = _horizon(ev)
    return closest_approach(primary, ev.secondary, ev.tca_s, ev.relative_speed_km_s,
                            ev.primary_period_s, lo, hi)


def evaluate(ev: TradeEvent, primary: Track) -> tuple[Approach, dict]:
    a = approach_of(ev, primary)
    return a, pc_of(a, ev.covariances)


def _full(ev, burn_s, direction, dv, target, model) -> BurnOption:
    dv_rtn = [c * dv for c in DIRECTIONS[direction]]
    track = apply_burn(ev.primary, burn_s, dv_rtn, _horizon(ev)[1], model)
    a, risk = evaluate(ev, track)
    return BurnOption(burn_s, direction, dv, a, risk, target.score(a, risk["pc"]) >= 0.0)


def _search(ev, lin, burn_s, direction, target, max_dv, model, curve) -> BurnOption:
    unit = np.asarray(DIRECTIONS[direction])

    def lin_score(dv):
        a = approach_of(ev, LinearTrack(ev.primary, lin, unit * dv))
        pc = pc_only(a, ev.covariances)        # the plot's curve keeps it for every target
        return target.score(a, pc), a, pc

    grid = np.geomspace(MIN_DV_M_S, max_dv, GRID_POINTS)
    prev = None
    root = None
    for dv in grid:
        s, a, pc = lin_score(dv)
        curve.append((float(dv), float(pc), a.miss_km))
        if s >= 0.0:
            lo = prev if prev is not None else 0.0
            goal = target.tol / 2.0      # aim half a tolerance inside the target
            root = brentq(lambda x: lin_score(x)[0] - goal, lo, dv, xtol=1e-9, rtol=1e-6) \
                if lin_score(lo)[0] < goal < s else float(dv)
            break
        prev = float(dv)
    if root is None:
        opt = _full(ev, burn_s, direction, max_dv, target, model)
        opt.note = f"no burn up to {max_dv:g} m/s in this direction meets the target"
        return opt
    # secant on the full model, started from the linear root and the linear slope there
    goal = target.tol / 2.0
    h = max(root * 1e-3, 1e-7)
    slope = (lin_score(root + h)[0] - lin_score(root)[0]) / h
    dv = root
    opt = _full(ev, burn_s, direction, dv, target, model)
    prev_dv, prev_g = None, None
    for _ in range(SECANT_STEPS):
        g = target.score(opt.approach, opt.pc) - goal
        if abs(g) <= goal:
            break
        if prev_dv is not None and g != prev_g:
            slope = (g - prev_g) / (dv - prev_dv)
        if slope <= 0.0:
            break
        prev_dv, prev_g = dv, g
        dv = min(max_dv, max(MIN_DV_M_S * 1e-2, dv - g / slope))
        opt = _full(ev, burn_s, direction, dv, target, model)
    if not opt.meets:
        opt.note = "the full model's root lies just short of the target"
    return opt


def run_trade(ev: TradeEvent, target: Target, times_s: list[float],
              directions=DEFAULT_DIRECTIONS, max_dv_m_s: float = DEFAULT_MAX_DV_M_S,
              model: ForceModel = DEFAULT_MODEL, notes: list[str] | None = None,
              progress: Progress | None = None) -> Trade:
    notes = list(notes or [])
    base_a, base_risk = evaluate(ev, ev.primary)
    baseline = BurnOption(ev.tca_s, "+T", 0.0, base_a, base_risk,
                          target.score(base_a, base_risk["pc"]) >= 0.0, "no burn")
    trade = Trade(ev, target, max_dv_m_s, model, [], {}, baseline.meets, notes, baseline)
    if ev.relative_speed_km_s < SLOW_PASS_KM_S:
        notes.append(f"slow encounter ({ev.relative_speed_km_s * 1000:.0f} m/s): the trade's Pc "
                     f"is the 2-D short-encounter value, doubtful here (the screening's Pc for "
                     f"such a pass comes from a Monte Carlo along the path); prefer a miss or "
                     f"radial target")
    if baseline.meets:
        notes.append(f"the event already meets the target ({target.describe()}): no burn needed")
        return trade
    total = len(times_s) * len(directions)
    done = 0
    for burn_s in times_s:
        lin = linearise(ev.primary, burn_s, _horizon(ev)[1], model)
        for d in directions:
            if progress:
                progress("trade", done, total)
            curve = trade.curves.setdefault((burn_s, d), [])
            trade.options.append(_search(ev, lin, burn_s, d, target, max_dv_m_s, model, curve))
            done += 1
    if progress:
        progress("trade", total, total)
    if trade.chosen is None:
        notes.append(f"no burn up to {max_dv_m_s:g} m/s at these times meets the target")
    return trade
