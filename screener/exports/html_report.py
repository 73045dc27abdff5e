"""The HTML report of a run: one self-contained file (inline CSS and SVG, no external assets),
readable offline and printable, with the caution at the top and the bottom.

Sections: the run (window, input files with the count and ages of the element sets screened
from each, what changed since the last run), the ranked series, received CDMs, and for each series at watch or above (its
worst pass) the geometry, Pc by method, covariance sources, Pc sensitivity and one SVG of its
plots.  Every figure of an event is written as <span class="fig" data-enc=ID data-key=KEY
data-value=JSON>text</span>: the value is the same as encounters.json's (KEY may be dotted,
e.g. pc_sensitivity.pc_max), and the text is FORMATS[KEY] of it.
"""

from __future__ import annotations

import datetime as dt
import html
import json

from .. import CAUTION
from ..display import fmt_pc, fmt_speed, plural
from ..risk.attention import LEVELS
from ..risk.series import CUMULATIVE_RULE, cumulative_by_primary
from .report import HEAD, TOP_N, _fleet, _rows, run_facts

PLOTTED_MAX = 30      # series at watch or above with plots (the rest are listed)


def _m(v):
    return f"{v * 1000:.0f} m"


def _km(v):
    return f"{v:.3f} km"


FORMATS = {
    "tca": lambda v: v[:23] + "Z",
    "miss_km": _m, "radial_km": _m, "in_track_km": _m, "cross_track_km": _m,
    "relative_speed_km_s": fmt_speed,
    "crossing_angle_deg": lambda v: f"{v:.2f} deg",
    "primary_alt_km": _km, "secondary_alt_km": _km,
    "primary_elset_age_days": lambda v: f"{v:.2f} d", "secondary_elset_age_days": lambda v: f"{v:.2f} d",
    "pc": fmt_pc, "pc_quadrature": fmt_pc, "pc_max": fmt_pc, "pc_max_any_shape": fmt_pc,
    "pc_mc_lo99": fmt_pc, "pc_mc_hi99": fmt_pc,
    "hbr_m": lambda v: f"{v:g} m",
    "sigma_major_m": lambda v: f"{v:.1f} m", "sigma_minor_m": lambda v: f"{v:.1f} m",
    "pc_sensitivity.pc_now": fmt_pc, "pc_sensitivity.pc_max": fmt_pc,
    "pc_sensitivity.scale_at_max": lambda v: f"{v:.3g}x",
}

CSS = """
body{font-family:sans-serif;max-width:62em;margin:1em auto;padding:0 1em;color:#111}
.caution{border:2px solid #b03a2e;padding:.5em;font-weight:bold;background:#fdf2f0}
table{border-collapse:collapse;font-size:90%}td,th{border:1px solid #999;padding:2px 5px;text-align:left}
th{background:#eee}.act{color:#b03a2e;font-weight:bold}.watch{color:#9a6b00;font-weight:bold}
section.event{border-top:1px solid #666;margin-top:1.5em}svg{max-width:100%;height:auto}
dl{display:grid;grid-template-columns:max-content auto;gap:0 1em}dt{font-weight:bold}dd{margin:0}
@media print{section.event{page-break-inside:avoid}body{max-width:none}}
"""


def _e(s) -> str:
    """Text content (quotes stay as they are: the caution reads the same in the source)."""
    return html.escape(str(s), quote=False)


def value_at(e: dict, key: str):
    v = e
    for part in key.split("."):
        v = v[part]
    return v


def fig(e: dict, key: str) -> str:
    v = value_at(e, key)
    return (f'<span class="fig" data-enc="{e["encounter_id"]}" data-key="{key}" '
            f'data-value="{html.escape(json.dumps(v), quote=True)}">{_e(FORMATS[key](v))}</span>')


