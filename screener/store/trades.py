"""Manoeuvre trades kept with their event: one row per trade, in one transaction."""

from __future__ import annotations

import datetime as dt
import json
import sqlite3

from ..errors import StoreError
from ..timeutil import iso_z
from .db import Store, describe_sqlite_error


def save_trade(store: Store, out: dict, oem_path: str | None = None) -> int:
    """Store one trade (the `screener maneuver --json` object); returns its id."""
    ev = out["event"]
    ch = out.get("chosen") or {}
    rs = out.get("rescreen") or {}
    try:
        with store.conn:
            cur = store.conn.execute(
                "INSERT INTO trades (event_id, run_id, encounter_id, created_utc, target,"
                " chosen_dv_m_s, chosen_burn_utc, created_count, worsened_count, oem_path,"
                " trade_json) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
                (ev.get("event_id"), ev.get("run_id"), ev.get("encounter_id"),
                 iso_z(dt.datetime.now(dt.timezone.utc), 3), out["target"]["text"],
                 ch.get("dv_m_s"), ch.get("burn_time"),
                 len(rs.get("created", [])) if rs else None,
                 len(rs.get("worsened", [])) if rs else None, oem_path, json.dumps(out)))
    except sqlite3.Error as exc:
        raise StoreError("the trade was computed but not stored: "
                         + describe_sqlite_error(store.path, exc, store.lock_wait_s)) from None
    return int(cur.lastrowid)


def trades_for_event(store: Store, event_id: int) -> list[dict]:
    """The event's trades, oldest first (summary columns; `trade_json` for the whole)."""
    return [dict(r) for r in store.conn.execute(
        "SELECT id, run_id, encounter_id, created_utc, target, chosen_dv_m_s, chosen_burn_utc,"
        " created_count, worsened_count, oem_path FROM trades WHERE event_id = ? ORDER BY id",
        (event_id,))]


def trade_detail(store: Store, trade_id: int) -> dict:
    r = store.conn.execute("SELECT trade_json FROM trades WHERE id = ?", (trade_id,)).fetchone()
    if r is None:
        raise KeyError(trade_id)
    return json.loads(r["trade_json"])
