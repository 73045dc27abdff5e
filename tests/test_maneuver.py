"""The manoeuvre trade end to end: `screener maneuver` on a stored run, its root finding, its
catalog re-screen, its OEM, and the store.

The scenario is engineered (a secondary placed 50 m from the primary at TCA, and a second
object placed where only the manoeuvred primary will pass); the checks are against physics
and against the project's own independent paths (the screening engine run on the exported
OEM through `screener screen`), never against numbers recorded from this code.
"""

from __future__ import annotations

import json
import os

import numpy as np
import pytest

from screener import synth
from screener.elements.oem import read_oem
from screener.maneuver.burn import apply_burn
from screener.maneuver.trade import approach_of
from screener.pipeline.maneuver_run import event_from_store, model_of
from screener.store import Store
from screener.store.trades import trades_for_event
from screener.timeutil import datetime_to_jd, parse_iso, parse_start
from tests.nightly import screener

START = "2026-12-03T00:00:00Z"
JD0, FR0 = datetime_to_jd(parse_start(START))
TCA_S = 86400.0 + 1234.5
LATER_S = TCA_S + 1.8 * 86400.0       # where the second object waits for the manoeuvred primary
ONE_MS_S = 1e-3
ONE_M_KM = 1e-3


def _primary():
    return synth.circular("41001", "KESTREL-1", 550.0, 53.0, 10.0, 20.0, JD0, FR0, bstar=1e-5)


def _frag():
    return synth.engineer(_primary(), JD0, FR0 + TCA_S / 86400.0, "41002", "FRAG-1", "crossing",
                          miss_km=0.05, rng=np.random.default_rng(3))


def _write_tle(path, recs):
    with open(path, "w") as fh:
        for r in recs:
            l1, l2 = r.to_tle()
            fh.write(f"{r.name}\n{l1}\n{l2}\n")


def _run(folder, extra=()):
    """A stored fleet run of KESTREL-1 against FRAG-1, a small background and `extra`."""
    os.makedirs(folder, exist_ok=True)
    _write_tle(os.path.join(folder, "fleet.tle"), [_primary()])
    bg = synth.background_catalog(30, JD0, FR0, seed=5, id_of=lambda k: f"{50000 + k}")
    _write_tle(os.path.join(folder, "catalog.tle"), [_frag(), *bg, *extra])
    cfg = os.path.join(folder, "run.toml")
    with open(cfg, "w") as fh:
        fh.write(f'[run]\nname = "trade"\nstart = "{START}"\nwindow_days = 3\nworkers = 1\n\n'
                 f'[fleet]\nfiles = ["fleet.tle"]\n\n[catalog]\nsources = ["catalog.tle"]\n\n'
                 f'[volume]\nradius_km = 5.0\n')
    store = os.path.join(folder, "store.sqlite")
    p = screener("run", "--config", cfg, "--store", store, "--quiet", "--no-exports")
    assert p.returncode == 0, p.stderr
    with Store(store) as s:
        event = s.conn.execute("SELECT event_id FROM encounters WHERE secondary_id = '41002'"
                               ).fetchone()["event_id"]
    return store, event


@pytest.fixture(scope="module")
def first(tmp_path_factory):
    """Run 1 (no second object) and its trade for a 1 km miss, without a re-screen."""
    folder = tmp_path_factory.mktemp("trade1")
    store, event = _run(str(folder))
    out = os.path.join(folder, "trade.json")
    p = screener("maneuver", "--store", store, "--event", str(event), "--target-miss-km", "1",
                 "--no-rescreen", "--json", out, "--quiet")
    assert p.returncode == 0, p.stderr
    with open(out) as fh:
        return store, event, json.load(fh), p.stdout


def _manoeuvred_state(store, event, chosen, t_s):
    from screener.timeutil import jd_to_datetime

    with Store(store) as s:
        ctx = event_from_store(s, event)
    burn_s = (parse_iso(chosen["burn_time"]) - jd_to_datetime(JD0, FR0)).total_seconds()
    track = apply_burn(ctx.event.primary, burn_s, chosen["dv_rtn_m_s"], ctx.event.window_s,
                       model_of(ctx))
    return track.states([t_s])[0], ctx.event.primary.states([t_s])[0]


