"""Snapshot tests of the main screens at 80x24 and 160x48 (textual pinned to 8.2.8 in
pyproject.toml so the SVGs stay comparable).  Update only after looking at the diff:
    .venv/bin/python -m pytest tests/test_tui_snapshots.py --snapshot-update"""

from __future__ import annotations


import pytest

from screener.tui import make_app

from .test_tui import NOW

pytestmark = pytest.mark.timeout(120)


@pytest.fixture
def store(store):
    """The demo store with its runs' creation times pinned (the run line shows when a run was
    made; the test store is built afresh each session)."""
    import sqlite3

    c = sqlite3.connect(store)
    c.execute("UPDATE runs SET started_utc = '2026-12-01T23:0' || id || ':00.000Z', "
              "finished_utc = '2026-12-01T23:0' || id || ':30.000Z'")
    c.commit()
    c.close()
    return store


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_triage_screen(snap_compare, store, size):
    assert snap_compare(make_app(store, now=lambda: NOW), terminal_size=size)


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_event_screen(snap_compare, store, size):
    assert snap_compare(make_app(store, now=lambda: NOW), press=["enter"], terminal_size=size)


def test_event_plane_plot(snap_compare, store):
    assert snap_compare(make_app(store, now=lambda: NOW), press=["enter", "2"], terminal_size=(160, 48))


def test_help_screen(snap_compare, store):
    assert snap_compare(make_app(store, now=lambda: NOW), press=["question_mark"], terminal_size=(80, 24))


def test_light_theme(snap_compare, store):
    assert snap_compare(make_app(store, now=lambda: NOW, light=True), terminal_size=(80, 24))
