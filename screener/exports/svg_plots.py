"""One SVG per event for the HTML report, drawn with matplotlib (no pyplot, no display):
range around TCA, the encounter plane with the combined covariance ellipse and the hard-body
circle, the event's history over runs (with received CDMs), and Pc sensitivity.

Text is drawn as paths (svg.fonttype = "path"), so the SVG needs no font; ids inside each SVG
get a per-event prefix, so several SVGs share one HTML page without clashing.  The output is
reproducible (fixed hash salt, no date).
"""

from __future__ import annotations

import io
import math
import re

import numpy as np

PC_FLOOR = 1e-12


def _figure(n_panels: int):
    from matplotlib.figure import Figure

    cols = 2
    rows = -(-n_panels // cols)
    fig = Figure(figsize=(9.0, 3.0 * rows), layout="constrained")
    axes = fig.subplots(rows, cols, squeeze=False).ravel()
    for ax in axes[n_panels:]:
        ax.set_visible(False)
    return fig, axes


def _range(ax, e: dict) -> None:
    prof = e.get("range_profile_km") or []
    half = e.get("profile_half_s") or 60.0
    if not prof:
        ax.text(0.5, 0.5, "no range profile", ha="center", transform=ax.transAxes)
        return
    t = np.linspace(-half, half, len(prof))
    ax.plot(t / 60.0, np.asarray(prof, float), color="#1f4e79")
    ax.axvline(0.0, color="#888888", lw=0.8, ls=":")
    ax.set_xlabel("minutes from TCA")
    ax.set_ylabel("range (km)")
    ax.set_title(f"range around TCA (miss {e['miss_km'] * 1000:.0f} m)", fontsize=9)


def _plane(ax, e: dict) -> None:
    from matplotlib.patches import Circle, Ellipse

    xm, ym = e["plane_xm_m"], e["plane_ym_m"]
    sx, sy, r = e["plane_sx_m"], e["plane_sy_m"], e["hbr_m"]
    for k, alpha in ((1, 0.35), (3, 0.15)):
        ax.add_patch(Ellipse((0, 0), 2 * k * sx, 2 * k * sy, fill=True, alpha=alpha,
                             color="#4a7ebb", lw=0, label=f"{k} sigma combined"))
    ax.add_patch(Circle((xm, ym), max(r, 1e-3), color="#c0392b", fill=False, lw=1.2,
                        label=f"hard-body radius {r:g} m"))
    ax.plot([xm], [ym], marker="+", color="#c0392b")
    span = max(3.2 * max(sx, sy), 1.2 * math.hypot(xm, ym), 4 * r)
    ax.set_xlim(-span, span)
    ax.set_ylim(-span, span)
    ax.set_aspect("equal")
    ax.set_xlabel("x (m, minor axis)")
    ax.set_ylabel("y (m, major axis)")
    ax.set_title("encounter plane: secondary relative to primary", fontsize=9)
    ax.legend(fontsize=7, loc="upper right")


def _history(ax, history: list[dict], received: list[dict]) -> None:
    xs = list(range(1, len(history) + 1))
    ax.plot(xs, [math.log10(max(h["pc"], PC_FLOOR)) for h in history], marker="o",
            color="#1f4e79", label="Pc, our runs")
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlabel("run (oldest first)")
    ax.set_ylabel("log10 Pc")
    ax.set_title("history over runs" + (" and received CDMs" if received else ""), fontsize=9)
    if received:
        ax2 = ax.twiny()
        ax2.plot(range(1, len(received) + 1), [math.log10(max(m["pc"], PC_FLOOR)) for m in received],
                 marker="s", ls="--", color="#d35400", label="Pc ours from received CDMs")
        ax2.xaxis.set_major_locator(MaxNLocator(integer=True))
        ax2.set_xlabel("received CDM (creation order)", fontsize=8)
        ax2.legend(fontsize=7, loc="lower right")
    ax.legend(fontsize=7, loc="upper left")


def _sensitivity(ax, s: dict) -> None:
    ax.plot(s["scale"], [max(p, PC_FLOOR) for p in s["pc_by_scale"]], color="#1f4e79",
            label="covariance factor (bottom axis)")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.axvline(1.0, color="#1f4e79", lw=0.8, ls=":", label="this event's covariance (1x)")
    if s["scale"][0] <= s["scale_at_max"] <= s["scale"][-1]:
        ax.plot([s["scale_at_max"]], [s["pc_max"]], marker="v", color="#c0392b", ls="none",
                label=f"max Pc {s['pc_max']:.1e} at {s['scale_at_max']:.3g}x")
    else:
        ax.plot([], [], marker="v", color="#c0392b", ls="none",
                label=f"max Pc {s['pc_max']:.1e} at {s['scale_at_max']:.3g}x (off the plot)")
    ax.set_xlabel("factor on the combined covariance")
    ax.set_ylabel("Pc (2-D)")
    ax.set_title("Pc sensitivity" + (" (dilution region)" if s["dilution"] else ""), fontsize=9)
    top = ax.twiny()
    top.plot(s["hbr_m"], [max(p, PC_FLOOR) for p in s["pc_by_hbr"]], color="#27ae60", ls="--",
             label="hard-body radius (top axis, m)")
    top.axvline(s["hbr_now_m"], color="#27ae60", lw=0.8, ls=":",
                label=f"this event's radius ({s['hbr_now_m']:g} m)")
    top.set_xlabel("hard-body radius (m)", fontsize=8)
    h1, l1 = ax.get_legend_handles_labels()
    h2, l2 = top.get_legend_handles_labels()
    ax.legend(h1 + h2, l1 + l2, fontsize=7, loc="lower center")


def event_svg(e: dict, history: list[dict], received: list[dict], sens: dict | None,
              prefix: str) -> str:
    """The event's plots as one inline SVG element (no XML prolog), ids prefixed."""
    import matplotlib

    panels = ["range", "plane", "history"] + (["sensitivity"] if sens else [])
    with matplotlib.rc_context({"svg.fonttype": "path", "svg.hashsalt": prefix,
                                "font.size": 8}):
        fig, axes = _figure(len(panels))
        for ax, which in zip(axes, panels):
            if which == "range":
                _range(ax, e)
            elif which == "plane":
                _plane(ax, e)
            elif which == "history":
                _history(ax, history, received)
            else:
                _sensitivity(ax, sens)
        buf = io.StringIO()
        fig.savefig(buf, format="svg", metadata={"Date": None})
    return _inline(buf.getvalue(), prefix)


_ID = re.compile(r'id="([^"]+)"')
_REF = re.compile(r'(url\(#|href="#)([^)"]+)')


def _inline(svg: str, prefix: str) -> str:
    svg = svg[svg.index("<svg"):]
    svg = _ID.sub(lambda m: f'id="{prefix}-{m.group(1)}"', svg)
    return _REF.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", svg)
