"""An alert as JSON (a command hook's stdin) and as plain text (mail), both with the caution.

The JSON (version 1):
    {"screener_alert": 1, "rule": NAME, "trigger": "act" | "escalation" | "tca_within" |
     "run_problem" | "test", "created_utc": ISO, "run": {id, name, window_start, window_days,
     store, log} or null, "events": [{series, primary, primary_name, secondary,
     secondary_name, level, level_set_by, source, pc, miss_km, tca, hours_to_tca, passes,
     event_id, previous_level, previous_pc, why}], "problems": [text], "caution": TEXT}
"""

from __future__ import annotations

import datetime as dt

from .. import CAUTION
from ..display import fmt_pc, plural
from ..timeutil import iso_z
from .decide import Alert

VERSION = 1


def payload(alert: Alert, run: dict | None, now: dt.datetime) -> dict:
    now_s = now.timestamp()
    return {"screener_alert": VERSION, "rule": alert.rule.name, "trigger": alert.trigger,
            "created_utc": iso_z(now, 3), "run": run,
            "events": [{**it.subject.to_json(now_s), "why": it.why} for it in alert.items],
            "problems": list(alert.problems), "caution": CAUTION}


def subject_line(p: dict) -> str:
    run = p.get("run") or {}
    name = run.get("name", "screener")
    if p["trigger"] == "test":
        return f"screener: test alert from rule {p['rule']}"
    if p["trigger"] == "run_problem":
        return f"screener: run problem in {name}: {p['problems'][0] if p['problems'] else ''}"[:180]
    ev = p["events"]
    first = ev[0]
    more = f" and {plural(len(ev) - 1, 'more event')}" if len(ev) > 1 else ""
    return (f"screener {first['level'].upper()}: {first['primary_name']} vs {first['secondary_name']}"
            f" TCA {first['tca'][:19]}Z Pc {fmt_pc(first['pc'])}{more} ({name})")


def text(p: dict) -> str:
    """The plain-text body: caution, what fired and why, each event, the caution again."""
    run = p.get("run") or {}
    out = [CAUTION, "", f"Rule {p['rule']} ({p['trigger']}), {p['created_utc']}"]
    if run:
        out.append(f"Run {run.get('id')} of {run.get('name')}: window from "
                   f"{run.get('window_start')} + {run.get('window_days'):g} d; store {run.get('store')}")
    for e in p["events"]:
        out += ["", f"{e['level'].upper()}  {e['primary_name']} ({e['primary']}) vs "
                    f"{e['secondary_name']} ({e['secondary']})",
                f"  why:   {e['why']}",
                f"  TCA    {e['tca']}  (in {e['hours_to_tca']:.1f} h)",
                f"  miss   {e['miss_km'] * 1000:.0f} m   Pc {fmt_pc(e['pc'])}"
                + (f"   passes in the window: {e['passes']}" if e["passes"] > 1 else ""),
                f"  level  {e['level_set_by']}"]
    for msg in p["problems"]:
        out += ["", f"PROBLEM  {msg}"]
    if p["trigger"] == "test":
        out += ["", "This is a test alert (screener alert-test): no event behind it."]
    if run.get("log"):
        out += ["", f"Log: {run['log']}"]
    out += ["", CAUTION, ""]
    return "\n".join(out)
