"""The TUI driven by textual's Pilot on a real store built from the demo scenario: every
interaction (sort, filters, search, open an event, plots, export, copy, help, start and cancel
a screening, terminal too small), and the virtual list on a 50,000-encounter store."""

from __future__ import annotations

import datetime as dt
import os
import shutil
import sqlite3

import pytest

from screener.risk import read_cdm
from screener.tui import make_app
from screener.tui.encounter_list import EncounterList
from screener.tui.event_view import EventScreen
from screener.tui.help import HelpScreen
from screener.tui.too_small import TooSmallScreen
from screener.tui.triage import TriageScreen

from .nightly import write_config

NOW = dt.datetime(2026, 12, 2, tzinfo=dt.timezone.utc).timestamp()
pytestmark = pytest.mark.timeout(600)  # includes building the demo store on first use


def _db_rows(store, run_id=2):
    c = sqlite3.connect(store)
    c.row_factory = sqlite3.Row
    return c.execute("SELECT * FROM encounters WHERE run_id=?", (run_id,)).fetchall()


def _list(app) -> EncounterList:
    return app.screen.query_one(EncounterList)


def _shown(app):
    lst = _list(app)
    return [lst.model.row(k) for k in range(len(lst.model))]


def _pairs(rows):
    """Each pair's passes (one series per pair and run)."""
    out = {}
    for r in rows:
        out.setdefault((r["primary_id"], r["secondary_id"]), []).append(r)
    return out


async def test_opens_on_the_latest_run_one_row_per_series(ours_store):
    store = ours_store
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, TriageScreen)
        rows = _shown(app)
        pairs = _pairs(_db_rows(store))
        assert len(rows) == len(pairs) < len(_db_rows(store))
        for r in rows:      # each row is its series' worst pass
            assert r.pc == max(x["pc"] for x in pairs[(r.primary_id, r.secondary_id)])
        items = [_list(app).model.item(k) for k in range(len(rows))]
        keys = [(it.level_rank, -it.row.pc, it.row.miss_km) for it in items]
        assert keys == sorted(keys), "ranked by level, then Pc, then miss"
        text = str(app.screen.query_one("#run-line").render())
        assert "run 2" in text and "made" in text and "window" in text
        assert "Advisory only" in str(app.screen.query_one(".caution").render())
        await pilot.press("a")                      # every pass, not series
        assert len(_shown(app)) == len(_db_rows(store))


async def test_a_series_expands_and_collapses(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        lst = _list(app)
        head = lst.current_item
        assert head.series.count > 1, "the demo's top series is the recurring pair"
        n = len(lst.model)
        await pilot.press("right")
        assert len(lst.model) == n + head.series.count
        members = [lst.model.item(k) for k in range(1, head.series.count + 1)]
        assert all(m.member for m in members)
        assert [m.row.tca_unix_s for m in members] == sorted(m.row.tca_unix_s for m in members)
        await pilot.press("down", "left")           # collapse from a member row
        assert len(lst.model) == n and lst.current_item.series.key == head.series.key


async def test_fleet_summary_is_one_key_away(ours_store):
    """f lists each spacecraft with its worst series and cumulative risk over its series
    (1 - prod(1 - series Pc); a series' Pc is its worst pass: not the passes multiplied)."""
    from screener.tui.fleet_view import COLUMNS, FleetScreen

    store = ours_store
    pairs = _pairs(_db_rows(store))
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f")
        await pilot.pause()
        assert isinstance(app.screen, FleetScreen)
        table = app.screen.query_one("#fleet-table")
        first = table.get_row_at(0)
        pid = first[1]
        want = 1.0
        for (p, _s), rows in pairs.items():
            if p == pid:
                want *= 1.0 - max(r["pc"] for r in rows)
        from screener.display import fmt_pc

        assert first[COLUMNS.index("cum. Pc")] == fmt_pc(1.0 - want)
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, TriageScreen)
        assert {r.primary_id for r in _shown(app)} == {pid}