def _inputs(run: dict) -> str:
    rows = []
    for f in run.get("inputs", []):
        if f.get("elsets"):
            age = f"{f['elsets']:,}, age {f['age_min_days']:.1f} to {f['age_max_days']:.1f} d"
        else:
            # 0: an ephemeris, or every set superseded by a newer one; "-": a run stored before
            age = "0 (an ephemeris, or all superseded)" if "elsets" in f else "-"
        rows.append(f"<tr><td>{_e(f['path'])}</td><td>{_e(f['role'])}</td><td>{f['bytes']:,}</td>"
                    f"<td><code>{_e(f['sha256'][:16])}</code></td><td>{_e(age)}</td></tr>")
    return ("<table><tr><th>input</th><th>role</th><th>bytes</th><th>SHA-256 (start)</th>"
            "<th>element sets screened (age at the window start; negative: epoch after it)</th></tr>"
            + "".join(rows) + "</table>")


def _event(g, k: int, history, received, svg: str) -> str:
    e = g.worst
    lvl = LEVELS[g.level_rank]
    title = (f"{lvl.upper()} {e.get('primary_name') or e['primary']} vs "
             f"{e.get('secondary_name') or e['secondary']} ({e['secondary']})")
    geometry = [("TCA", "tca"), ("miss distance", "miss_km"), ("radial", "radial_km"),
                ("in-track", "in_track_km"), ("cross-track", "cross_track_km"),
                ("relative speed", "relative_speed_km_s"), ("crossing angle", "crossing_angle_deg"),
                ("primary altitude", "primary_alt_km"), ("secondary altitude", "secondary_alt_km"),
                ("primary element set age", "primary_elset_age_days"),
                ("secondary element set age", "secondary_elset_age_days")]
    pcs = [("Pc", "pc"), ("Pc, 2-D quadrature", "pc_quadrature"),
           ("max Pc over the covariance size", "pc_max"), ("max Pc over any shape", "pc_max_any_shape"),
           ("hard-body radius", "hbr_m"), ("combined sigma, major", "sigma_major_m"),
           ("combined sigma, minor", "sigma_minor_m")]
    if e.get("pc_mc_lo99") is not None:
        pcs += [("Monte Carlo 99 % low", "pc_mc_lo99"), ("Monte Carlo 99 % high", "pc_mc_hi99")]
    sens = [("2-D Pc at this radius", "pc_sensitivity.pc_now"),
            ("max Pc over the covariance factor", "pc_sensitivity.pc_max"),
            ("at factor", "pc_sensitivity.scale_at_max")] if e.get("pc_sensitivity") else []

    def dl(items):
        return "<dl>" + "".join(f"<dt>{_e(a)}</dt><dd>{fig(e, b)}</dd>" for a, b in items
                                if value_at_or_none(e, b) is not None) + "</dl>"

    rec = ""
    if received:
        rec = ("<h3>Received CDMs</h3><table><tr><th>message</th><th>originator</th><th>created</th>"
               "<th>miss</th><th>Pc theirs</th><th>Pc ours</th></tr>"
               + "".join(f"<tr><td>{_e(m['message_id'])}</td><td>{_e(m['originator'])}</td>"
                         f"<td>{_e(m['creation_date'])}</td><td>{m['miss_km'] * 1000:.0f} m</td>"
                         f"<td>{_e(fmt_pc(m['pc_sender']) if m['pc_sender'] is not None else '-')}</td>"
                         f"<td>{_e(fmt_pc(m['pc']))}</td></tr>" for m in received) + "</table>")
    hist = ", ".join(f"run {h['run_id']}: Pc {fmt_pc(h['pc'])}, miss {h['miss_km'] * 1000:.0f} m"
                     for h in history)
    return (f'<section class="event" id="event-{k}"><h2 class="{lvl}">{k}. {_e(title)}</h2>'
            f"<p>{_e(e.get('attention_reason', ''))}; {_e(e.get('attention_set_by', ''))}. "
            f"Series: {plural(g.count, 'pass', 'passes')} in the window; flags {_e(e.get('flags', ''))}.</p>"
            f"<h3>Geometry</h3>{dl(geometry)}"
            f"<h3>Pc by method</h3><p>{_e(e.get('pc_method', ''))}</p>{dl(pcs)}"
            f"<h3>Covariance sources</h3><ul><li>primary: {_e(e.get('primary_covariance', '-'))}</li>"
            f"<li>secondary: {_e(e.get('secondary_covariance', '-'))}</li>"
            f"<li>{_e(e.get('covariance_note', ''))}</li></ul>"
            + (f"<h3>Pc sensitivity</h3>{dl(sens)}<p>{_e(e['pc_sensitivity']['explain'])}</p>" if sens else "")
            + f"<h3>History</h3><p>{_e(hist or 'first seen in this run')}</p>{rec}"
            f'<figure>{svg}<figcaption>Range around TCA; encounter plane (1 and 3 sigma of the '
            f"combined covariance, hard-body circle at the miss); history over runs"
            + (" and received CDMs" if received else "") + "; Pc sensitivity.</figcaption></figure>"
            "</section>")


