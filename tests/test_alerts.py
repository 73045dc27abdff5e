"""Alerts after a nightly run: rules, deduplication across runs, command hooks, SMTP mail.

Real components throughout: `screener run` as a subprocess, a real SQLite store, real hook
processes, and a real SMTP server (aiosmtpd) on loopback.  The event figures come from the
invented demo scenario; what is checked is the alerting behaviour.
"""

from __future__ import annotations

import json
import os
import socket
import sqlite3
import stat
import sys
import textwrap

import pytest

from screener import CAUTION
from screener.alerts import alert_run, alert_test
from screener.config import load_config
from screener.errors import ConfigError
from screener.store import Store
from tests.nightly import screener, write_config

HOOK = textwrap.dedent("""\
    import json, os, sys
    data = json.load(sys.stdin)              # must be valid JSON
    folder = sys.argv[1]
    os.makedirs(folder, exist_ok=True)
    n = len(os.listdir(folder)) + 1
    with open(os.path.join(folder, f"alert-{n}.json"), "w") as fh:
        json.dump(data, fh)
    print(f"kept alert {n}")
    """)

HANG = textwrap.dedent("""\
    import os, sys, time
    with open(sys.argv[1], "w") as fh:
        fh.write(str(os.getpid()))
    time.sleep(600)
    """)


def rule(name, on, argv, extra=""):
    return (f'[[alerts.rule]]\nname = "{name}"\non = "{on}"\n'
            f'command = {json.dumps(argv)}\n{extra}\n')


def alert_rows(store):
    c = sqlite3.connect(store)
    try:
        return c.execute("SELECT rule, trigger, delivered, payload_json, results_json FROM alerts "
                         "ORDER BY id").fetchall()
    finally:
        c.close()


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_dedup_over_three_runs_then_escalation_gives_two_alerts(tmp_path):
    """The same act event over three runs alerts once; a fourth run in which its Pc grows by
    more than the rule's factor (larger hard-body radius for the primary) alerts again."""
    hook = tmp_path / "hook.py"
    hook.write_text(HOOK)
    kept = tmp_path / "kept"
    alerts = rule("act", "act", [sys.executable, str(hook), str(kept)], "pc_factor = 3")
    store = str(tmp_path / "store.sqlite")
    cfg = write_config(tmp_path / "c.toml", extra=alerts)
    for _ in range(3):
        p = screener("run", "--config", cfg, "--store", store, "--quiet")
        assert p.returncode == 0, p.stderr
    assert len(alert_rows(store)) == 1
    big = write_config(tmp_path / "big.toml", extra=alerts + '\n[fleet.objects."900000002"]\nradius_m = 40.0\n')
    p = screener("run", "--config", big, "--store", store)
    assert p.returncode == 0, p.stderr
    rows = alert_rows(store)
    assert len(rows) == 2
    assert len(os.listdir(kept)) == 2
    first, second = (json.loads(r[3]) for r in rows)
    keys1 = {e["series"] for e in first["events"]}
    again = {e["series"]: e for e in second["events"]}
    assert "900000002x339002" in keys1 and "900000002x339002" in again
    assert "escalated since alert" in again["900000002x339002"]["why"]
    for key, ev in again.items():        # told twice only because it escalated
        assert key not in keys1 or "escalated since alert" in ev["why"]
    assert "Alerts: 1 sent, 0 failed" in p.stdout


