"""After a run: decide, send through each rule's channels, record in the store, log.

Nothing here raises for a channel that fails: the outcome says what was sent and what failed,
and the run (already committed) stands.
"""

from __future__ import annotations

import dataclasses
import datetime as dt

from ..config import Config
from ..display import plural
from ..errors import ScreenerError
from ..timeutil import iso_z
from . import message
from .channels import run_hook, send_mail
from .decide import Alert, decide
from .subjects import run_subjects


@dataclasses.dataclass
class AlertsOutcome:
    sent: int = 0               # alerts that reached at least one channel
    failed: int = 0             # alerts that reached none
    held: int = 0               # events told already (deduplicated)
    lines: list[str] = dataclasses.field(default_factory=list)   # one per channel, for the summary

    def summary(self) -> str:
        if not (self.sent or self.failed or self.held):
            return ""
        head = f"Alerts: {self.sent} sent, {self.failed} failed, {plural(self.held, 'event')} told already"
        return "\n".join([head] + ["  " + x for x in self.lines])


def channel_line(r: dict) -> str:
    """One channel's result as the summary, the log and alert-test print it."""
    return f"{r['channel']}: {'ok' if r['ok'] else 'FAILED'}: {r['detail']}"


def deliver(rule, relay, p: dict) -> list[dict]:
    """The alert `p` through every channel of its rule (relay: the [alerts.mail] relay)."""
    out = []
    if rule.command:
        out.append(run_hook(rule, p))
    if rule.mail_to:
        out.append(send_mail(relay, rule.mail_to, message.subject_line(p), message.text(p)))
    return out


def _send(cfg: Config, alert: Alert, run: dict | None, now: dt.datetime) -> tuple[dict, list[dict]]:
    p = message.payload(alert, run, now)
    return p, deliver(alert.rule, cfg.alerts.mail, p)


def _tally(got: AlertsOutcome, label: str, results: list[dict], log=None) -> None:
    """Count one alert as sent (some channel reached) or failed, with a line per channel."""
    ok = any(r["ok"] for r in results)
    got.sent += ok
    got.failed += not ok
    for r in results:
        line = f"{label}: {channel_line(r)}"
        got.lines.append(line)
        if log:
            log(line)


def run_json(store, info) -> dict:
    """The alert's `run` object for a stored run."""
    return {"id": info.id, "name": info.name, "window_start": info.window_start_utc,
            "window_days": info.window_days, "store": store.path, "log": info.log_path}


def unstored_run_json(cfg: Config, window_start: str, store=None) -> dict:
    """The alert's `run` object where no run was stored (a failed run, a test alert)."""
    return {"id": None, "name": cfg.name, "window_start": window_start,
            "window_days": cfg.window_days, "store": getattr(store, "path", None), "log": None}


def reference_time(cfg: Config, info) -> dt.datetime:
    """The time alerts count hours to TCA from, and before which passes are over: now, or for
    a run of a fixed window (an ISO [run] start: a replay, the demo) its window start."""
    if cfg.start in ("today", "now"):
        return dt.datetime.now(dt.timezone.utc)
    return dt.datetime.fromtimestamp(info.window_start_unix_s, dt.timezone.utc)


def alert_run(store, cfg: Config, run_id: int, problems: list[str],
              now: dt.datetime | None = None, log=None) -> AlertsOutcome:
    """The configured alerts for a committed run.  `log(text)` gets one line per channel;
    `now` defaults to reference_time()."""
    from ..exports.write import received_only_events, run_encounters
    from ..store.alerts import last_alerted, save_alert
    from ..store.queries import run as run_info, thresholds_of

    got = AlertsOutcome()
    if not cfg.alerts.rules:
        return got
    info = run_info(store, run_id)
    now = now or reference_time(cfg, info)
    encs = run_encounters(store, run_id)
    only = received_only_events(store, thresholds_of(info), info.window_start_unix_s)
    subjects = run_subjects(encs, only, now.timestamp())
    open_from = info.window_start_unix_s - cfg.event_tca_tolerance_s
    alerts, got.held = decide(cfg.alerts.rules, subjects, problems, now.timestamp(),
                              lambda r, k, t: last_alerted(store, r, k, t), open_from)
    run = run_json(store, info)
    for alert in alerts:
        p, results = _send(cfg, alert, run, now)
        what = (plural(len(alert.items), "event") if alert.items else
                plural(len(alert.problems), "problem"))
        _tally(got, f"{alert.rule.name} ({what})", results, log)
        try:
            save_alert(store, run_id, alert.rule.name, alert.trigger, message.subject_line(p), p,
                       results, [(it.subject.key, it.subject.level, it.subject.pc,
                                  it.subject.last_tca_unix_s) for it in alert.items])
        except ScreenerError as exc:
            got.lines.append(str(exc))
    return got


def alert_failure(cfg: Config, error: str, store=None, now: dt.datetime | None = None) -> AlertsOutcome:
    """A run that failed: its run_problem rules, recorded in the store when one is open."""
    got = AlertsOutcome()
    rules = [r for r in cfg.alerts.rules if r.on == "run_problem"]
    now = now or dt.datetime.now(dt.timezone.utc)
    for rule in rules:
        alert = Alert(rule, "run_problem", problems=[f"the run failed: {error}"])
        p, results = _send(cfg, alert, unstored_run_json(cfg, cfg.start, store), now)
        _tally(got, rule.name, results)
        if store is not None:
            try:
                from ..store.alerts import save_alert

                save_alert(store, None, rule.name, "run_problem", message.subject_line(p), p, results, [])
            except ScreenerError as exc:        # the store may be what failed the run
                got.lines.append(str(exc))
    return got


def alert_test(cfg: Config, now: dt.datetime | None = None) -> list[tuple[str, dict]]:
    """One test alert through every configured rule's channels: [(rule name, result)]."""
    now = now or dt.datetime.now(dt.timezone.utc)
    out = []
    for rule in cfg.alerts.rules:
        _p, results = _send(cfg, Alert(rule, "test"), unstored_run_json(cfg, iso_z(now, 0)), now)
        out += [(rule.name, r) for r in results]
    return out