def value_at_or_none(e: dict, key: str):
    try:
        return value_at(e, key)
    except (KeyError, TypeError):
        return None


def render_html(run: dict, series, n_encounters: int, plotted: list,
                diff_text: str = "", received_text: str = "", now: dt.datetime | None = None) -> str:
    """plotted: [(series, history rows, received messages, svg)] for the series with plots."""
    now = now or dt.datetime.now(dt.timezone.utc)
    title = f"screener run {run['id']} - {run['name']}"
    facts = run_facts(run, series, n_encounters)
    ranked = [g for g in series if g.level_rank <= 1] or series[:TOP_N]
    ranked = ranked + [g for g in series[:TOP_N] if g not in ranked]
    rows = "".join(f'<tr class="{r[1]}">' + "".join(f"<td>{_e(c)}</td>" for c in r) + "</tr>"
                   for r in _rows(ranked, now, limit=len(ranked)))
    n_watch = sum(1 for g in series if g.level_rank <= 1)
    left = (f"<p>{n_watch - len(plotted)} more series at watch or above are in the table and the "
            f"JSON/CSV exports, without plots.</p>" if n_watch > len(plotted) else "")
    cum = cumulative_by_primary(series)
    if not diff_text:        # an export of a stored run: the changes each encounter was stored with
        ch = [m.get("change", "") for g in series for m in g.members]
        diff_text = (f"encounters against the previous run of {run['name']}: "
                     + ", ".join(f"{k} {ch.count(k)}" for k in ("new", "escalated", "de-escalated", "same")))
    return ("<!doctype html>\n<html lang='en'><head><meta charset='utf-8'>"
            f"<title>{_e(title)}</title><style>{CSS}</style></head><body>"
            f"<p class='caution'>{_e(CAUTION)}</p><h1>{_e(title)}</h1>"
            "<section id='run'><h2>The run</h2>" + "".join(f"<p>{_e(f)}</p>" for f in facts)
            + _inputs(run)
            + ("<h3>Since the last run</h3><ul>" + "".join(f"<li>{_e(x.strip())}</li>"
                                                           for x in diff_text.splitlines() if x.strip())
               + "</ul>" if diff_text else "")
            + "</section><section id='ranked'><h2>Ranked series</h2><table><tr>"
            + "".join(f"<th>{_e(h)}</th>" for h in HEAD) + f"</tr>{rows}</table></section>"
            + ("<section id='received'><h2>Received CDMs</h2><pre>" + _e(received_text)
               + "</pre></section>" if received_text else "")
            + "<section id='events'><h2>Events at watch or above</h2>"
            + ("".join(_event(g, k, h, r, svg) for k, (g, h, r, svg) in enumerate(plotted, start=1))
               or "<p>None in this run.</p>") + left + "</section>"
            + f"<section id='fleet'><h2>Per spacecraft</h2><p>{_e(CUMULATIVE_RULE)}</p><ul>"
            + "".join(f"<li>{_e(f)}</li>" for f in _fleet(series)) + "</ul>"
            + f"<p>{len(cum)} spacecraft with series.</p></section>"
            + f"<p class='caution'>{_e(CAUTION)}</p></body></html>\n")
