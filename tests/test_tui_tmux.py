"""Real-terminal smoke test: `screener tui` in tmux (80x24), keys sent, the captured screen
checked for the ranked list, the event view and the caution."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import time

import pytest

pytestmark = pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed "
                                "(.ci/run installs it)")


def _capture(session):
    return subprocess.run(["tmux", "capture-pane", "-p", "-t", session], capture_output=True,
                          text=True).stdout


def _wait(session, needle, timeout_s=60):
    t_end = time.monotonic() + timeout_s
    while time.monotonic() < t_end:
        screen = _capture(session)
        if needle in screen:
            return screen
        time.sleep(0.3)
    raise AssertionError(f"{needle!r} never appeared; screen was:\n{_capture(session)}")


def test_tui_in_tmux(demo_store_path):
    session = f"screener-smoke-{os.getpid()}"
    cmd = f"{sys.executable} -m screener.cli.main tui --store {demo_store_path}"
    env = dict(os.environ, TERM="xterm-256color")
    subprocess.run(["tmux", "new-session", "-d", "-s", session, "-x", "80", "-y", "24", cmd],
                   check=True, env=env)
    try:
        screen = _wait(session, "run 2")
        assert "level" in screen and "miss m" in screen and "act" in screen
        assert "Advisory only" in screen
        subprocess.run(["tmux", "send-keys", "-t", session, "Enter"], check=True)
        screen = _wait(session, "event ")
        assert "TCA" in screen and "Advisory only" in screen
        subprocess.run(["tmux", "send-keys", "-t", session, "Escape"], check=True)
        _wait(session, " series of ")
        time.sleep(0.5)   # Esc waits ESCDELAY (100 ms) for a following key; let it settle
        subprocess.run(["tmux", "send-keys", "-t", session, "q"], check=True)
        t_end = time.monotonic() + 20
        while time.monotonic() < t_end:
            if subprocess.run(["tmux", "has-session", "-t", session], capture_output=True).returncode:
                break
            time.sleep(0.3)
        else:
            raise AssertionError(f"q did not quit the TUI; screen:\n{_capture(session)}")
    finally:
        subprocess.run(["tmux", "kill-session", "-t", session], capture_output=True)


def test_tui_leaves_when_the_terminal_goes_away(demo_store_path, tmp_path):
    """An SSH drop or a killed tmux must not leave the TUI running (textual's input reader would
    spin on end-of-file, and its shutdown can block writing to the dead terminal): the app
    watches for POLLHUP and SIGHUP, exits, and leaves by force HANGUP_GRACE_S later if the
    shutdown hangs.  The TUI is started under a parent shell, as `make demo` starts it, so the
    hang-up reaches it only through the pty.  The wait below is no timing margin: the process
    must end; 90 s only bounds a broken build."""
    import shutil as _sh

    store = tmp_path / "hup.sqlite"
    _sh.copy(demo_store_path, store)
    session = f"screener-hup-{os.getpid()}"
    cmd = f"sh -c '{sys.executable} -m screener.cli.main tui --store {store}; true'"
    subprocess.run(["tmux", "new-session", "-d", "-s", session, "-x", "80", "-y", "24", cmd], check=True)
    try:
        _wait(session, "run 2")
    finally:
        subprocess.run(["tmux", "kill-session", "-t", session], capture_output=True)
    t_end = time.monotonic() + 90
    while time.monotonic() < t_end:
        alive = subprocess.run(["pgrep", "-f", f"tui --store {store}"], capture_output=True).returncode == 0
        if not alive:
            return
        time.sleep(0.5)
    subprocess.run(["pkill", "-9", "-f", f"tui --store {store}"])
    raise AssertionError("the TUI kept running after its terminal went away")
