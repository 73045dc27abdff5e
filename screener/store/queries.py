"""Reading the store: runs, a run's encounters (light rows for lists), one encounter in full,
one event's history across runs."""

from __future__ import annotations

import dataclasses
import json

from .db import Store

LIST_COLUMNS = ("id, event_id, pc, log10_pc, pc_max, miss_km, tca_unix_s, tca_utc, relative_speed_km_s,"
                " primary_id, primary_name, secondary_id, secondary_name, attention, attention_rank,"
                " trend, change, dilution, covariance_source, flags")


@dataclasses.dataclass(frozen=True, slots=True)
class EncounterRow:
    id: int
    event_id: int
    pc: float
    log10_pc: float | None
    pc_max: float
    miss_km: float
    tca_unix_s: float
    tca_utc: str
    relative_speed_km_s: float
    primary_id: str
    primary_name: str
    secondary_id: str
    secondary_name: str
    attention: str
    attention_rank: int
    trend: str
    change: str
    dilution: int
    covariance_source: str
    flags: str | None          # None for encounters stored before schema 3: see row_flags
    source: str = "ours"       # "ours", "both" (received CDMs too) or "received" (only those)
    attention_set_by: str = ""  # which source set the level (store.received.with_received)


@dataclasses.dataclass(frozen=True)
class RunInfo:
    id: int
    name: str
    started_utc: str
    finished_utc: str
    window_start_utc: str
    window_start_unix_s: float
    window_days: float
    volume: str
    mode: str
    n_primaries: int
    n_secondaries: int
    n_encounters: int
    software_version: str
    config: dict
    thresholds: dict
    stats: dict
    log_path: str | None

    @classmethod
    def from_row(cls, r) -> "RunInfo":
        return cls(r["id"], r["name"], r["started_utc"], r["finished_utc"], r["window_start_utc"],
                   r["window_start_unix_s"], r["window_days"], r["volume"], r["mode"],
                   r["n_primaries"], r["n_secondaries"], r["n_encounters"], r["software_version"],
                   json.loads(r["config_json"]), json.loads(r["thresholds_json"]),
                   json.loads(r["stats_json"]), r["log_path"])


def thresholds_of(info: RunInfo | None):
    """The run's own attention thresholds, as stored with it (defaults for no run)."""
    from ..risk.attention import Thresholds

    got = info.thresholds if info is not None else {}
    return Thresholds(**{k: float(v) for k, v in (got or {}).items() if k in ("act_pc", "watch_pc")})


def runs(store: Store, limit: int = 50) -> list[RunInfo]:
    return [RunInfo.from_row(r) for r in
            store.conn.execute("SELECT * FROM runs ORDER BY id DESC LIMIT ?", (limit,))]


def run(store: Store, run_id: int | None = None) -> RunInfo | None:
    if run_id is None:
        r = store.conn.execute("SELECT * FROM runs ORDER BY id DESC LIMIT 1").fetchone()
    else:
        r = store.conn.execute("SELECT * FROM runs WHERE id=?", (run_id,)).fetchone()
    return RunInfo.from_row(r) if r else None


def encounter_rows(store: Store, run_id: int) -> list[EncounterRow]:
    """All of a run's encounters, ranked (Pc descending, then miss), as light rows."""
    cur = store.conn.execute(f"SELECT {LIST_COLUMNS} FROM encounters WHERE run_id=? "
                             "ORDER BY pc DESC, miss_km", (run_id,))
    cur.row_factory = None
    return [EncounterRow(*t) for t in cur]


def encounter_detail(store: Store, encounter_id: int) -> dict:
    r = store.conn.execute("SELECT data_json, run_id FROM encounters WHERE id=?", (encounter_id,)).fetchone()
    if r is None:
        raise KeyError(encounter_id)
    d = json.loads(r["data_json"])
    d["run_id"] = r["run_id"]
    d["encounter_id"] = encounter_id
    return d


def series_members(store: Store, run_id: int, primary_id: str, secondary_id: str) -> list[EncounterRow]:
    """Every pass of one pair in one run (its series), in TCA order."""
    cur = store.conn.execute(f"SELECT {LIST_COLUMNS} FROM encounters WHERE run_id=? AND primary_id=? "
                             "AND secondary_id=? ORDER BY tca_unix_s", (run_id, primary_id, secondary_id))
    cur.row_factory = None
    return [EncounterRow(*t) for t in cur]


def event_history(store: Store, event_id: int) -> list[dict]:
    """The event's encounters, oldest run first: miss, Pc, TCA and covariance source per run."""
    return [dict(r) for r in store.conn.execute(
        "SELECT e.run_id, r.started_utc, r.window_start_utc, e.tca_utc, e.miss_km, e.pc, e.log10_pc,"
        " e.attention, e.covariance_source FROM encounters e JOIN runs r ON r.id = e.run_id"
        " WHERE e.event_id=? ORDER BY e.run_id", (event_id,))]



def element_sets(store: Store, run_id: int) -> dict[tuple[str, str], object]:
    """{(object id, role): ElementSet} as stored with a run (OEM-backed primaries are not
    element sets and are left out), rebuilt from the stored OMM keywords with the exact epoch."""
    import dataclasses as _dc

    from ..elements.record import ElementSet, Source

    out = {}
    for row in store.conn.execute("SELECT object_id, role, source, omm_json FROM elsets"
                                  " WHERE run_id = ? AND omm_json IS NOT NULL", (run_id,)):
        fields = json.loads(row["omm_json"])
        jd, fr = fields.pop("EPOCH_JD")
        rec = ElementSet.from_omm(fields, Source(f"store run {run_id}", 0))
        out[(row["object_id"], row["role"])] = _dc.replace(rec, epoch_jd=jd, epoch_fr=fr,
                                                           source=Source(row["source"], 0))
    return out
