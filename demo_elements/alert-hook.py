#!/usr/bin/env python3
"""The demo's alert hook: keeps each alert screener sends it (JSON on stdin) as a file.

A real hook would page the duty engineer or post to the team's chat; this one writes
<folder>/alert-<run>-<rule>.json and prints one line for the run's log.
"""
import json
import os
import sys

alert = json.load(sys.stdin)
folder = sys.argv[1] if len(sys.argv) > 1 else "alerts"
os.makedirs(folder, exist_ok=True)
run = (alert.get("run") or {}).get("id") or "test"
path = os.path.join(folder, f"alert-{run}-{alert['rule']}.json")
with open(path, "w", encoding="utf-8") as fh:
    json.dump(alert, fh, indent=1)
print(f"kept {len(alert['events'])} events in {path}")
