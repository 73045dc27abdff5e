"""Received CDMs in the store: one row per message (MESSAGE_ID), joined to our own event of the
same pair and TCA, and threaded with the other messages about the same received event."""

from __future__ import annotations

import dataclasses
import json
import sqlite3

from ..errors import StoreError
from .db import Store, describe_sqlite_error


@dataclasses.dataclass(frozen=True)
class Message:
    """One received message, checked and assessed (pipeline/receive.py builds these)."""
    message_id: str
    originator: str
    creation_utc: str
    creation_unix_s: float
    path: str
    sha256: str
    object1_id: str
    object1_name: str
    object2_id: str
    object2_name: str
    tca_utc: str
    tca_unix_s: float
    miss_km: float
    pc_sender: float | None
    pc: float
    pc_max: float
    dilution: bool
    hbr_m: float
    data: dict
    text: str | None = None      # the message as it arrived (None: not kept)


def pair_key(a: str, b: str) -> tuple[str, str]:
    return (a, b) if a <= b else (b, a)


def our_event(conn: sqlite3.Connection, a: str, b: str, tca_unix_s: float, tol_s: float) -> int | None:
    """Our event of the pair (either order) whose last TCA is within tol_s of tca_unix_s."""
    rows = conn.execute("SELECT id, last_tca_unix_s FROM events WHERE (primary_id = ? AND "
                        "secondary_id = ?) OR (primary_id = ? AND secondary_id = ?)",
                        (a, b, b, a)).fetchall()
    near = [(abs(r["last_tca_unix_s"] - tca_unix_s), r["id"]) for r in rows
            if abs(r["last_tca_unix_s"] - tca_unix_s) <= tol_s]
    return min(near)[1] if near else None


def _rethread(conn: sqlite3.Connection, a: str, b: str, tol_s: float) -> None:
    """Recompute the threads of one pair: messages sorted by TCA, a new thread where the gap
    exceeds tol_s; a thread is named by its first message by (creation, MESSAGE_ID), so the
    result does not depend on the order files were taken in."""
    lo, hi = pair_key(a, b)
    rows = conn.execute("SELECT id, message_id, creation_unix_s, tca_unix_s FROM received WHERE "
                        "(object1_id = ? AND object2_id = ?) OR (object1_id = ? AND object2_id = ?) "
                        "ORDER BY tca_unix_s, message_id", (lo, hi, hi, lo)).fetchall()
    groups: list[list] = []
    for r in rows:
        if groups and r["tca_unix_s"] - groups[-1][-1]["tca_unix_s"] <= tol_s:
            groups[-1].append(r)
        else:
            groups.append([r])
    for g in groups:
        first = min(g, key=lambda r: (r["creation_unix_s"], r["message_id"]))["message_id"]
        conn.executemany("UPDATE received SET thread = ? WHERE id = ?", [(first, r["id"]) for r in g])


def take_in(store: Store, m: Message, tol_s: float) -> tuple[str, int | None]:
    """Store one message; returns ('new', our event id it joined or None), or ('known', None)
    for a MESSAGE_ID already taken in with the same content.  The same MESSAGE_ID with other content raises ValueError with the reason
    (the caller refuses the file with it)."""
    conn = store.conn
    old = conn.execute("SELECT sha256, path FROM received WHERE message_id = ?",
                       (m.message_id,)).fetchone()
    if old is not None:
        if old["sha256"] == m.sha256:
            return "known", None
        raise ValueError(f"MESSAGE_ID {m.message_id} was taken in before from {old['path']} with "
                         f"other content; a message id names one message")
    try:
        with conn:
            event = our_event(conn, m.object1_id, m.object2_id, m.tca_unix_s, tol_s)
            conn.execute(
                "INSERT INTO received (message_id, originator, creation_utc, creation_unix_s, path,"
                " sha256, object1_id, object1_name, object2_id, object2_name, tca_utc, tca_unix_s,"
                " miss_km, pc_sender, pc, pc_max, dilution, hbr_m, event_id, thread, data_json, text)"
                " VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                (m.message_id, m.originator, m.creation_utc, m.creation_unix_s, m.path, m.sha256,
                 m.object1_id, m.object1_name, m.object2_id, m.object2_name, m.tca_utc,
                 m.tca_unix_s, m.miss_km, m.pc_sender, m.pc, m.pc_max, int(m.dilution), m.hbr_m,
                 event, m.message_id, json.dumps(m.data, default=float), m.text))
            _rethread(conn, m.object1_id, m.object2_id, tol_s)
    except sqlite3.Error as exc:
        raise StoreError("the message was read but not stored: "
                         + describe_sqlite_error(store.path, exc, store.lock_wait_s)) from None
    return "new", event


