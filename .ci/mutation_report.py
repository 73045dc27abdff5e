"""Per-module kill rates from a finished `mutmut run` (reads mutants/**/*.py.meta).

killed + timeout count as caught; "no tests" means no selected test reaches the function
(it is listed, not hidden).  Prints a Markdown table for DEVELOPERS.md and the survivors.
"""

from __future__ import annotations

import json
import pathlib
import sys

CAUGHT = {1: "killed", 3: "killed", 36: "timeout", -24: "timeout", 24: "timeout",
          152: "timeout", 255: "timeout", -9: "killed", -11: "killed"}


def main(root: str = "mutants") -> int:
    rows, survivors = [], []
    for meta in sorted(pathlib.Path(root).rglob("*.py.meta")):
        module = str(meta.relative_to(root))[: -len(".meta")]
        codes = json.loads(meta.read_text()).get("exit_code_by_key", {})
        if not codes:
            continue
        caught = sum(1 for c in codes.values() if c in CAUGHT)
        survived = [k for k, c in codes.items() if c == 0]
        no_tests = sum(1 for c in codes.values() if c in (5, 33))
        unchecked = sum(1 for c in codes.values() if c is None)
        rows.append((module, len(codes), caught, len(survived), no_tests, unchecked))
        survivors += survived
    if not rows:
        print("no mutmut results under", root, file=sys.stderr)
        return 1
    print("| module | mutants | killed | survived | no test reaches it | not run | kill rate |")
    print("|---|---|---|---|---|---|---|")
    tot = [0, 0, 0, 0, 0]
    for module, n, caught, surv, nt, un in rows:
        run = n - un
        rate = f"{100.0 * caught / run:.0f} %" if run else "-"
        print(f"| {module} | {n} | {caught} | {surv} | {nt} | {un} | {rate} |")
        for i, x in enumerate((n, caught, surv, nt, un)):
            tot[i] += x
    run = tot[0] - tot[4]
    print(f"| all | {tot[0]} | {tot[1]} | {tot[2]} | {tot[3]} | {tot[4]} | "
          f"{100.0 * tot[1] / run:.0f} % |" if run else "| all | - |")
    print("\nsurvivors (`mutmut show NAME` prints each diff):")
    for name in survivors:
        print("  ", name)
    return 0


if __name__ == "__main__":
    sys.exit(main(*sys.argv[1:]))