def test_hook_gets_valid_json_and_a_hanging_hook_is_killed(tmp_path):
    """A hook receives the alert as JSON on stdin (its fields and the caution); a hook that
    hangs is killed at its timeout, the run completes, is stored, and exits 0."""
    hook, hang = tmp_path / "hook.py", tmp_path / "hang.py"
    hook.write_text(HOOK)
    hang.write_text(HANG)
    kept, pidfile = tmp_path / "kept", tmp_path / "hang.pid"
    extra = (rule("ok", "act", [sys.executable, str(hook), str(kept)])
             + rule("stuck", "act", [sys.executable, str(hang), str(pidfile)], "timeout_s = 1"))
    store = str(tmp_path / "store.sqlite")
    p = screener("run", "--config", write_config(tmp_path / "c.toml", extra=extra), "--store", store)
    assert p.returncode == 0, p.stderr
    got = json.loads((kept / "alert-1.json").read_text())
    assert got["screener_alert"] == 1 and got["trigger"] == "act" and got["caution"] == CAUTION
    ev = got["events"][0]
    for key in ("primary_name", "secondary_name", "tca", "miss_km", "pc", "level", "why"):
        assert key in ev
    assert ev["level"] == "act" and got["run"]["id"] == 1
    rows = {r[0]: r for r in alert_rows(store)}
    assert rows["ok"][2] == 1
    assert rows["stuck"][2] == 0
    assert "killed after its timeout of 1 s" in json.loads(rows["stuck"][4])[0]["detail"]
    pid = int(pidfile.read_text())
    with pytest.raises(ProcessLookupError):
        os.kill(pid, 0)
    assert "stuck (" in p.stdout and "FAILED" in p.stdout
    assert sqlite3.connect(store).execute("SELECT count(*) FROM runs").fetchone()[0] == 1


@pytest.fixture
def smtp_server():
    from aiosmtpd.controller import Controller

    class Keep:
        def __init__(self):
            self.messages = []

        async def handle_DATA(self, server, session, envelope):
            self.messages.append(envelope)
            return "250 OK"

    handler = Keep()
    ctl = Controller(handler, hostname="127.0.0.1", port=free_port())
    ctl.start()
    try:
        yield ctl, handler
    finally:
        ctl.stop()


def test_escalation_mail_reaches_a_real_smtp_server(store, tmp_path, smtp_server):
    """An escalation rule with mail: the demo's tonight run (run 2) against last night's has
    events that rose in level; the mail names the event and its level and carries the caution."""
    ctl, handler = smtp_server
    cfg_path = tmp_path / "m.toml"
    cfg_path.write_text(write_config(tmp_path / "base.toml") and (tmp_path / "base.toml").read_text()
                        + textwrap.dedent(f"""
        [alerts.mail]
        host = "127.0.0.1"
        port = {ctl.port}
        from = "screener@larkspur.invalid"
        starttls = "when_offered"

        [[alerts.rule]]
        name = "escalations"
        on = "escalation"
        mail_to = ["duty@larkspur.invalid"]
        """))
    cfg = load_config(str(cfg_path))
    with Store(store) as st:
        got = alert_run(st, cfg, 2, [])
    assert got.sent == 1 and got.failed == 0, got.lines
    assert len(handler.messages) == 1
    env = handler.messages[0]
    assert env.rcpt_tos == ["duty@larkspur.invalid"]
    body = env.content.decode("utf-8")
    assert "Subject: screener " in body
    assert body.count(CAUTION.split(":")[0]) >= 2          # the caution at top and bottom
    with Store(store) as st:
        payload = json.loads(st.conn.execute("SELECT payload_json FROM alerts").fetchone()[0])
    assert payload["trigger"] == "escalation" and payload["events"]
    for ev in payload["events"]:
        assert ev["primary_name"] in body and ev["level"].upper() in body
        assert "level up" in ev["why"] or "new at" in ev["why"] or "Pc x" in ev["why"]


def test_alert_test_sends_through_every_channel(tmp_path, smtp_server):
    """`screener alert-test --config FILE`: one test alert through each rule's hook and mail;
    exit 0 when all got through, 5 when one failed (a hook that exits 1)."""
    ctl, handler = smtp_server
    hook = tmp_path / "hook.py"
    hook.write_text(HOOK)
    base = (tmp_path / "b.toml")
    write_config(base)
    text = base.read_text() + textwrap.dedent(f"""
        [alerts.mail]
        host = "127.0.0.1"
        port = {ctl.port}
        from = "screener@larkspur.invalid"

        [[alerts.rule]]
        name = "duty"
        on = "act"
        command = {json.dumps([sys.executable, str(hook), str(tmp_path / "kept")])}
        mail_to = ["duty@larkspur.invalid"]
        """)
    (tmp_path / "ok.toml").write_text(text)
    p = screener("alert-test", "--config", str(tmp_path / "ok.toml"))
    assert p.returncode == 0, p.stdout + p.stderr
    assert p.stdout.count(": ok: ") == 2
    assert json.loads((tmp_path / "kept" / "alert-1.json").read_text())["trigger"] == "test"
    assert len(handler.messages) == 1 and b"test alert" in handler.messages[0].content
    (tmp_path / "bad.toml").write_text(text + textwrap.dedent(f"""
        [[alerts.rule]]
        name = "broken"
        on = "act"
        command = {json.dumps([sys.executable, "-c", "import sys; sys.exit(1)"])}
        """))
    p = screener("alert-test", "--config", str(tmp_path / "bad.toml"))
    assert p.returncode == 5
    assert "broken: command" in p.stdout and "FAILED: exit 1" in p.stdout


