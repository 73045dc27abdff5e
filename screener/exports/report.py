"""A one-page report of a run (plain text or HTML), suitable for e-mail."""

from __future__ import annotations

import html

from .. import CAUTION
from ..risk.attention import LEVELS

TOP_N = 15


def _rows(encs):
    for n, e in enumerate(encs[:TOP_N], start=1):
        pc = e.get("pc") or 0.0
        yield (str(n), e.get("attention", ""), f"{pc:.2e}", e["primary"], e["secondary"], e["tca"][:23],
               f"{e['miss_km']:.3f}", f"{e['relative_speed_km_s']:.2f}",
               ("assumed " if e.get("assumed_covariance") else "") + ("dilution" if e.get("dilution_region") else ""),
               e.get("trend", ""))


HEAD = ("#", "level", "Pc", "primary", "secondary", "TCA (UTC)", "miss km", "v km/s", "flags", "trend")


def render_report(run: dict, encs: list[dict], diff_text: str = "", fmt: str = "text") -> str:
    counts = {lv: sum(1 for e in encs if e.get("attention") == lv) for lv in LEVELS}
    title = f"screener run {run['id']} - {run['name']}"
    facts = [f"window {run['window_start_utc']} + {run['window_days']:g} d, {run['volume']}, {run['mode']}",
             f"{run['n_primaries']} primaries, {run['n_secondaries']} secondaries, {len(encs)} encounters",
             "attention: " + ", ".join(f"{lv} {counts[lv]}" for lv in LEVELS)]
    if diff_text:
        facts += diff_text.splitlines()
    if fmt == "html":
        e = lambda s: html.escape(s, quote=False)  # noqa: E731
        rows = "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in r) + "</tr>" for r in _rows(encs))
        return (f"<!doctype html><html><head><meta charset='utf-8'><title>{e(title)}</title></head><body>"
                f"<p><strong>{e(CAUTION)}</strong></p><h1>{e(title)}</h1>"
                + "".join(f"<p>{e(f)}</p>" for f in facts)
                + "<table border='1' cellpadding='3'><tr>" + "".join(f"<th>{e(h)}</th>" for h in HEAD)
                + f"</tr>{rows}</table><p>{e(CAUTION)}</p></body></html>\n")
    widths = [3, 7, 9, 12, 12, 23, 8, 6, 16, 10]
    lines = [title, CAUTION, ""] + facts + ["", " ".join(h.ljust(w) for h, w in zip(HEAD, widths))]
    lines += [" ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in _rows(encs)]
    if len(encs) > TOP_N:
        lines.append(f"... {len(encs) - TOP_N} more encounters in the JSON/CSV exports")
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"