@pytest.fixture(scope="module")
def second(tmp_path_factory, first):
    """Run 2: the same scenario plus an object that only the manoeuvred primary meets, and the
    same trade with a catalog re-screen and an OEM export."""
    store1, event1, trade1, _ = first
    y_burned, y_plain = _manoeuvred_state(store1, event1, trade1["chosen"], LATER_S)
    lurker = synth.engineer(None, JD0, FR0 + LATER_S / 86400.0, "41003", "LURKER", "crossing",
                            miss_km=0.3, angle_deg=40.0,
                            state=(y_burned[:3], y_burned[3:]))
    folder = tmp_path_factory.mktemp("trade2")
    store, event = _run(str(folder), extra=[lurker])
    out, oem = os.path.join(folder, "trade.json"), os.path.join(folder, "burn.oem")
    p = screener("maneuver", "--store", store, "--event", str(event), "--target-miss-km", "1",
                 "--json", out, "--oem", oem, "--quiet")
    assert p.returncode == 0, p.stderr
    with open(out) as fh:
        return store, event, json.load(fh), oem, folder, np.linalg.norm(y_burned[:3] - y_plain[:3])


def test_the_trade_finds_a_burn_that_meets_a_1_km_target_to_one_percent(first):
    """Root finding, not a grid: every burn that meets the target gives it to 1 % in the full
    (non-linear) model; the chosen one is the smallest delta-v of those."""
    _store, _event, out, text = first
    assert out["event"]["miss_km"] == pytest.approx(0.05, abs=0.005)
    met = [b for b in out["burns"] if b["meets_target"]]
    assert met and out["chosen"] == min(met, key=lambda b: b["dv_m_s"])
    for b in met:
        assert 1.0 <= b["new_miss_km"] <= 1.01
    # in-track burns beat radial ones here (a crossing pass: in-track burns move the primary
    # radially at TCA, 2 dv/n (1 - cos nt), common practice), and earlier burns need less
    intrack = sorted((b for b in met if b["direction"] == "+T"), key=lambda b: -b["lead_orbits"])
    assert out["chosen"]["direction"] in ("+T", "-T")
    assert [b["dv_m_s"] for b in intrack] == sorted(b["dv_m_s"] for b in intrack)
    assert "chosen:" in text and "Advisory only" in text


def test_the_json_keeps_the_command_line_contract(second):
    """`screener maneuver --json`: event, target, burns (burn_time, dv_rtn_m_s, new_tca,
    new_miss_km, new_pc, meets_target), chosen, rescreen (encounters, created, worsened)."""
    out = second[2]
    assert {"primary", "secondary", "tca", "miss_km", "pc"} <= set(out["event"])
    assert out["target"]["kind"] == "miss"
    for b in out["burns"]:
        assert {"burn_time", "dv_rtn_m_s", "new_tca", "new_miss_km", "new_pc", "meets_target"} <= set(b)
        assert b["burn_time"].endswith("Z") and b["new_tca"].endswith("Z")
        assert len(b["dv_rtn_m_s"]) == 3 and isinstance(b["meets_target"], bool)
    assert out["chosen"] in out["burns"]
    assert {"encounters", "created", "worsened"} <= set(out["rescreen"])


def test_the_rescreen_finds_the_conjunction_only_the_burn_creates(second):
    """The second object sits 0.3 km from where the manoeuvred primary will be 1.8 days
    after TCA (crossing at 40 deg, so its relative velocity is nearly across the in-track
    shift the burn makes), well outside 5 km of the unmanoeuvred one: the run misses it, the
    re-screen lists it as created."""
    store, event, out, _oem, _folder, shift_km = second
    assert shift_km > 6.0
    with Store(store) as s:
        ids = {r[0] for r in s.conn.execute("SELECT secondary_id FROM encounters")}
    assert "41003" not in ids
    created = [e for e in out["rescreen"]["created"] if e["secondary"] == "41003"]
    assert len(created) == 1 and created[0]["miss_km"] == pytest.approx(0.3, abs=0.05)
    cleared = out["rescreen"]["cleared"]
    assert cleared["in_volume"] and cleared["miss_km"] == pytest.approx(1.0, rel=0.011)