async def test_sort_and_reverse(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("s")
        miss = [r.miss_km for r in _shown(app)]
        assert miss == sorted(miss)
        await pilot.press("v")
        assert [r.miss_km for r in _shown(app)] == sorted(miss, reverse=True)
        await pilot.press("s")
        tca = [r.tca_unix_s for r in _shown(app)]
        assert tca == sorted(tca)


async def test_filters_level_primary_window_and_escape(ours_store):
    store = ours_store
    app = make_app(store, now=lambda: NOW)
    db = _db_rows(store)
    async with app.run_test(size=(80, 24)) as pilot:
        from screener.display import fmt_pc

        await pilot.press("l")
        rows = _shown(app)
        assert rows and {r.attention for r in rows} == {"act"}
        assert len(rows) == len(_pairs(r for r in db if r["attention"] == "act"))
        await pilot.press("escape", "p")
        rows = _shown(app)
        names = {r["primary_id"]: r["primary_name"] for r in db}
        first = sorted(names, key=lambda p: (names[p], p))[0]
        assert {r.primary_id for r in rows} == {first}
        want = 1.0
        for (p, _s), passes in _pairs(db).items():
            if p == first:
                want *= 1.0 - max(r["pc"] for r in passes)
        line = str(app.screen.query_one("#filter-line").render())
        assert f"cumulative Pc {fmt_pc(1.0 - want)}" in line and names[first] in line
        await pilot.press("escape", "t")           # TCA within the next 24 h of "now"
        rows = _shown(app)
        assert all(NOW <= r.tca_unix_s <= NOW + 86400 for r in rows)
        assert len(rows) == len(_pairs(r for r in db if NOW <= r["tca_unix_s"] <= NOW + 86400))
        await pilot.press("escape")
        assert len(_shown(app)) == len(_pairs(db))


async def test_search_over_ids_and_names(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("slash")
        await pilot.press(*"deb-004")
        await pilot.press("enter")
        rows = _shown(app)
        assert rows and all("DEB-004" in r.secondary_name for r in rows)
        assert "search 'deb-004'" in str(app.screen.query_one("#filter-line").render())
        assert _list(app).has_focus


async def test_open_event_plots_and_back(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        top = _shown(app)[0]
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, EventScreen) and app.screen.encounter_id == top.id
        facts = str(app.screen.query_one("#event-facts").render())
        for needle in ("TCA", "radial", "in-track", "cross-track", "crossing angle", "period",
                       "covariance", "2-D quadrature", "max 2-D Pc", "hard-body radius", "series"):
            assert needle in facts
        assert facts.count("Chan not used") + facts.count("(not used:") <= 1, "said once"
        plot = str(app.screen.query_one("#event-plot").render())
        assert "range (km) vs time from TCA" in plot
        await pilot.press("2")
        assert "encounter plane" in str(app.screen.query_one("#event-plot").render())
        await pilot.press("3")
        plot = str(app.screen.query_one("#event-plot").render())
        assert "history of this event" in plot and "log10 Pc vs run" in plot
        assert "Advisory only" in str(app.screen.query_one(".caution").render())
        await pilot.press("escape")
        assert isinstance(app.screen, TriageScreen)


async def test_export_cdm_and_copy_line(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        top = _shown(app)[0]
        await pilot.press("e")
        path = app.last_export
        assert os.path.exists(path) and path.startswith(app.outputs_folder(app.open_store()))
        cdm = read_cdm(path)
        assert cdm.object1_designator == top.primary_id
        assert cdm.object2_designator == top.secondary_id
        await pilot.press("y")
        assert app.clipboard.startswith(f"{top.primary_name} ({top.primary_id}) x {top.secondary_name}")
        assert "advisory only" in app.clipboard
        await pilot.press("enter", "e", "y")
        assert isinstance(app.screen, EventScreen) and os.path.exists(app.last_export)


async def test_help_is_generated_from_the_bindings(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("question_mark")
        assert isinstance(app.screen, HelpScreen)
        text = str(app.screen.query_one("#help-text").render())
        for b in TriageScreen.BINDINGS + EncounterList.BINDINGS:
            assert b.description in text
        assert "left_square_bracket" not in text and "[, " not in text
        assert "  [  " in text and "  ]  " in text
        await pilot.press("escape")
        await pilot.press("enter", "question_mark")
        text = str(app.screen.query_one("#help-text").render())
        for b in EventScreen.BINDINGS:
            assert b.description in text


async def test_start_a_screening_in_the_background(store, tmp_path):
    cfg = write_config(tmp_path / "c.toml", days=0.5, name="larkspur-nightly")
    app = make_app(store, cfg, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("n")
        await app.workers.wait_for_complete()
        await pilot.pause()
        status = str(app.screen.query_one("#status").render())
        assert "run 3 stored" in status and "series" in status and "{" not in status
        assert "run 3" in str(app.screen.query_one("#run-line").render())
        c = sqlite3.connect(store)
        assert c.execute("SELECT count(*) FROM runs").fetchone()[0] == 3


async def test_cancel_a_screening(store, tmp_path):
    cfg = write_config(tmp_path / "c.toml", days=3.0)
    app = make_app(store, cfg, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("n", "x")
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert "cancelled" in str(app.screen.query_one("#status").render())
        c = sqlite3.connect(store)
        assert c.execute("SELECT count(*) FROM runs").fetchone()[0] == 2, "nothing stored"
        assert "run 2" in str(app.screen.query_one("#run-line").render())


async def test_terminal_too_small(store):
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(70, 20)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, TooSmallScreen)
        assert "Terminal too small" in str(app.screen.query_one("#too-small").render())
        await pilot.resize_terminal(80, 24)
        await pilot.pause()
        assert isinstance(app.screen, TriageScreen)


async def test_missing_store_says_so(tmp_path):
    app = make_app(str(tmp_path / "none.sqlite"), now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert "No store at" in str(app.screen.query_one("#run-line").render())
        await pilot.press("enter", "s", "e", "y", "n")   # nothing to act on: no crash
        assert isinstance(app.screen, TriageScreen)


@pytest.fixture(scope="module")
def big_store(tmp_path_factory, demo_store_path):
    """50,000 encounters: the demo's tonight run, its rows repeated with shifted TCAs."""
    from screener.bench_tui import make_big_store

    path = tmp_path_factory.mktemp("big") / "big.sqlite"
    shutil.copy(demo_store_path, path)
    make_big_store(str(path), 50_000)
    return str(path)


async def test_fifty_thousand_rows_are_virtual(big_store):
    app = make_app(big_store, now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("a")                      # every pass, not one row per series
        lst = _list(app)
        # the 50,000 passes and the demo's received-only events (one row each)
        c = sqlite3.connect(big_store)
        n = 50_000 + c.execute("SELECT count(DISTINCT thread) FROM received WHERE event_id IS NULL").fetchone()[0]
        c.close()
        assert len(lst.model) == n
        assert lst.virtual_size.height == n and not lst.children
        await pilot.press("end")
        assert lst.cursor == n - 1
        assert lst.scroll_offset.y >= n - 1 - lst.size.height
        await pilot.press("pageup", "home")
        assert lst.cursor == 0 and lst.scroll_offset.y == 0


async def test_no_color_and_light_theme(store, monkeypatch):
    """NO_COLOR (https://no-color.org, honoured by textual) and the light theme both run."""
    monkeypatch.setenv("NO_COLOR", "1")
    app = make_app(store, now=lambda: NOW, light=True)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter", "2", "escape")
        assert app.no_color and app.theme == "textual-light"
        assert isinstance(app.screen, TriageScreen)


def _cells(text: str, width: int) -> dict:
    from screener.tui.encounter_list import layout

    return {c.title: text[x:x + c.width].strip() for c, x in layout(width)}


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
async def test_rendered_rows_carry_the_stored_values(ours_store, size):
    """What the snapshots show, asserted as values: each visible row's cells, cut at the
    column layout, equal the stored encounter's figures at display precision, with names."""
    from screener.display import fmt_pc, fmt_speed

    store = ours_store
    db = {r["id"]: r for r in _db_rows(store)}
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=size) as pilot:
        await pilot.pause()
        lst = _list(app)
        checked = 0
        for y in range(min(8, len(lst.model))):
            text = "".join(seg.text for seg in lst.render_line(y))
            row = lst.model.row(y)
            want = db[row.id]
            cells = _cells(text, lst.size.width)
            assert cells["level"] == want["attention"]
            assert cells["Pc"] == fmt_pc(want["pc"])
            assert abs(float(cells["miss m"]) - want["miss_km"] * 1e3) <= 0.5 + 1e-9
            if "rel v" in cells:
                assert cells["rel v"] == fmt_speed(want["relative_speed_km_s"])
            else:       # under 90 columns: km/s, 0.1 above 10, 0.01 above 1, else 0.001
                v = want["relative_speed_km_s"]
                assert abs(float(cells["v km/s"]) - v) <= (0.05 if v >= 10 else 0.005 if v >= 1
                                                            else 0.0005) + 1e-9
            assert cells["primary"] == want["primary_name"][:len(cells["primary"])] != ""
            assert cells["secondary"] == want["secondary_name"][:len(cells["secondary"])] != ""
            assert int(cells["n"]) == lst.model.item(y).count
            assert want["tca_utc"][8:16].replace("T", " ") in text
            checked += 1
        assert checked == 8


async def test_units_floor_and_past_are_truthful(store):
    """A 4 m/s pass reads "4 m/s" (never "0.00"); a Pc under 1e-10 reads "<1e-10" (never 0,
    -inf or 1e-92); a TCA before "now" reads "past"."""
    app = make_app(store, now=lambda: NOW + 12 * 3600)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("a")
        lst = _list(app)
        seen = set()
        for k in range(len(lst.model)):
            it = lst.model.item(k)
            lst.cursor = k
            lst.scroll_to(y=k, animate=False)
            await pilot.pause()
            cells = _cells("".join(seg.text for seg in lst.render_line(0)), lst.size.width)
            if it.row.relative_speed_km_s < 0.01:
                assert cells["rel v"].endswith(" m/s") and cells["rel v"] != "0 m/s"
                seen.add("slow")
            if it.row.pc < 1e-10:
                assert cells["Pc"] == "<1e-10" and cells["log10"] == "<-10"
                seen.add("floor")
            if it.row.tca_unix_s < NOW + 12 * 3600:
                assert cells["to TCA"] == "past"
                seen.add("past")
            if len(seen) == 3:
                break
        assert seen == {"slow", "floor", "past"}


async def test_column_titles_stand_over_their_columns_at_every_width(store):
    """At every terminal width from 80 to 200 the title row is laid out for the list's own
    width, each title starting where its column starts (the list's first row checked)."""
    from textual.geometry import Region

    from screener.tui.encounter_list import ColumnHeader, layout

    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(80, 30)) as pilot:
        for width in range(80, 201):
            await pilot.resize_terminal(width, 30)
            await pilot.pause()
            lst = _list(app)
            header = app.screen.query_one(ColumnHeader)
            # what each widget puts on screen (its padding and scrollbar included)
            title = "".join(seg.text for seg in header.render_lines(Region(0, 0, header.size.width, 1))[0])
            row = "".join(seg.text for seg in lst.render_lines(Region(0, 0, lst.outer_size.width, 1))[0])
            assert header.region.x == lst.region.x
            title, row = title[:lst.size.width], row[:lst.size.width]
            cols = layout(lst.size.width)
            titles = {c.title for c, _ in cols}
            assert titles >= {"level", "Pc", "miss m", "TCA UTC", "to TCA", "primary",
                              "secondary", "n", "flg"}, width
            assert titles & {"rel v", "v km/s"}, width
            for c, x in cols:
                cell = title[x:x + c.width]
                assert cell.strip() == c.title[:c.width], (width, c.title)
                assert row[x - 1] in (" ", ">") if x == 1 else row[x - 1] == " ", (width, c.title)


async def test_footer_shows_help_at_80_columns(store):
    from textual.widgets._footer import FooterKey

    for screen_keys in ((), ("enter",), ("f",)):
        app = make_app(store, now=lambda: NOW)
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.press(*screen_keys)
            await pilot.pause()
            keys = [k for k in app.screen.query(FooterKey) if k.key == "question_mark"]
            assert keys and keys[0].region.right <= 80, screen_keys


async def test_names_are_shown_as_text_never_as_markup(store):
    """A name holding textual markup (once a MarkupError crash on Enter) is shown literally."""
    import json as _json

    evil = "[/][link=file:///etc/passwd]X[b]"
    c = sqlite3.connect(store)
    rid = c.execute("SELECT id FROM encounters WHERE run_id=2 ORDER BY pc DESC LIMIT 1").fetchone()[0]
    data = _json.loads(c.execute("SELECT data_json FROM encounters WHERE id=?", (rid,)).fetchone()[0])
    data["secondary_name"] = evil
    c.execute("UPDATE encounters SET secondary_name=?, data_json=? WHERE id=?",
              (evil, _json.dumps(data), rid))
    c.commit()
    c.close()
    app = make_app(store, now=lambda: NOW)
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.pause()
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, EventScreen)
        shown = (str(app.screen.query_one("#event-title").render())
                 + str(app.screen.query_one("#event-facts").render()))
        assert evil in shown


async def test_a_junk_store_is_named_as_such(tmp_path):
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"not a database" * 100)
    app = make_app(str(junk), now=lambda: NOW)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        text = str(app.screen.query_one("#run-line").render())
        assert "not a usable screener store" in text and "No store at" not in text