def rematch(store: Store, tol_s: float) -> int:
    """Join received messages to our events again (after a run added events); returns how
    many changed."""
    conn = store.conn
    changed = 0
    with conn:
        for r in conn.execute("SELECT id, object1_id, object2_id, tca_unix_s, event_id FROM received").fetchall():
            ev = our_event(conn, r["object1_id"], r["object2_id"], r["tca_unix_s"], tol_s)
            if ev != r["event_id"]:
                conn.execute("UPDATE received SET event_id = ? WHERE id = ?", (ev, r["id"]))
                changed += 1
    return changed


SUMMARY = ("id, message_id, originator, creation_utc, tca_utc, tca_unix_s, miss_km, pc_sender, pc,"
           " pc_max, dilution, hbr_m, thread, event_id, object1_id, object1_name, object2_id,"
           " object2_name, data_json")


def received_for_event(store: Store, event_id: int) -> list[dict]:
    """The received messages joined to our event, in creation order."""
    return [dict(r) for r in store.conn.execute(
        f"SELECT {SUMMARY} FROM received WHERE event_id = ? ORDER BY creation_unix_s, message_id",
        (event_id,))]


def _grouped(store: Store, where: str, key: str) -> dict:
    """Received messages matching `where`, grouped by column `key`, in creation order."""
    out: dict = {}
    for r in store.conn.execute(f"SELECT {SUMMARY} FROM received WHERE {where} "
                                "ORDER BY creation_unix_s, message_id"):
        out.setdefault(r[key], []).append(dict(r))
    return out


def received_by_event(store: Store) -> dict[int, list[dict]]:
    """{our event id: its received messages in creation order}."""
    return _grouped(store, "event_id IS NOT NULL", "event_id")


def received_only(store: Store) -> dict[str, list[dict]]:
    """{thread: its messages in creation order} for received events none of ours matches."""
    return _grouped(store, "event_id IS NULL", "thread")


def as_exported(r: dict) -> dict:
    """One received message as the exports carry it (the command-line contract's fields)."""
    return {"message_id": r["message_id"], "originator": r["originator"],
            "creation_date": r["creation_utc"], "tca": r["tca_utc"], "miss_km": r["miss_km"],
            "pc_sender": r["pc_sender"], "pc": r["pc"], "hbr_m": r["hbr_m"],
            "pc_max": r["pc_max"], "dilution_region": bool(r["dilution"])}


def content(store: Store) -> list[tuple]:
    """Everything stored about received messages except row ids: two intakes of the same
    files in any order give the same content."""
    return sorted(tuple(r) for r in store.conn.execute(
        "SELECT message_id, originator, creation_utc, path, sha256, object1_id, object2_id,"
        " tca_utc, miss_km, pc_sender, pc, pc_max, dilution, hbr_m, event_id, thread, data_json"
        " FROM received"))


def latest_by_event(store: Store) -> dict[int, dict]:
    """{our event id: its latest received message (by creation date)}."""
    return {ev: msgs[-1] for ev, msgs in received_by_event(store).items()}


