"""TUI benchmark (`make bench-tui`): open a store of 50,000 encounters, scroll it, and keep
the UI ticking while a screening runs in the background.  Prints figures; asserts nothing.

The 50,000-row store is the demo scenario's latest run repeated with shifted TCAs (invented
data, for measuring only).
"""

from __future__ import annotations

import asyncio
import datetime as dt
import os
import sqlite3
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DEMO = os.path.join(HERE, "demo_elements")


def make_big_store(path: str, n: int) -> int:
    """Add one run of n encounters to the store at path, copied from its latest run; each
    copy of the run's rows pairs the primaries with secondaries of their own (new ids), so
    the run holds thousands of series as a large real run would, not the demo's eleven."""
    c = sqlite3.connect(path)
    c.row_factory = sqlite3.Row
    last = c.execute("SELECT * FROM runs ORDER BY id DESC LIMIT 1").fetchone()
    src = c.execute("SELECT * FROM encounters WHERE run_id=?", (last["id"],)).fetchall()
    cols = [k for k in src[0].keys() if k not in ("id", "run_id", "event_id")]
    c.execute("BEGIN")
    run_cols = [k for k in last.keys() if k != "id"]
    vals = [last[k] for k in run_cols]
    vals[run_cols.index("n_encounters")] = n
    new_run = c.execute(f"INSERT INTO runs ({', '.join(run_cols)}) VALUES ({', '.join('?' * len(run_cols))})",
                        vals).lastrowid
    rows = []
    for k in range(n):
        e = src[k % len(src)]
        copy = k // len(src)
        shift = copy * 37.0
        sec = e["secondary_id"] if copy == 0 else f"{e['secondary_id']}{copy:04d}"
        ev = c.execute("INSERT INTO events (primary_id, secondary_id, first_run_id, last_run_id, "
                       "last_tca_unix_s) VALUES (?,?,?,?,?)",
                       (e["primary_id"], sec, new_run, new_run, e["tca_unix_s"] + shift)).lastrowid
        v = [e[col] for col in cols]
        v[cols.index("tca_unix_s")] = e["tca_unix_s"] + shift
        v[cols.index("secondary_id")] = sec
        if copy:
            v[cols.index("secondary_name")] = f"{e['secondary_name']}/{copy}"
        v[cols.index("pc")] = e["pc"] * (1.0 - 1e-6 * k)
        rows.append((new_run, ev, *v))
    c.executemany(f"INSERT INTO encounters (run_id, event_id, {', '.join(cols)}) VALUES "
                  f"({', '.join('?' * (len(cols) + 2))})", rows)
    c.execute("COMMIT")
    c.close()
    return new_run


async def _measure(store: str, config: str) -> dict:
    from .tui import make_app
    from .tui.encounter_list import EncounterList

    out = {}
    app = make_app(store, config)
    t0 = time.perf_counter()
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        lst = app.screen.query_one(EncounterList)
        out["open_s"] = time.perf_counter() - t0
        out["rows"] = len(lst.model.rows)
        out["series"] = len(lst.model)
        t1 = time.perf_counter()
        for _ in range(200):
            await pilot.press("pagedown")
        await pilot.pause()
        out["pagedown_ms"] = (time.perf_counter() - t1) / 200 * 1e3
        t1 = time.perf_counter()
        await pilot.press("s")
        await pilot.pause()
        out["sort_ms"] = (time.perf_counter() - t1) * 1e3
        out["render_line_max_ms"] = lst.render_s_max * 1e3

        gaps = []
        last = [time.perf_counter()]

        def tick():
            now = time.perf_counter()
            gaps.append(now - last[0])
            last[0] = now

        timer = app.set_interval(0.02, tick)
        t1 = time.perf_counter()
        await pilot.press("n")
        await app.workers.wait_for_complete()
        await pilot.pause()
        timer.stop()
        out["screening_s"] = time.perf_counter() - t1
        out["tick_gap_max_ms"] = max(gaps) * 1e3 if gaps else float("nan")
        out["tick_gap_p99_ms"] = sorted(gaps)[int(0.99 * (len(gaps) - 1))] * 1e3 if gaps else float("nan")
        out["status"] = str(app.screen.query_one("#status").render())
    return out


def main() -> int:
    from .cli.main import main as cli

    with tempfile.TemporaryDirectory() as d:
        store = os.path.join(d, "store.sqlite")
        for cfg in ("demo-previous.toml", "demo.toml"):
            rc = cli(["run", "--config", os.path.join(DEMO, cfg), "--store", store, "--quiet",
                      "--no-exports"])
            if rc:
                return rc
        t0 = time.perf_counter()
        make_big_store(store, 50_000)
        print(f"built a 50,000-encounter run in {time.perf_counter() - t0:.1f} s "
              f"({os.path.getsize(store) / 1e6:.0f} MB store)")
        res = asyncio.run(_measure(store, os.path.join(DEMO, "demo.toml")))
    print(f"open the TUI on {res['rows']:,} encounters in {res['series']:,} series: "
          f"{res['open_s']:.2f} s (target < 1 s: {res['open_s'] / 1.0:.2f}x)")
    print(f"page down: {res['pagedown_ms']:.1f} ms per key; slowest row render "
          f"{res['render_line_max_ms']:.2f} ms; re-sort 50,000 rows: {res['sort_ms']:.0f} ms")
    print(f"background screening of the demo (3 days, 2 processes): {res['screening_s']:.1f} s; "
          f"UI timer (20 ms) gap p99 {res['tick_gap_p99_ms']:.0f} ms, max {res['tick_gap_max_ms']:.0f} ms")
    print(f"status after the run: {res['status']}")
    print(f"measured {dt.datetime.now(dt.timezone.utc):%Y-%m-%d %H:%M}Z on {os.cpu_count()} cores")
    return 0


if __name__ == "__main__":
    sys.exit(main())
