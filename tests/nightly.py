"""Helpers for the nightly-run, export and TUI tests: configurations over the demo files and
the `screener` command as a real subprocess."""

from __future__ import annotations

import os
import subprocess
import sys

DEMO = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "demo_elements"))


def write_config(path, *, start="2026-12-02T00:00:00Z", days=2.0, as_of=None, name="nightly",
                 outputs=None, workers=1, extra="") -> str:
    as_of_line = f'as_of = "{as_of}"' if as_of else ""
    out = f'[outputs]\nfolder = "{outputs}"\ncdm = "watch"\nreport = "html"\n' if outputs else ""
    text = f"""
[run]
name = "{name}"
start = "{start}"
window_days = {days}
workers = {workers}

[fleet]
files = ["{DEMO}/fleet.json", "{DEMO}/larkspur-3.oem"]

[fleet.objects."900000001"]
radius_m = 6.5
maneuverable = true

[catalog]
sources = ["{DEMO}/catalog.tle", "{DEMO}/catalog-history.tle"]
{as_of_line}

[volume]
radius_km = 5.0

{out}
{extra}
"""
    with open(path, "w") as fh:
        fh.write(text)
    return str(path)


def screener(*args, env=None, timeout=600):
    e = dict(os.environ)
    e.update(env or {})
    return subprocess.run([sys.executable, "-m", "screener.cli.main", *args], capture_output=True,
                          text=True, timeout=timeout, env=e)


def demo_store(folder) -> str:
    """A store with two runs of the demo scenario ("last night" with the catalog as it stood
    on 2026-12-01 12:00 UTC, "tonight" with the current one), as `make demo` builds it."""
    store = os.path.join(folder, "store.sqlite")
    for cfg in ("demo-previous.toml", "demo.toml"):
        p = screener("run", "--config", os.path.join(DEMO, cfg), "--store", store, "--quiet",
                     "--no-exports", "--no-alerts")
        assert p.returncode == 0, p.stderr
    return store


def store_counts(path):
    """Row counts of the run store's main tables (runs, encounters, events, elsets)."""
    import sqlite3

    c = sqlite3.connect(path)
    try:
        return tuple(c.execute(f"SELECT count(*) FROM {t}").fetchone()[0]
                     for t in ("runs", "encounters", "events", "elsets"))
    finally:
        c.close()


def process_tree(pid):
    """Every descendant process id of pid (read from /proc, no ps needed)."""
    kids = {}
    for name in os.listdir("/proc"):
        if not name.isdigit():
            continue
        try:
            with open(f"/proc/{name}/stat") as fh:
                ppid = int(fh.read().rsplit(")", 1)[1].split()[1])
        except (OSError, ValueError, IndexError):
            continue
        kids.setdefault(ppid, []).append(int(name))
    seen, todo = [], [pid]
    while todo:
        for k in kids.get(todo.pop(), []):
            seen.append(k)
            todo.append(k)
    return seen


def alive(pid) -> bool:
    """Running (not gone, not a zombie)."""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()[0] != "Z"
    except FileNotFoundError:
        return False


async def open_top_event(app, pilot):
    """Pilot: Enter on the list's top row; returns the event screen that opened."""
    from screener.tui.event_view import EventScreen

    await pilot.pause()
    await pilot.press("enter")
    await pilot.pause()
    assert isinstance(app.screen, EventScreen)
    return app.screen