def message_text(store: Store, message_id: str) -> tuple[str, str]:
    """(the message's text as it arrived, where it came from).  Messages taken in before the
    store kept texts are read from their file, if it still has the same SHA-256; StoreError
    says why not otherwise."""
    import hashlib

    r = store.conn.execute("SELECT text, path, sha256 FROM received WHERE message_id = ?",
                           (message_id,)).fetchone()
    if r is None:
        raise StoreError(f"no received message {message_id} in {store.path}")
    if r["text"] is not None:
        return r["text"], r["path"]
    try:
        with open(r["path"], "rb") as fh:
            raw = fh.read()
    except OSError as exc:
        raise StoreError(f"message {message_id}: its text was not kept and {r['path']} cannot "
                         f"be read ({exc.strerror})") from None
    if hashlib.sha256(raw).hexdigest() != r["sha256"]:
        raise StoreError(f"message {message_id}: its text was not kept and {r['path']} has "
                         f"changed since it was taken in (SHA-256 differs)")
    return raw.decode("utf-8", "replace"), r["path"]


def _assumed(covariance_source: str) -> bool:
    return "assumed" in (covariance_source or "")


def with_received(store: Store, rows: list, thresholds, members=(), window_start_unix_s=None,
                  rule=None) -> list:
    """A run's list rows with what received CDMs add: each event's level from the best
    covariance source (risk.attention.best_source), R in its flags and its source ("ours",
    "both"); then one row per received-only event whose TCA is not before the window start
    (id = minus the latest message's row id; n = 0 passes of ours).  rule: the agreement
    rule (risk.agreement) that sets X where the latest message disagrees."""
    import dataclasses as _dc
    import math

    from ..risk.agreement import AgreementRule, compare
    from ..risk.attention import LEVEL_RANK, best_source
    from ..risk.flags import DILUTION, RECEIVED, with_received as _flag
    from .queries import EncounterRow

    latest = latest_by_event(store)
    out = []
    for r in rows:
        m = latest.get(r.event_id)
        if m is None:
            out.append(r)
            continue
        best = best_source(r.attention, "", _assumed(r.covariance_source), m, thresholds)
        differs = compare({"tca": r.tca_utc, "miss_km": r.miss_km, "pc": r.pc}, m,
                          rule or AgreementRule())["disagrees"]
        out.append(_dc.replace(r, attention=best.level, attention_rank=best.rank, source="both",
                               flags=_flag(r.flags or "", True, differs), attention_set_by=best.said))
    members = set(members)
    for thread, msgs in received_only(store).items():
        m = msgs[-1]
        if window_start_unix_s is not None and m["tca_unix_s"] < window_start_unix_s:
            continue
        one = "object2" if m["object2_id"] in members and m["object1_id"] not in members else "object1"
        two = "object1" if one == "object2" else "object2"
        level, _why = thresholds.level(m["pc"], m["pc_max"], bool(m["dilution"]))
        data = json.loads(m["data_json"]) if m.get("data_json") else {}
        out.append(EncounterRow(
            id=-m["id"], event_id=0, pc=m["pc"], log10_pc=math.log10(m["pc"]) if m["pc"] > 0 else None,
            pc_max=m["pc_max"], miss_km=m["miss_km"], tca_unix_s=m["tca_unix_s"], tca_utc=m["tca_utc"],
            relative_speed_km_s=float(data.get("relative_speed_km_s") or 0.0),
            primary_id=m[f"{one}_id"], primary_name=m[f"{one}_name"], secondary_id=m[f"{two}_id"],
            secondary_name=m[f"{two}_name"], attention=level, attention_rank=LEVEL_RANK[level],
            trend="", change="CDM only", dilution=int(m["dilution"]),
            covariance_source="received CDM", flags=(DILUTION if m["dilution"] else "") + RECEIVED,
            source="received", attention_set_by=f"set by received CDM {m['message_id']} "
                                                 f"(no event of ours)"))
    return out


def thread_of_row(store: Store, row_id: int) -> list[dict]:
    """The messages of the received-only event a list row (id = -message row id) stands for."""
    r = store.conn.execute("SELECT thread FROM received WHERE id = ?", (-row_id,)).fetchone()
    if r is None:
        return []
    return [dict(x) for x in store.conn.execute(
        f"SELECT {SUMMARY} FROM received WHERE thread = ? ORDER BY creation_unix_s, message_id",
        (r["thread"],))]