def test_the_exported_oem_reads_back_and_screens_to_the_same_encounters(second):
    """The OEM reads through the project's OEM reader (burn in a comment, two segments that
    meet at the burn), and `screener screen` with it as the primary finds the re-screen's
    encounters after the burn: same objects, TCA to 1 ms, miss to 1 m."""
    _store, _event, out, oem_path, folder, _ = second
    oem = read_oem(oem_path)
    assert len(oem.segments) == 2
    with open(oem_path) as fh:
        text = fh.read()
    assert "COMMENT burn at" in text and "Advisory" in text
    res = os.path.join(folder, "screen.json")
    p = screener("screen", "--primaries", oem_path, "--catalog", os.path.join(folder, "catalog.tle"),
                 "--start", START, "--days", "3", "--json", res, "--quiet")
    assert p.returncode == 0, p.stderr
    burn = parse_iso(out["chosen"]["burn_time"])
    with open(res) as fh:      # the re-screen starts at the burn: before it nothing changed
        got = sorted((e["secondary"], e["tca"], e["miss_km"]) for e in json.load(fh)["encounters"]
                     if parse_iso(e["tca"]) >= burn)
    want = sorted((e["secondary"], e["tca"], e["miss_km"]) for e in out["rescreen"]["encounters"])
    assert [g[0] for g in got] == [w[0] for w in want]

    for (_, t1, m1), (_, t2, m2) in zip(got, want):
        assert abs((parse_iso(t1) - parse_iso(t2)).total_seconds()) < ONE_MS_S
        assert abs(m1 - m2) < ONE_M_KM


def test_a_zero_burn_leaves_the_event_as_screened(first):
    """A zero delta-v gives the screened trajectory: the engine's TCA to 1 ms, miss to 1 m."""
    store, event, _out, _ = first
    with Store(store) as s:
        ctx = event_from_store(s, event)
    ev = ctx.event
    burn_s = ev.tca_s - 2.5 * ev.primary_period_s
    track = apply_burn(ev.primary, burn_s, [0.0, 0.0, 0.0], ev.window_s, model_of(ctx))
    a = approach_of(ev, track)
    assert abs(a.tca_s - ev.tca_s) < ONE_MS_S
    assert abs(a.miss_km - ev.miss_km) < ONE_M_KM


def test_the_trade_is_kept_with_its_event(second):
    """Stored: the trade and its chosen burn stay with the event (the history shows what was
    considered)."""
    store, event, out, oem_path, _folder, _ = second
    with Store(store) as s:
        rows = trades_for_event(s, event)
    assert len(rows) == 1 and rows[0]["id"] == out["trade_id"]
    assert rows[0]["chosen_dv_m_s"] == pytest.approx(out["chosen"]["dv_m_s"])
    assert rows[0]["created_count"] == len(out["rescreen"]["created"]) >= 1
    assert rows[0]["oem_path"] == os.path.abspath(oem_path)


