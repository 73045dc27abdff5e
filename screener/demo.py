"""`make demo`: the invented Larkspur Orbital Works scenario end to end.

Builds a fresh demo store with two nightly runs ("last night", with the catalog as it stood on
2026-12-01 12:00 UTC, and "tonight"), prints tonight's ranked summary with what changed, writes
the exports, then opens the TUI on the store when a terminal is attached.
"""

from __future__ import annotations

import os
import shutil
import sys

from .cli.main import main as cli_main

HERE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DEMO = os.path.join(HERE, "demo_elements")
STORE = os.path.join(HERE, ".venv", "demo", "store.sqlite")


def main() -> int:
    print("Demo data is invented: a fictional operator's fleet and a synthetic catalog.\n")
    for suffix in ("", "-wal", "-shm"):
        if os.path.exists(STORE + suffix):
            os.remove(STORE + suffix)
    # the demo's own exports folder starts afresh too (its runs are renumbered from 1)
    shutil.rmtree(os.path.join(HERE, "demo-out"), ignore_errors=True)
    print("Last night's run (catalog as of 2026-12-01 12:00 UTC) ...")
    rc = cli_main(["run", "--config", os.path.join(DEMO, "demo-previous.toml"), "--store", STORE,
                   "--quiet"])
    if rc:
        return rc
    print("Tonight's run ...\n")
    rc = cli_main(["run", "--config", os.path.join(DEMO, "demo.toml"), "--store", STORE])
    if rc:
        return rc
    if sys.stdin.isatty() and sys.stdout.isatty():
        print("\nOpening the TUI (? for keys, q to quit) ...")
        return cli_main(["tui", "--store", STORE, "--config", os.path.join(DEMO, "demo.toml")])
    print(f"\nNo terminal attached: open the TUI later with\n  .venv/bin/screener tui --store {STORE}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
