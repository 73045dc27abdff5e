"""Which rules fire after a run, about which subjects; and which of those were told already.

Triggers (config.alerts.TRIGGERS):
- act:         a subject at the act level;
- escalation:  a subject whose level rose since the previous run (a subject not in it counts
               as new at its level, if watch or act), or whose Pc grew by the rule's pc_factor;
- tca_within:  a subject at act whose earliest act pass is less than `hours` ahead of now;
- run_problem: the run was degraded (inputs shrank, objects unusable, bad records) or failed.

Deduplication (per rule and subject, against the store): a subject told of before by the same
rule, in an alert that reached someone and whose passes are not over, is told again only when
its level is now higher than then, or its Pc at least pc_factor times the Pc told then.
"""

from __future__ import annotations

import dataclasses

from ..config.alerts import AlertRule
from ..risk.attention import ACT, LEVEL_RANK, WATCH
from .subjects import Subject


@dataclasses.dataclass
class Item:
    subject: Subject
    why: str


@dataclasses.dataclass
class Alert:
    rule: AlertRule
    trigger: str
    items: list[Item] = dataclasses.field(default_factory=list)
    problems: list[str] = dataclasses.field(default_factory=list)   # run_problem


def triggered(rule: AlertRule, s: Subject, now_unix_s: float) -> str | None:
    """Why `rule` fires for subject s (before deduplication), or None."""
    if rule.on == "act":
        return "at the act level" if s.level == ACT else None
    if rule.on == "tca_within":
        t = s.first_act_tca_unix_s
        if t is not None and now_unix_s <= t <= now_unix_s + rule.hours * 3600.0:
            return f"act pass {(t - now_unix_s) / 3600.0:.1f} h ahead (rule: within {rule.hours:g} h)"
        return None
    if rule.on == "escalation":
        if s.previous_level is None:
            return f"new at the {s.level} level" if s.level in (ACT, WATCH) else None
        if s.rank < LEVEL_RANK[s.previous_level]:
            return f"level up: {s.previous_level} -> {s.level}"
        if s.level in (ACT, WATCH) and s.previous_pc and s.pc >= rule.pc_factor * s.previous_pc:
            return f"Pc x{s.pc / s.previous_pc:.0f} since the previous run ({s.previous_pc:.1e} -> {s.pc:.1e})"
        return None
    return None


def held_back(rule: AlertRule, s: Subject, told) -> tuple[bool, str]:
    """(told already, why it is told again).  `told` is store.alerts.Alerted or None."""
    if told is None:
        return False, ""
    if s.rank < LEVEL_RANK.get(told.level, 2):
        return False, f"escalated since alert {told.alert_id}: {told.level} -> {s.level}"
    if told.pc > 0 and s.pc >= rule.pc_factor * told.pc:
        return False, (f"escalated since alert {told.alert_id}: Pc x{s.pc / told.pc:.0f} "
                       f"({told.pc:.1e} -> {s.pc:.1e})")
    return True, ""


def decide(rules: list[AlertRule], subjects: list[Subject], problems: list[str],
           now_unix_s: float, told_of, open_from_unix_s: float) -> tuple[list[Alert], int]:
    """(alerts to send, number of subjects held back as told already).  told_of(rule_name,
    subject_key, open_from_unix_s) gives the last delivered alert (store.alerts.last_alerted)."""
    alerts, n_held = [], 0
    for rule in rules:
        if rule.on == "run_problem":
            if problems:
                alerts.append(Alert(rule, rule.on, problems=list(problems)))
            continue
        got = Alert(rule, rule.on)
        for s in subjects:
            why = triggered(rule, s, now_unix_s)
            if why is None:
                continue
            held, again = held_back(rule, s, told_of(rule.name, s.key, open_from_unix_s))
            if held:
                n_held += 1
                continue
            got.items.append(Item(s, why + (f"; {again}" if again else "")))
        if got.items:
            alerts.append(got)
    return alerts, n_held
