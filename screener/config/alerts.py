"""The [alerts] part of a configuration: rules, and the mail relay they may use.

    [alerts.mail]                      # an SMTP relay (optional)
    host = "smtp.example.org"
    port = 587
    from = "screener@example.org"
    user = "screener"                  # optional; the password is never in this file:
    password_env = "SCREENER_SMTP_PASSWORD"   # ... an environment variable, or
    # password_file = "~/.config/screener/smtp-password"   # a file only its owner may read
    starttls = "when_offered"          # "required" or "never"

    [[alerts.rule]]
    name = "act-to-duty"
    on = "act"                         # act | escalation | tca_within | run_problem
    mail_to = ["duty@example.org"]
    command = ["./page-duty", "--team", "fd"]   # argv, never a shell string; JSON on stdin
    timeout_s = 30

Reading only: nothing here sends anything (see screener.alerts).
"""

from __future__ import annotations

import dataclasses
import os

TRIGGERS = ("act", "escalation", "tca_within", "run_problem")
STARTTLS = ("when_offered", "required", "never")
DEFAULT_HOOK_TIMEOUT_S = 30.0
DEFAULT_MAIL_TIMEOUT_S = 30.0
DEFAULT_PC_FACTOR = 10.0


@dataclasses.dataclass
class MailRelay:
    host: str
    port: int = 587
    sender: str = ""
    user: str | None = None
    password_env: str | None = None
    password_file: str | None = None
    starttls: str = "when_offered"
    timeout_s: float = DEFAULT_MAIL_TIMEOUT_S


@dataclasses.dataclass
class AlertRule:
    name: str
    on: str                               # one of TRIGGERS
    command: list[str] | None = None      # argv; argv[0] starting ./ or ../ is from the config's folder
    mail_to: list[str] = dataclasses.field(default_factory=list)
    timeout_s: float = DEFAULT_HOOK_TIMEOUT_S
    hours: float = 24.0                   # tca_within: TCA closer than this (from the run's time)
    pc_factor: float = DEFAULT_PC_FACTOR  # escalation by Pc, and re-alerting an alerted event
    cwd: str = "."                        # the hook's working folder (the configuration's)


@dataclasses.dataclass
class AlertsConfig:
    rules: list[AlertRule] = dataclasses.field(default_factory=list)
    mail: MailRelay | None = None


MAIL_KEYS = {"host", "port", "from", "user", "password_env", "password_file", "starttls",
             "timeout_s"}
RULE_KEYS = {"name", "on", "command", "mail_to", "timeout_s", "hours", "pc_factor"}


def read_alerts(rd, data, base: str) -> AlertsConfig:
    """[alerts] from the parsed TOML; `rd` is the configuration reader (errors name file:line)."""
    top = rd.table(data, ("alerts",), {"mail", "rule"})
    out = AlertsConfig()
    if "mail" in top:
        out.mail = _mail(rd, top["mail"], base)
    rules = top.get("rule", [])
    if not isinstance(rules, list):
        rd.fail(("alerts", "rule"), "must be an array of tables ([[alerts.rule]])")
    names: set[str] = set()
    for k, raw in enumerate(rules, start=1):
        rule = _rule(rd, raw, ("alerts", "rule", f"#{k}"), base, out.mail)
        if rule.name in names:
            rd.fail(("alerts", "rule", f"#{k}", "name"), f"a second rule named {rule.name!r}")
        names.add(rule.name)
        out.rules.append(rule)
    return out


def _mail(rd, raw, base: str) -> MailRelay:
    keys = ("alerts", "mail")
    t = rd.table(raw, keys, MAIL_KEYS | {"password"})
    if "password" in t:
        rd.fail(keys + ("password",), "a password is never kept in the configuration: name an "
                "environment variable (password_env) or a file only you can read (password_file)")
    host = rd.string(t, keys + ("host",), None)
    if not host:
        rd.fail(keys + ("host",), "is required (the SMTP relay's host name)")
    sender = rd.string(t, keys + ("from",), None)
    if not sender or "@" not in sender:
        rd.fail(keys + ("from",), "is required (the sender's mail address)")
    relay = MailRelay(host=host, port=int(rd.num(t, keys + ("port",), 587, lo=1, hi=65535)),
                      sender=sender, user=rd.string(t, keys + ("user",), None),
                      password_env=rd.string(t, keys + ("password_env",), None),
                      starttls=rd.string(t, keys + ("starttls",), "when_offered", STARTTLS),
                      timeout_s=rd.num(t, keys + ("timeout_s",), DEFAULT_MAIL_TIMEOUT_S,
                                       positive=True, hi=600.0))
    pf = rd.string(t, keys + ("password_file",), None)
    if pf:
        relay.password_file = os.path.normpath(os.path.join(base, os.path.expanduser(pf)))
    if relay.password_env and relay.password_file:
        rd.fail(keys + ("password_file",), "give password_env or password_file, not both")
    if (relay.password_env or relay.password_file) and not relay.user:
        rd.fail(keys + ("user",), "is required with a password")
    return relay


def _rule(rd, raw, keys: tuple[str, ...], base: str, mail: MailRelay | None) -> AlertRule:
    t = rd.table(raw, keys, RULE_KEYS)
    on = rd.string(t, keys + ("on",), None, TRIGGERS)
    if on is None:
        rd.fail(keys + ("on",), f"is required (one of {', '.join(TRIGGERS)})")
    rule = AlertRule(name=rd.string(t, keys + ("name",), f"rule-{keys[-1][1:]}"), on=on,
                     timeout_s=rd.num(t, keys + ("timeout_s",), DEFAULT_HOOK_TIMEOUT_S,
                                      positive=True, hi=3600.0),
                     hours=rd.num(t, keys + ("hours",), 24.0, positive=True, hi=24.0 * 60),
                     pc_factor=rd.num(t, keys + ("pc_factor",), DEFAULT_PC_FACTOR, lo=1.0),
                     cwd=base)
    if "command" in t:
        cmd = t["command"]
        if isinstance(cmd, str):
            rd.fail(keys + ("command",), "must be a list of arguments (argv), never a shell "
                    'string: e.g. ["./notify", "--team", "fd"]')
        if not isinstance(cmd, list) or not cmd or not all(isinstance(a, str) and a for a in cmd):
            rd.fail(keys + ("command",), "must be a non-empty list of non-empty strings (argv)")
        rule.command = list(cmd)
    if "mail_to" in t:
        to = t["mail_to"]
        if isinstance(to, str):
            to = [to]
        if not isinstance(to, list) or not to or not all(isinstance(a, str) and "@" in a for a in to):
            rd.fail(keys + ("mail_to",), "must be a list of mail addresses")
        if mail is None:
            rd.fail(keys + ("mail_to",), "needs an [alerts.mail] relay")
        rule.mail_to = list(to)
    if rule.command is None and not rule.mail_to:
        rd.fail(keys, "has no channel: give command, mail_to or both")
    return rule
