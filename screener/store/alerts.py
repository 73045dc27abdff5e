"""Alerts kept in the store: each one sent (or tried), and the events it told of.

An event (a series key: primary x secondary) alerted by a rule is not alerted by that rule
again while its alerted TCAs are still ahead, unless it escalates (see screener.alerts.decide).
Only alerts that reached at least one channel count for that: a night whose mail relay was down
alerts again on the next run.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import sqlite3

from ..errors import StoreError
from ..timeutil import iso_z
from .db import Store, describe_sqlite_error


@dataclasses.dataclass(frozen=True)
class Alerted:
    """The last delivered alert of one rule about one subject."""
    alert_id: int
    run_id: int | None
    level: str
    pc: float
    last_tca_unix_s: float


def last_alerted(store: Store, rule: str, subject: str, open_from_unix_s: float) -> Alerted | None:
    """The newest delivered alert of `rule` about `subject` whose TCAs reach open_from_unix_s
    or later (an alert about passes that are over does not hold back a new event of the same
    pair)."""
    row = store.conn.execute(
        "SELECT a.id, a.run_id, s.level, s.pc, s.last_tca_unix_s FROM alert_subjects s "
        "JOIN alerts a ON a.id = s.alert_id WHERE s.subject = ? AND a.rule = ? AND a.delivered = 1 "
        "AND s.last_tca_unix_s >= ? ORDER BY a.id DESC LIMIT 1",
        (subject, rule, open_from_unix_s)).fetchone()
    if row is None:
        return None
    return Alerted(row[0], row[1], row[2], row[3], row[4])


def save_alert(store: Store, run_id: int | None, rule: str, trigger: str, subject_line: str,
               payload: dict, results: list[dict], subjects: list[tuple[str, str, float, float]]
               ) -> int:
    """One alert and its subjects (key, level, pc, last TCA unix s) in one transaction."""
    delivered = int(any(r["ok"] for r in results))
    try:
        store.conn.execute("BEGIN IMMEDIATE")
        try:
            cur = store.conn.execute(
                "INSERT INTO alerts (run_id, rule, trigger, created_utc, delivered, subject_line,"
                " payload_json, results_json) VALUES (?,?,?,?,?,?,?,?)",
                (run_id, rule, trigger, iso_z(dt.datetime.now(dt.timezone.utc), 3), delivered,
                 subject_line, json.dumps(payload), json.dumps(results)))
            aid = int(cur.lastrowid)
            store.conn.executemany(
                "INSERT INTO alert_subjects (alert_id, subject, level, pc, last_tca_unix_s) "
                "VALUES (?,?,?,?,?)", [(aid, *s) for s in subjects])
            store.conn.execute("COMMIT")
        except BaseException:
            store.conn.execute("ROLLBACK")
            raise
    except sqlite3.Error as exc:
        raise StoreError("the alert was sent but not recorded: "
                         + describe_sqlite_error(store.path, exc, store.lock_wait_s)) from None
    return aid


def alerts_for_subject(store: Store, subject: str) -> list[dict]:
    """Every alert that told of one series (oldest first): when, which rule and trigger, the
    level and Pc it told, and whether it reached anyone."""
    rows = store.conn.execute(
        "SELECT a.id, a.run_id, a.rule, a.trigger, a.created_utc, a.delivered, s.level, s.pc "
        "FROM alert_subjects s JOIN alerts a ON a.id = s.alert_id WHERE s.subject = ? "
        "ORDER BY a.id", (subject,)).fetchall()
    return [dict(r) for r in rows]
