"""The two ways an alert leaves the machine: a command hook and SMTP mail.

Neither raises: each returns a result {"channel", "ok", "detail"} for the run's log, the
summary and the store.  A failing channel never fails the run.
"""

from __future__ import annotations

import ipaddress
import json
import os
import signal
import smtplib
import socket
import ssl
import stat
import subprocess
from email.message import EmailMessage

from ..config.alerts import AlertRule, MailRelay

OUTPUT_KEPT_CHARS = 2000       # of a hook's stdout and stderr, for the log and the store


def hook_argv(rule: AlertRule) -> list[str]:
    """The rule's argv; a first word starting ./ or ../ is taken from the configuration's folder
    (the hook also runs there)."""
    argv = list(rule.command or [])
    if argv and (argv[0].startswith("./") or argv[0].startswith("../")):
        argv[0] = os.path.normpath(os.path.join(rule.cwd, argv[0]))
    return argv


def run_hook(rule: AlertRule, payload: dict) -> dict:
    """Run the rule's command with the alert as JSON on stdin; killed (with its process
    group) at the rule's timeout."""
    argv = hook_argv(rule)
    name = f"command {' '.join(argv)}"
    data = (json.dumps(payload, indent=1) + "\n").encode("utf-8")
    try:
        proc = subprocess.Popen(argv, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                stderr=subprocess.PIPE, cwd=rule.cwd, start_new_session=True)
    except OSError as exc:
        return {"channel": name, "ok": False, "detail": f"cannot start: {exc.strerror or exc}"}
    try:
        out, err = proc.communicate(data, timeout=rule.timeout_s)
    except subprocess.TimeoutExpired:
        _kill_group(proc)
        return {"channel": name, "ok": False,
                "detail": f"killed after its timeout of {rule.timeout_s:g} s"}
    except BrokenPipeError:          # the hook exited without reading its stdin
        out, err = proc.communicate()
    said = _kept(out) + (("\nstderr: " + _kept(err)) if err.strip() else "")
    if proc.returncode != 0:
        return {"channel": name, "ok": False, "detail": f"exit {proc.returncode}; {said}".strip()}
    return {"channel": name, "ok": True, "detail": f"exit 0; {said}".strip().rstrip(";")}


def _kill_group(proc: subprocess.Popen) -> None:
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        proc.kill()
    proc.wait()
    for fh in (proc.stdin, proc.stdout, proc.stderr):
        if fh:
            fh.close()


def _kept(b: bytes) -> str:
    t = b.decode("utf-8", "replace").strip()
    return t if len(t) <= OUTPUT_KEPT_CHARS else t[:OUTPUT_KEPT_CHARS] + " ..."


def password_of(relay: MailRelay) -> str | None:
    """The relay password from its environment variable or its file (which only its owner may
    read); a ValueError says what is wrong."""
    if relay.password_env:
        if relay.password_env not in os.environ:
            raise ValueError(f"environment variable {relay.password_env} (password_env) is not set")
        return os.environ[relay.password_env]
    if relay.password_file:
        try:
            st = os.stat(relay.password_file)
        except OSError as exc:
            raise ValueError(f"{relay.password_file}: {exc.strerror}") from None
        if st.st_mode & (stat.S_IRWXG | stat.S_IRWXO):
            raise ValueError(f"{relay.password_file}: readable by others (mode "
                             f"{stat.S_IMODE(st.st_mode):04o}); chmod 600 it")
        with open(relay.password_file, encoding="utf-8") as fh:
            return fh.readline().rstrip("\r\n")
    return None


def _is_loopback(host: str) -> bool:
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return host == "localhost"


def send_mail(relay: MailRelay, to: list[str], subject: str, body: str) -> dict:
    """Plain-text mail through the relay: STARTTLS when offered (or as configured); a
    password is only ever sent over TLS, or to a relay on this machine."""
    name = f"mail to {', '.join(to)} via {relay.host}:{relay.port}"
    msg = EmailMessage()
    msg["From"], msg["To"], msg["Subject"] = relay.sender, ", ".join(to), subject
    msg.set_content(body)
    try:
        password = password_of(relay)
        with smtplib.SMTP(relay.host, relay.port, timeout=relay.timeout_s) as smtp:
            smtp.ehlo()
            tls = False
            if relay.starttls != "never" and smtp.has_extn("starttls"):
                smtp.starttls(context=ssl.create_default_context())
                smtp.ehlo()
                tls = True
            elif relay.starttls == "required":
                return {"channel": name, "ok": False,
                        "detail": "the relay does not offer STARTTLS (starttls = \"required\")"}
            if relay.user and password is not None:
                if not tls and not _is_loopback(relay.host):
                    return {"channel": name, "ok": False,
                            "detail": "not sending the password without TLS (the relay offered no STARTTLS)"}
                smtp.login(relay.user, password)
            refused = smtp.send_message(msg)
    except ValueError as exc:
        return {"channel": name, "ok": False, "detail": f"password: {exc}"}
    except (smtplib.SMTPException, OSError, socket.timeout, ssl.SSLError) as exc:
        return {"channel": name, "ok": False, "detail": f"{type(exc).__name__}: {exc}"}
    if refused:
        return {"channel": name, "ok": len(refused) < len(to),
                "detail": "refused for " + ", ".join(sorted(refused))}
    return {"channel": name, "ok": True, "detail": "accepted by the relay"}