def test_a_pc_target_is_met_and_bad_requests_exit_2_with_one_line(first, tmp_path):
    """--target-pc: the chosen burn's Pc is at or below it (and within 1 %).  An unknown
    event, two targets, no event at all, or a bad burn window: an error line on stderr,
    exit 2, nothing stored."""
    store, event, _out, _ = first
    with Store(store) as s:
        kept = len(trades_for_event(s, event))        # the fixture's own trade
    out = tmp_path / "pc.json"
    p = screener("maneuver", "--store", store, "--event", str(event), "--target-pc", "1e-6",
                 "--burn-window-h", "2,5", "--directions", "+T,-T", "--no-rescreen", "--no-save",
                 "--json", str(out), "--quiet")
    assert p.returncode == 0, p.stderr
    d = json.loads(out.read_text())
    assert d["chosen"]["new_pc"] <= 1e-6 and d["chosen"]["new_pc"] >= 0.99e-6
    assert {b["direction"] for b in d["burns"]} == {"+T", "-T"}
    for args in (["--store", store, "--event", "9999"],
                 ["--store", store, "--event", str(event), "--target-pc", "1e-6", "--target-miss-km", "1"],
                 ["--store", store],
                 ["--store", store, "--event", str(event), "--burn-window-h", "soon"]):
        p = screener("maneuver", *args, "--quiet")
        # one line of ours, or argparse's usage plus its one error line
        assert p.returncode == 2 and "error:" in p.stderr.strip().splitlines()[-1], (args, p.stderr)
        assert "Traceback" not in p.stderr
    with Store(store) as s:
        assert len(trades_for_event(s, event)) == kept == 1


async def test_the_tui_trade_screen_at_80x24(first):
    """From the event view, m opens the trade (computed in a worker): a row per burn option
    with the smallest meeting burn highlighted, the Pc plot, and Enter re-screens that burn in
    a background worker and keeps the trade.  Driven by textual's Pilot at 80x24."""
    import datetime as dt

    from screener.tui import make_app
    from screener.tui.event_view import EventScreen
    from screener.tui.trade_view import TradeScreen

    store, event, out, _ = first
    now = dt.datetime(2026, 12, 3, tzinfo=dt.timezone.utc).timestamp()
    with Store(store) as s:
        before = len(trades_for_event(s, event))
    app = make_app(store, now=lambda: now)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, EventScreen)
        await pilot.press("m")
        await pilot.pause()
        assert isinstance(app.screen, TradeScreen)
        await app.workers.wait_for_complete()
        await pilot.pause()
        screen = app.screen
        table = screen.query_one("#trade-table")
        assert table.row_count == len(screen.trade.options) == 20
        assert screen.trade.options[table.cursor_row] is screen.trade.chosen
        assert "Pc vs delta-v" in str(screen.query_one("#trade-plot").render())
        assert "smallest:" in str(screen.query_one("#trade-status").render())
        await pilot.press("enter")
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        result = str(screen.query_one("#trade-result").render())
        assert "re-screen:" in result and "kept as trade" in result
        assert "Advisory only" in str(screen.query_one(".caution").render())
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, EventScreen)
        facts = str(app.screen.query_one("#event-facts").render())
        assert f"manoeuvre trades: {before + 1}" in facts and "created" in facts
    with Store(store) as s:
        rows = trades_for_event(s, event)
    assert len(rows) == before + 1 and os.path.exists(rows[-1]["oem_path"])


def test_a_trade_from_the_exported_cdm_agrees_with_the_stored_one(first, tmp_path):
    """--cdm: the event's CDM (as `screener export` writes it) traded on its own, both TCA
    states propagated numerically instead of by SGP4: the 1 km target is met to 1 %, and the
    smallest delta-v agrees with the store-based trade to 5 % (two independent trajectory
    paths to the same answer)."""
    store, _event, out_store, _ = first
    p = screener("export", "--store", store, "--out", str(tmp_path), "--cdm", "all", "--report", "none")
    assert p.returncode == 0, p.stderr
    cdm = next(f for f in (tmp_path / "cdm").iterdir() if "41002" in f.name)
    res = tmp_path / "cdm-trade.json"
    p = screener("maneuver", "--cdm", str(cdm), "--target-miss-km", "1", "--json", str(res), "--quiet")
    assert p.returncode == 0, p.stderr
    d = json.loads(res.read_text())
    assert 1.0 <= d["chosen"]["new_miss_km"] <= 1.01
    assert d["chosen"]["direction"] == out_store["chosen"]["direction"]
    assert d["chosen"]["dv_m_s"] == pytest.approx(out_store["chosen"]["dv_m_s"], rel=0.05)
    assert d["rescreen"]["skipped"].startswith("a CDM-based trade needs --catalog")