def test_a_relay_that_is_down_never_fails_the_run(store, tmp_path):
    """Mail to a port where nothing listens: the alert is recorded as not delivered (so the
    next run tries again), and nothing is raised."""
    (tmp_path / "c.toml").write_text(write_config(tmp_path / "b.toml") and (tmp_path / "b.toml").read_text()
                                     + textwrap.dedent(f"""
        [alerts.mail]
        host = "127.0.0.1"
        port = {free_port()}
        from = "screener@larkspur.invalid"
        timeout_s = 5
        [[alerts.rule]]
        name = "duty"
        on = "act"
        mail_to = ["duty@larkspur.invalid"]
        """))
    cfg = load_config(str(tmp_path / "c.toml"))
    with Store(store) as st:
        first = alert_run(st, cfg, 2, [])
        again = alert_run(st, cfg, 2, [])
    assert first.failed == 1 and first.sent == 0 and "FAILED" in first.lines[0]
    assert again.failed == 1 and again.held == 0          # undelivered: tried again


@pytest.mark.parametrize("body, said", [
    ('[alerts.mail]\nhost = "h"\nfrom = "a@b"\npassword = "x"\n', "alerts.mail.password: a password is never kept"),
    ('[[alerts.rule]]\nname = "a"\non = "act"\ncommand = "notify --all"\n', "never a shell string"),
    ('[[alerts.rule]]\nname = "a"\non = "sometimes"\ncommand = ["x"]\n', "must be one of act, escalation"),
    ('[[alerts.rule]]\nname = "a"\non = "act"\n', "has no channel"),
    ('[[alerts.rule]]\nname = "a"\non = "act"\nmail_to = ["d@x"]\n', "needs an [alerts.mail] relay"),
    ('[[alerts.rule]]\nname = "a"\non = "act"\ncommand = ["x"]\n'
     '[[alerts.rule]]\nname = "a"\non = "act"\ncommand = ["y"]\n', "a second rule named"),
])
def test_bad_alert_configuration_names_file_and_line(tmp_path, body, said):
    base = tmp_path / "b.toml"
    write_config(base)
    (tmp_path / "c.toml").write_text(base.read_text() + "\n" + body)
    with pytest.raises(ConfigError) as exc:
        load_config(str(tmp_path / "c.toml"))
    assert said in str(exc.value)
    assert f"{tmp_path / 'c.toml'}:" in str(exc.value)


def test_password_file_must_be_private(tmp_path):
    """A password file others can read is refused at send time (and said), never used."""
    from screener.alerts.channels import password_of
    from screener.config.alerts import MailRelay

    f = tmp_path / "pw"
    f.write_text("s3cret\n")
    os.chmod(f, 0o644)
    relay = MailRelay(host="127.0.0.1", sender="a@b", user="u", password_file=str(f))
    with pytest.raises(ValueError, match="readable by others"):
        password_of(relay)
    os.chmod(f, stat.S_IRUSR | stat.S_IWUSR)
    assert password_of(relay) == "s3cret"


def test_a_failed_run_is_told_and_keeps_its_exit_code(tmp_path):
    """A run_problem rule hears of a run that failed (the store is not a store: exit 4 as
    documented), with the reason in the alert's problems."""
    hook = tmp_path / "hook.py"
    hook.write_text(HOOK)
    kept = tmp_path / "kept"
    cfg = write_config(tmp_path / "c.toml",
                       extra=rule("night", "run_problem", [sys.executable, str(hook), str(kept)]))
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"this is not sqlite" * 100)
    p = screener("run", "--config", cfg, "--store", str(junk), "--quiet")
    assert p.returncode == 4 and "Traceback" not in p.stderr
    got = json.loads((kept / "alert-1.json").read_text())
    assert got["trigger"] == "run_problem" and got["run"]["id"] is None
    assert got["problems"][0].startswith("the run failed: ") and str(junk) in got["problems"][0]
    assert got["caution"] == CAUTION


