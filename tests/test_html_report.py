"""The HTML report: one self-contained file that a standard HTML parser reads, one SVG per
plotted event, and every figure equal to the JSON export's.

Sources: the HTML is parsed with the standard library's html.parser and each SVG with
xml.etree (reference parsers); the figures are compared with encounters.json written by the
same export.  The data is the invented demo scenario.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import pytest

from screener import CAUTION
from screener.exports import export_run
from screener.exports.html_report import FORMATS, value_at
from screener.store import Store


class Read(HTMLParser):
    """Sections, SVGs per event section, figures, ids, external references, text order."""

    def __init__(self):
        super().__init__()
        self.stack: list[str] = []
        self.events: list[int] = []         # SVG count per event section
        self.figs: list[dict] = []
        self.ids: list[str] = []
        self.external: list[str] = []
        self.texts: list[str] = []
        self._fig = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag not in ("meta", "br", "path", "use", "rect", "stop"):
            self.stack.append(tag)
        if tag == "section" and a.get("class") == "event":
            self.events.append(0)
        if tag == "svg" and self.events and "section" in self.stack[:-1]:
            self.events[-1] += 1
        if "id" in a:
            self.ids.append(a["id"])
        for k in ("src", "href", "xlink:href"):
            if k in a and not a[k].startswith("#"):
                self.external.append(a[k])
        if tag in ("link", "script", "img", "iframe", "object"):
            self.external.append(tag)
        if tag == "span" and a.get("class") == "fig":
            self._fig = {**a, "text": ""}

    def handle_startendtag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.append(a["id"])
        for k in ("src", "href", "xlink:href"):
            if k in a and not a[k].startswith("#"):
                self.external.append(a[k])

    def handle_endtag(self, tag):
        if tag == "span" and self._fig is not None:
            self.figs.append(self._fig)
            self._fig = None
        if tag in self.stack:
            while self.stack and self.stack.pop() != tag:
                pass

    def handle_data(self, data):
        if self._fig is not None:
            self._fig["text"] += data
        if data.strip() and "body" in self.stack and not {"style", "metadata", "svg"} & set(self.stack):
            self.texts.append(data.strip())


@pytest.fixture
def report(store, tmp_path):
    with Store(store) as st:
        export_run(st, 2, str(tmp_path / "out"), report="html", cdm="none")
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    doc = json.loads((tmp_path / "out" / "encounters.json").read_text(encoding="utf-8"))
    return html, doc


def test_report_parses_with_one_svg_per_plotted_event(report):
    html, doc = report
    r = Read()
    r.feed(html)
    r.close()
    plotted = [e for e in doc["encounters"] if e.get("pc_sensitivity")]
    levels = {g["series"]: g for g in doc["series"]}
    at_watch = [g for g in doc["series"]
                if any(e["series"] == g["series"] and e["attention"] in ("act", "watch")
                       for e in doc["encounters"])]
    assert len(r.events) == len(plotted) == len(at_watch) >= 3
    assert r.events == [1] * len(r.events)
    assert levels
    for svg in html.split("<svg")[1:]:
        ET.fromstring("<svg" + svg[:svg.index("</svg>") + 6])       # well-formed XML
    assert not r.external, r.external          # self-contained: no external assets
    assert len(r.ids) == len(set(r.ids)), "ids are unique across the SVGs"


def test_caution_at_the_top_and_the_bottom(report):
    html, _ = report
    r = Read()
    r.feed(html)
    assert r.texts[0] == CAUTION and r.texts[-1] == CAUTION


def test_every_figure_equals_the_json_export(report):
    html, doc = report
    r = Read()
    r.feed(html)
    by_id = {e["encounter_id"]: e for e in doc["encounters"]}
    assert len(r.figs) >= 20 * len(r.events)
    keys = set()
    for f in r.figs:
        e = by_id[int(f["data-enc"])]
        want = value_at(e, f["data-key"])
        assert json.loads(f["data-value"]) == want, f
        assert f["text"] == FORMATS[f["data-key"]](want), f
        keys.add(f["data-key"])
    for k in ("tca", "miss_km", "radial_km", "in_track_km", "cross_track_km", "pc", "pc_max",
              "relative_speed_km_s", "pc_sensitivity.pc_max", "pc_sensitivity.scale_at_max"):
        assert k in keys


def test_plotted_events_carry_their_history_and_sensitivity_in_json(report):
    html, doc = report
    for e in doc["encounters"]:
        if e.get("pc_sensitivity"):
            s = e["pc_sensitivity"]
            assert len(s["hbr_m"]) == len(s["pc_by_hbr"]) and s["explain"] in html
            assert [h["run_id"] for h in e["history"]] == sorted(h["run_id"] for h in e["history"])
