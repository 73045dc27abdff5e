"""Plots drawn with text: a braille dot canvas (2 x 4 dots per character cell), line and
ellipse primitives, and the event view's three plots.  Pure functions returning lines."""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

_BRAILLE_BASE = 0x2800
_DOT = ((0x01, 0x08), (0x02, 0x10), (0x04, 0x20), (0x40, 0x80))   # [row][col]


class Canvas:
    def __init__(self, cols: int, rows: int):
        self.cols, self.rows = max(4, cols), max(2, rows)
        self.w, self.h = 2 * self.cols, 4 * self.rows
        self.cells = [[0] * self.cols for _ in range(self.rows)]

    def dot(self, x: float, y: float) -> None:
        """x right, y up, in dot units (0..w-1, 0..h-1)."""
        xi, yi = int(round(x)), int(round(self.h - 1 - y))
        if 0 <= xi < self.w and 0 <= yi < self.h:
            self.cells[yi // 4][xi // 2] |= _DOT[yi % 4][xi % 2]

    def line(self, x0, y0, x1, y1) -> None:
        n = int(max(abs(x1 - x0), abs(y1 - y0))) + 1
        for k in range(n + 1):
            f = k / n
            self.dot(x0 + (x1 - x0) * f, y0 + (y1 - y0) * f)

    def text(self) -> list[str]:
        return ["".join(chr(_BRAILLE_BASE + c) if c else " " for c in row) for row in self.cells]


def _fmt(x: float) -> str:
    if x == 0:
        return "0"
    a = abs(x)
    if a >= 1000 or a < 0.01:
        return f"{x:.1e}"
    return f"{x:.3g}"


def line_plot(xs: Sequence[float], ys: Sequence[float], cols: int, rows: int, x_label: str,
              y_label: str, marks_x: Sequence[float] = (), hlines: Sequence[float] = ()) -> list[str]:
    """A y(x) plot with min/max labels; NaN points are skipped; vertical marks at marks_x."""
    x = np.asarray(xs, float)
    y = np.asarray(ys, float)
    ok = np.isfinite(x) & np.isfinite(y)
    lab_w = 9
    c = Canvas(cols - lab_w - 1, rows - 1)
    if not ok.any():
        return [f"{y_label}: no data"]
    x0, x1 = float(x[ok].min()), float(x[ok].max())
    y_all = np.concatenate([y[ok], np.asarray(hlines, float)])
    y0, y1 = float(y_all.min()), float(y_all.max())
    if x1 == x0:
        x0, x1 = x0 - 1, x1 + 1
    if y1 == y0:
        y0, y1 = y0 - 1, y1 + 1

    def px(v):
        return (v - x0) / (x1 - x0) * (c.w - 1)

    def py(v):
        return (v - y0) / (y1 - y0) * (c.h - 1)

    for m in marks_x:
        if x0 <= m <= x1:
            for yy in range(0, c.h, 2):
                c.dot(px(m), yy)
    for hv in hlines:
        for xx in range(0, c.w, 3):
            c.dot(xx, py(hv))
    prev = None
    for xi, yi, good in zip(x, y, ok):
        if not good:
            prev = None
            continue
        p = (px(xi), py(yi))
        if prev is not None:
            c.line(*prev, *p)
        else:
            c.dot(*p)
        prev = p
    body = c.text()
    out = []
    for k, line in enumerate(body):
        lab = _fmt(y1) if k == 0 else _fmt(y0) if k == len(body) - 1 else ""
        out.append(f"{lab:>{lab_w}} {line}")
    axis = f"{_fmt(x0)}".ljust(c.cols // 2) + f"{_fmt(x1)}".rjust(c.cols - c.cols // 2)
    out.append(" " * (lab_w + 1) + axis)
    out.insert(0, f"{y_label} vs {x_label}")
    return out


def range_plot(half_s: float, ranges_km: Sequence[float], cols: int, rows: int,
               volume_km: float | None = None) -> list[str]:
    t = np.linspace(-half_s, half_s, len(ranges_km))
    return line_plot(t, ranges_km, cols, rows, "time from TCA (s)", "range (km)", marks_x=[0.0],
                     hlines=[volume_km] if volume_km else [])


def plane_plot(xm_m: float, ym_m: float, sx_m: float, sy_m: float, hbr_m: float,
               cols: int, rows: int) -> list[str]:
    """Encounter plane in the combined covariance's principal axes: 1- and 3-sigma ellipses
    centred on the primary (origin), the secondary's miss point, the hard-body circle around
    it (drawn at least one dot wide).  Equal scale on both axes (a braille dot is square to
    within a terminal cell's usual 1:2 aspect)."""
    c = Canvas(cols, rows - 2)
    ext = max(3.2 * sx_m, 3.2 * sy_m, 1.15 * (abs(xm_m) + hbr_m), 1.15 * (abs(ym_m) + hbr_m), 1.0)
    scale = min(c.w, c.h) / (2 * ext)
    cx, cy = c.w / 2, c.h / 2
    for k in (1.0, 3.0):
        n = 240
        for a in np.linspace(0, 2 * math.pi, n):
            c.dot(cx + k * sx_m * math.cos(a) * scale, cy + k * sy_m * math.sin(a) * scale)
    for xx in range(0, c.w, 4):
        c.dot(xx, cy)
    for yy in range(0, c.h, 4):
        c.dot(cx, yy)
    mx, my = cx + xm_m * scale, cy + ym_m * scale
    rad = max(hbr_m * scale, 1.0)
    for a in np.linspace(0, 2 * math.pi, 60):
        c.dot(mx + rad * math.cos(a), my + rad * math.sin(a))
    c.dot(mx, my)
    lines = c.text()
    head = (f"encounter plane (principal axes): 1 and 3 sigma of the combined covariance, "
            f"sigma {sx_m:.0f} m x {sy_m:.0f} m")
    foot = (f"miss point ({xm_m:.0f}, {ym_m:.0f}) m with hard-body circle {hbr_m:g} m"
            f"{' (enlarged to one dot)' if hbr_m * scale < 1.0 else ''}; half-width {ext:.0f} m")
    return [head] + lines + [foot]


def history_lines(history: list[dict], cols: int, rows: int) -> list[str]:
    """The event across runs: a table (newest last) and, with two or more runs, miss vs run."""
    out = ["history of this event across runs (oldest first)",
           f"{'run':>4} {'started UTC':<20} {'TCA UTC':<24} {'miss km':>8} {'Pc':>8} level   covariance"[:cols]]
    for h in history[-(rows // 2):]:
        out.append(f"{h['run_id']:>4} {h['started_utc'][:19]:<20} {h['tca_utc'][:23]:<24} "
                   f"{h['miss_km']:8.3f} {h['pc']:8.1e} {h['attention']:<7} {h['covariance_source']}"[:cols])
    if len(history) >= 2:
        runs = list(range(1, len(history) + 1))
        left = max(8, rows - len(out))
        out += line_plot(runs, [h["miss_km"] for h in history], cols, left // 2, "run (oldest first)",
                         "miss (km)")
        out += line_plot(runs, [math.log10(h["pc"]) if h["pc"] > 0 else float("nan") for h in history],
                         cols, left - left // 2, "run (oldest first)", "log10 Pc")
    else:
        out.append("(one run so far: no trend yet)")
    return out


PC_PLOT_FLOOR = 1e-12


def trade_plot(curves: Sequence[tuple[Sequence[tuple[float, float]], bool]], cols: int, rows: int,
               target_pc: float | None = None, mark_dv: float | None = None) -> list[str]:
    """log10 Pc against delta-v (log scale, cm/s) for several burn times of one direction:
    curves are (points [(dv m/s, Pc)], selected); the selected one is drawn solid, the others
    dotted; the Pc target is a dashed level and the picked delta-v a dotted mark."""
    lab_w = 9
    c = Canvas(cols - lab_w - 1, rows - 2)
    pts = [(math.log10(dv * 100.0), math.log10(max(pc, PC_PLOT_FLOOR)))
           for curve, _sel in curves for dv, pc in curve if dv > 0]
    if not pts:
        return ["Pc against delta-v: no data"]
    xs, ys = zip(*pts)
    x0, x1 = min(xs), max(xs)
    y_extra = [math.log10(target_pc)] if target_pc else []
    y0, y1 = min(ys + tuple(y_extra)), max(ys + tuple(y_extra))
    x1 = x1 if x1 > x0 else x0 + 1
    y1 = y1 if y1 > y0 else y0 + 1

    def px(v):
        return (v - x0) / (x1 - x0) * (c.w - 1)

    def py(v):
        return (v - y0) / (y1 - y0) * (c.h - 1)

    if target_pc:
        for xx in range(0, c.w, 3):
            c.dot(xx, py(math.log10(target_pc)))
    if mark_dv and mark_dv > 0:
        for yy in range(0, c.h, 2):
            c.dot(px(math.log10(mark_dv * 100.0)), yy)
    for curve, selected in curves:
        line = [(px(math.log10(dv * 100.0)), py(math.log10(max(pc, PC_PLOT_FLOOR))))
                for dv, pc in curve if dv > 0]
        for a, b in zip(line, line[1:]):
            if selected:
                c.line(*a, *b)
            else:
                n = int(max(abs(b[0] - a[0]), abs(b[1] - a[1])) // 3) + 1
                for k in range(n + 1):
                    c.dot(a[0] + (b[0] - a[0]) * k / n, a[1] + (b[1] - a[1]) * k / n)
    body = c.text()
    out = ["log10 Pc vs delta-v, cm/s (log): picked burn time solid, others dotted"]
    for k, line in enumerate(body):
        lab = f"{y1:.1f}" if k == 0 else f"{y0:.1f}" if k == len(body) - 1 else ""
        out.append(f"{lab:>{lab_w}} {line}")
    axis = _fmt(10 ** x0).ljust(c.cols // 2) + _fmt(10 ** x1).rjust(c.cols - c.cols // 2)
    out.append(" " * (lab_w + 1) + axis)
    return out


def received_plot(msgs: list[dict], cols: int, rows: int) -> list[str]:
    """Received CDMs of one event: log10 Pc (ours, from each message's states and covariances)
    and miss against hours before TCA at each message's creation, TCA at the right."""
    from ..display import fmt_pc
    from ..timeutil import parse_iso

    if not msgs:
        return ["no received CDMs for this event"]
    lead_h = [-(parse_iso(m["tca_utc"]) - parse_iso(m["creation_utc"])).total_seconds() / 3600.0
              for m in msgs]
    pcs = [math.log10(m["pc"]) if m["pc"] > 0 else float("nan") for m in msgs]
    theirs = [m["pc_sender"] for m in msgs if m.get("pc_sender")]
    head = [f"received CDMs: {len(msgs)}, from {-lead_h[0]:.1f} h to {-lead_h[-1]:.1f} h before TCA"
            + (f"; sender's latest Pc {fmt_pc(theirs[-1])}" if theirs else "")]
    if len(msgs) == 1:
        return head + ["(one message so far: no trend yet)"]
    half = max(5, (rows - 1) // 2)
    return (head + line_plot(lead_h, pcs, cols, half, "hours to TCA (creation)", "log10 Pc ours")
            + line_plot(lead_h, [m["miss_km"] * 1e3 for m in msgs], cols, rows - 1 - half,
                        "hours to TCA (creation)", "miss (m)"))


def sensitivity_plot(s, cols: int, rows: int) -> list[str]:
    """Pc sensitivity (risk.sensitivity.Sensitivity): log10 Pc against the hard-body radius,
    and against log10 of a factor on the combined covariance; dotted marks at this event's
    radius, at factor 1 and at the factor of the largest Pc."""
    if s is None:
        return ["no encounter-plane geometry: no sensitivity curves"]

    def lg(v):
        return math.log10(max(v, PC_PLOT_FLOOR))

    half = max(5, (rows - 2) // 2)
    marks = [0.0] + ([math.log10(s.scale_at_max)] if s.scale_at_max > 0 else [])
    head = [f"2-D Pc {s.pc_now:.1e} at HBR {s.hbr_now_m:g} m (this event); max {s.pc_max:.1e} "
            f"at {s.scale_at_max:.3g}x the covariance", s.explain()]
    return (head
            + line_plot(s.hbr_m, [lg(p) for p in s.pc_by_hbr], cols, half, "hard-body radius (m)",
                        "log10 Pc", marks_x=[s.hbr_now_m])
            + line_plot([math.log10(f) for f in s.scale], [lg(p) for p in s.pc_by_scale], cols,
                        rows - 2 - half, "log10 covariance factor", "log10 Pc", marks_x=marks))
