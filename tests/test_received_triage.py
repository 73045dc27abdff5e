"""Received CDMs in triage: the attention level set by the best covariance source, the list's
source marks and received-only rows, the event view's messages, comparison and plot, writing a
message back out, and the demo's invented messages flowing through a nightly run.

The best-source rule is the issue's statement of common practice: a covariance from the
sender's orbit determination (what a CDM carries) outranks an assumed one (a regime model).
The demo's messages are invented (demo_elements/make_demo.py); these tests check how they flow,
never a figure of the physics."""

from __future__ import annotations

import datetime as dt
import json
import os
import sqlite3

from screener.risk import read_cdm
from screener.risk.attention import Thresholds, best_source
from screener.store import Store
from screener.store.received import message_text
from screener.tui import make_app
from screener.tui.event_view import EventScreen
from screener.tui.received_view import ReceivedScreen

from .nightly import DEMO, screener

NOW = dt.datetime(2026, 12, 2, tzinfo=dt.timezone.utc).timestamp()
T = Thresholds()          # act 1e-4, watch 1e-5 (common practice)


def _msg(pc, pc_max=None, dilution=False):
    return {"pc": pc, "pc_max": pc if pc_max is None else pc_max, "dilution": dilution,
            "message_id": "M-1"}


def test_a_received_cdm_outranks_an_assumed_covariance_and_says_so():
    got = best_source("routine", "Pc 1e-7", True, _msg(2e-4), T)
    assert (got.level, got.source) == ("act", "received")
    assert "M-1" in got.said and "outranks our assumed covariance" in got.said
    # the other way too: an assumed act, a measured received routine -> routine from the CDM
    assert best_source("act", "", True, _msg(1e-8), T).level == "routine"


def test_two_measured_sources_keep_the_more_urgent():
    assert best_source("watch", "", False, _msg(1e-8), T).source == "ours"
    assert best_source("watch", "", False, _msg(1e-8), T).level == "watch"
    got = best_source("routine", "", False, _msg(3e-4), T)
    assert (got.level, got.source) == ("act", "received")
    # dilution: a low Pc whose maximum reaches watch is raised to watch (the same rule as ours)
    assert best_source("routine", "", True, _msg(1e-9, 2e-5, True), T).level == "watch"


def test_without_received_messages_our_level_stands():
    got = best_source("watch", "Pc 2e-5 >= 1e-5", True, None, T)
    assert (got.level, got.reason, got.source) == ("watch", "Pc 2e-5 >= 1e-5", "ours")


def _export(store, tmp_path):
    out = tmp_path / "exp"
    p = screener("export", "--store", store, "--out", str(out), "--cdm", "none", "--report", "text")
    assert p.returncode == 0, p.stderr
    return json.loads((out / "encounters.json").read_text()), (out / "report.txt").read_text()


def test_the_demo_run_takes_in_its_received_folder(store, tmp_path):
    """The demo's received/ folder: 8 good messages stored once each, the malformed copy
    refused (nothing of it stored); in the export, the act event's level is set by its
    received CDM (our covariance there is assumed), the 1.6 km-off message is flagged X as
    disagreeing, and the pair our catalog does not hold is a received-only act event."""
    c = sqlite3.connect(store)
    ids = sorted(r[0] for r in c.execute("SELECT message_id FROM received"))
    c.close()
    files = sorted(f[:-4] for f in os.listdir(os.path.join(DEMO, "received")))
    assert len(ids) == 8 and ids == [f for f in files if f != "KSC-truncated-copy"]
    doc, report = _export(store, tmp_path)
    by_sec = {}
    for e in doc["encounters"]:
        by_sec.setdefault(e["secondary_name"], e)        # ranked: the worst pass first
    assert by_sec["DEB-007"]["attention_source"] == "received"
    assert by_sec["DEB-007"]["attention"] == "act" and "R" in by_sec["DEB-007"]["flags"]
    assert "X" in by_sec["DEB-004"]["flags"]
    assert by_sec["DEB-004"]["received_comparison"]["disagrees"]
    assert "X" not in by_sec["DEB-001"]["flags"] and len(by_sec["DEB-001"]["received"]) == 3
    assert [m["creation_date"] for m in by_sec["DEB-001"]["received"]] == \
        sorted(m["creation_date"] for m in by_sec["DEB-001"]["received"])
    assert all(e["source"] == "ours" for e in doc["encounters"] if not e.get("received"))
    only = doc["received_only"]
    assert [(o["object2_name"], o["attention"]) for o in only] == [("DEB-901", "act")]
    assert "Received CDMs:" in report and "RECEIVED ONLY" in report and "DISAGREES" in report


