"""Shared fixtures: a real store built from the demo scenario (two runs), built once."""

from __future__ import annotations

import pytest

import sqlite3

from .nightly import demo_store


@pytest.fixture(scope="session")
def demo_store_path(tmp_path_factory):
    return demo_store(tmp_path_factory.mktemp("demo-store"))


@pytest.fixture
def store(demo_store_path, tmp_path):
    """A private copy of the demo store (tests may write to it)."""
    dst = tmp_path / "store.sqlite"
    a, b = sqlite3.connect(demo_store_path), sqlite3.connect(dst)
    a.backup(b)
    a.close()
    b.close()
    return str(dst)


@pytest.fixture
def ours_store(store):
    """The demo store without its received CDMs: our own screening alone, for the tests of
    how our encounters are listed (received CDMs in the list: test_received_triage.py)."""
    c = sqlite3.connect(store)
    with c:
        c.execute("DELETE FROM received")
    c.close()
    return store


def pytest_sessionstart(session):
    """The numba functions compiled (or loaded from numba's cache) once, before any test: the
    screenings that tests start in subprocesses and worker pools then load them instead of
    compiling them inside a command with a timeout."""
    from screener.warmup import warm

    warm()


# Inputs tried by each fuzzing test (filled by the tests, printed at the end of the run)
FUZZ_COUNTS: dict[str, int] = {}


def pytest_terminal_summary(terminalreporter):
    if FUZZ_COUNTS:
        terminalreporter.write_line("fuzzing: " + ", ".join(
            f"{k} {v} inputs" for k, v in sorted(FUZZ_COUNTS.items())))
