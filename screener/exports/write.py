"""Export one stored run to a folder: encounters.json, encounters.csv, CDMs, report."""

from __future__ import annotations

import dataclasses
import os

from ..errors import ScreenerError
from ..risk.attention import LEVEL_RANK
from ..store import queries
from .cdm_out import write_event_cdm
from .report import render_report
from .tables import write_csv, write_json

CDM_LEVEL = {"none": -1, "act": LEVEL_RANK["act"], "watch": LEVEL_RANK["watch"], "all": 99}


def run_encounters(store, run_id: int) -> list[dict]:
    rows = store.conn.execute("SELECT id, data_json FROM encounters WHERE run_id=? ORDER BY pc DESC, "
                              "miss_km", (run_id,)).fetchall()
    import json

    return [{**json.loads(r["data_json"]), "encounter_id": r["id"]} for r in rows]


def export_run(store, run_id: int | None, folder: str, json_out=True, csv_out=True, cdm="act",
               report="text", diff_text: str = "") -> list[str]:
    """Write the chosen exports; returns the paths written."""
    info = queries.run(store, run_id)
    if info is None:
        raise ScreenerError(f"{store.path}: no run {run_id if run_id is not None else '(store is empty)'}")
    try:
        os.makedirs(folder, exist_ok=True)
    except OSError as exc:
        raise ScreenerError(f"cannot create {folder}: {exc.strerror}") from None
    encs = run_encounters(store, info.id)
    head = {"run": {k: v for k, v in dataclasses.asdict(info).items() if k not in ("config", "stats")}}
    written = []
    maneuverable = {k: v.get("maneuverable") for k, v in info.config.get("members", {}).items()}
    try:
        if json_out:
            p = os.path.join(folder, "encounters.json")
            write_json(p, head, encs)
            written.append(p)
        if csv_out:
            p = os.path.join(folder, "encounters.csv")
            write_csv(p, encs)
            written.append(p)
        limit = CDM_LEVEL[cdm]
        picked = [e for e in encs if LEVEL_RANK.get(e.get("attention"), 2) <= limit]
        if picked:
            cdm_dir = os.path.join(folder, "cdm")
            os.makedirs(cdm_dir, exist_ok=True)
            written += [write_event_cdm(cdm_dir, e, maneuverable) for e in picked]
        if report != "none":
            p = os.path.join(folder, "report.html" if report == "html" else "report.txt")
            with open(p, "w", encoding="utf-8") as fh:
                fh.write(render_report(dataclasses.asdict(info), encs, diff_text, report))
            written.append(p)
    except OSError as exc:
        raise ScreenerError(f"cannot write exports in {folder}: {exc.strerror}") from None
    return written