def test_a_message_is_written_back_out_as_it_arrived(store, tmp_path):
    """The stored text is the file's; a message stored before texts were kept is read from
    its file while the file's SHA-256 still matches, and refused (StoreError) once it changed."""
    name = "KSC-1-339000-02"
    original = open(os.path.join(DEMO, "received", name + ".kvn")).read()
    with Store(store) as s:
        text, _where = message_text(s, name)
        assert text == original
        copy = tmp_path / "copy.kvn"
        copy.write_text(original)
        s.conn.execute("UPDATE received SET text = NULL, path = ? WHERE message_id = ?", (str(copy), name))
        s.conn.commit()
        assert message_text(s, name)[0] == original
        copy.write_text(original + "COMMENT changed\n")
        try:
            message_text(s, name)
        except Exception as exc:        # noqa: BLE001 - the type is checked next
            assert type(exc).__name__ == "StoreError" and "SHA-256" in str(exc)
        else:
            raise AssertionError("a changed file was written out as the message")


def _rows(app):
    return [app.screen.query_one("#encounters").model.item(k)
            for k in range(len(app.screen.query_one("#encounters").model))]


async def test_the_list_marks_sources_and_opens_a_received_only_event(store, tmp_path):
    """80x24: the received-only event is a row with n = 0 and flag R, ranked by its level;
    Enter opens its own view (the latest message's figures, the messages, the plot); w writes
    the latest message out, which reads back as the same message."""
    app = make_app(store, now=lambda: NOW)
    app.outputs_folder = lambda _store: str(tmp_path / "out")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        items = _rows(app)
        k = next(i for i, it in enumerate(items) if it.row.source == "received")
        row = items[k].row
        assert row.secondary_name == "DEB-901" and row.attention == "act" and "R" in row.flags
        lst = app.screen.query_one("#encounters")
        line = "".join(seg.text for seg in lst.render_line(k))
        assert " 0 R" in line and "DEB-901" in line
        lst._move_to(k)
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, ReceivedScreen)
        facts = str(app.screen.query_one("#event-facts").render())
        assert "RECEIVED ONLY" in facts and "received CDMs: 2" in facts
        assert "log10 Pc ours vs hours to TCA" in str(app.screen.query_one("#event-plot").render())
        await pilot.press("w")
        path = app.last_export
        assert path.endswith("KSC-2-339901-02.kvn")
        assert open(path).read() == open(os.path.join(DEMO, "received", "KSC-2-339901-02.kvn")).read()
        assert read_cdm(path).header["MESSAGE_ID"] == "KSC-2-339901-02"
        assert "Advisory only" in str(app.screen.query_one(".caution").render())


async def test_the_event_view_lists_compares_and_plots_received_messages(store, tmp_path):
    """The disagreeing demo event: its messages, the comparison naming the miss, plot 4."""
    app = make_app(store, now=lambda: NOW)
    app.outputs_folder = lambda _store: str(tmp_path / "out")
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        items = _rows(app)
        k = next(i for i, it in enumerate(items) if it.row.secondary_name == "DEB-004")
        assert "X" in items[k].row.flags and items[k].row.source == "both"
        app.screen.query_one("#encounters")._move_to(k)
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, EventScreen)
        facts = str(app.screen.query_one("#event-facts").render())
        assert "received CDMs: 1" in facts and "DISAGREES with our screening: miss +" in facts
        await pilot.press("4")
        plot = str(app.screen.query_one("#event-plot").render())
        assert "received CDMs: 1" in plot and "no trend yet" in plot
        await pilot.press("w")
        assert app.last_export.endswith("KSC-3-339003-01.kvn")
