"""`make demo`: screen the invented Larkspur fleet against the synthetic catalog, print the
ranked summary, then open the TUI when a terminal is attached."""

from __future__ import annotations

import os
import sys

from .cli.main import main as cli_main

HERE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DEMO = os.path.join(HERE, "demo_elements")


def main() -> int:
    print("Demo data is invented: a fictional operator's fleet and a synthetic catalog.\n")
    argv = ["screen", "--catalog", os.path.join(DEMO, "catalog.tle"),
            "--primaries", os.path.join(DEMO, "fleet.json"), os.path.join(DEMO, "larkspur-3.oem"),
            "--start", "2026-12-02T00:00:00Z", "--days", "3", "--radius-km", "5",
            "--json", os.path.join(DEMO, "..", ".venv", "demo-encounters.json")]
    rc = cli_main(argv)
    if rc == 0 and sys.stdout.isatty():
        print("\n(The interactive triage screen is not part of this build yet.)")
    return rc


if __name__ == "__main__":
    sys.exit(main())