def test_starttls_required_refuses_a_relay_without_it(tmp_path, smtp_server):
    """starttls = "required" and a relay that offers none: not sent, and said so."""
    from screener.alerts.channels import send_mail
    from screener.config.alerts import MailRelay

    ctl, handler = smtp_server
    relay = MailRelay(host="127.0.0.1", port=ctl.port, sender="s@larkspur.invalid", starttls="required")
    got = send_mail(relay, ["duty@larkspur.invalid"], "subject", "body")
    assert not got["ok"] and "does not offer STARTTLS" in got["detail"]
    assert handler.messages == []


def test_tca_within_and_escalation_rules_decide_as_documented():
    """The rules' triggers on hand-made subjects (the documented behaviour, no source beyond
    the README): tca_within fires only for an act pass ahead within `hours`; escalation on a
    level up, on Pc x pc_factor, and not on the same level and Pc."""
    from screener.alerts.decide import held_back, triggered
    from screener.alerts.subjects import Subject
    from screener.config.alerts import AlertRule
    from screener.store.alerts import Alerted

    now = 1_000_000.0

    def subject(level, pc, first_act_h, prev_level=None, prev_pc=None):
        t = None if first_act_h is None else now + first_act_h * 3600.0
        return Subject("1x2", "1", "P", "2", "S", level, "", "ours", pc, 0.1, "2026-12-03T00:00:00Z",
                       t, t or now, t or now, 1, 7, prev_level, prev_pc)

    close = AlertRule("close", "tca_within", command=["x"], hours=24.0)
    assert triggered(close, subject("act", 1e-3, 5.0), now).startswith("act pass 5.0 h ahead")
    assert triggered(close, subject("act", 1e-3, 30.0), now) is None
    assert triggered(close, subject("act", 1e-3, -1.0), now) is None
    assert triggered(close, subject("watch", 1e-5, None), now) is None
    esc = AlertRule("esc", "escalation", command=["x"], pc_factor=10.0)
    assert "level up: watch -> act" in triggered(esc, subject("act", 2e-4, 3.0, "watch", 5e-5), now)
    assert "Pc x20" in triggered(esc, subject("act", 2e-3, 3.0, "act", 1e-4), now)
    assert triggered(esc, subject("act", 2e-4, 3.0, "act", 1e-4), now) is None
    assert triggered(esc, subject("routine", 1e-8, None), now) is None
    told = Alerted(3, 1, "act", 1e-4, now + 3600.0)
    assert held_back(esc, subject("act", 5e-4, 3.0), told) == (True, "")
    assert held_back(esc, subject("act", 2e-3, 3.0), told)[0] is False


async def test_event_view_lists_the_alerts_about_its_pair(store, tmp_path):
    """After an alert, the TUI's event view (Pilot, 80x24) says which rule told of the pair,
    at which level, and that it was delivered."""
    from screener.tui import make_app

    from .nightly import open_top_event

    hook = tmp_path / "hook.py"
    hook.write_text(HOOK)
    base = tmp_path / "b.toml"
    write_config(base)
    (tmp_path / "c.toml").write_text(base.read_text() + "\n"
                                     + rule("duty", "act", [sys.executable, str(hook), str(tmp_path / "k")]))
    with Store(store) as st:
        assert alert_run(st, load_config(str(tmp_path / "c.toml")), 2, []).sent == 1
    app = make_app(store_path=store)
    async with app.run_test(size=(80, 24)) as pilot:
        screen = await open_top_event(app, pilot)
        facts = str(screen.query_one("#event-facts").render())
        d = screen.detail
    assert d["attention"] == "act"
    assert "alerts: 1 about this pair" in facts and "rule duty (act): act" in facts
    assert "delivered" in facts
