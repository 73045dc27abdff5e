"""Export one stored run to a folder: encounters.json, encounters.csv, CDMs, report."""

from __future__ import annotations

import dataclasses
import json
import os
import shutil
import tempfile

from ..errors import ScreenerError
from ..risk.attention import LEVEL_RANK, Thresholds, best_source
from ..risk.flags import encounter_flags, with_proximity, with_received
from ..risk.series import (CUMULATIVE_RULE, SERIES_PC_RULE, STORED, cumulative_by_primary,
                           describe_series, group)
from ..risk.agreement import AgreementRule, compare, rule_of
from ..store import queries
from ..store.received import as_exported, received_by_event, received_only
from .cdm_out import write_event_cdm
from .report import received_lines, render_report
from .tables import write_csv, write_json

CDM_LEVEL = {"none": -1, "act": LEVEL_RANK["act"], "watch": LEVEL_RANK["watch"], "all": 99}


def run_encounters(store, run_id: int, rule: AgreementRule = AgreementRule()) -> list[dict]:
    """A run's encounters as exported, ranked, each with its flags and its series, and where
    the event has received CDMs, those (`received`, creation order), `source` ("ours" or
    "both") and the comparison with the latest message."""
    rows = store.conn.execute("SELECT id, data_json, flags FROM encounters WHERE run_id=? ORDER BY "
                              "pc DESC, miss_km", (run_id,)).fetchall()
    encs = [{**json.loads(r["data_json"]), "encounter_id": r["id"]} for r in rows]
    got = received_by_event(store)
    thresholds = queries.thresholds_of(queries.run(store, run_id))
    for e, r in zip(encs, rows):
        e["flags"] = r["flags"] if r["flags"] is not None else stored_flags(e)
        msgs = got.get(e.get("event_id"), [])
        e["source"] = "both" if msgs else "ours"
        if msgs:
            e["received"] = [as_exported(m) for m in msgs]
            e["received_comparison"] = compare(e, msgs[-1], rule)
            e["flags"] = with_received(e["flags"], True, e["received_comparison"]["disagrees"])
        best = best_source(e.get("attention", "routine"), e.get("attention_reason", ""),
                           bool(e.get("assumed_covariance")), msgs[-1] if msgs else None, thresholds)
        e["attention_ours"] = e.get("attention")
        e["attention"], e["attention_reason"] = best.level, best.reason
        e["attention_source"], e["attention_set_by"] = best.source, best.said
    return encs



def received_only_events(store, thresholds: Thresholds = Thresholds(),
                         since_unix_s: float | None = None) -> list[dict]:
    """Events known only from received CDMs (TCA not before since_unix_s, the run's window
    start, where given): one entry per thread, source "received", its attention level from
    the latest message's Pc (ours, recomputed)."""
    out = []
    for thread, msgs in received_only(store).items():
        last = msgs[-1]
        if since_unix_s is not None and last["tca_unix_s"] < since_unix_s:
            continue
        level, why = thresholds.level(last["pc"], last["pc_max"], bool(last["dilution"]))
        out.append({"source": "received", "thread": thread, "attention": level,
                    "attention_reason": why, "attention_source": "received",
                    "object1": last["object1_id"],
                    "object1_name": last["object1_name"], "object2": last["object2_id"],
                    "object2_name": last["object2_name"], "tca": last["tca_utc"],
                    "miss_km": last["miss_km"], "pc": last["pc"], "pc_sender": last["pc_sender"],
                    "received": [as_exported(m) for m in msgs]})
    return out


def stored_flags(e: dict) -> str:
    """Flags of an encounter stored before schema 3 kept them."""
    return encounter_flags(bool(e.get("assumed_covariance")), bool(e.get("dilution_region")),
                           e.get("short_encounter_ok"))


def run_series(encs: list[dict]) -> list:
    """The run's series (most urgent first); each encounter gets its series key, its series'
    pass count and (for a series' worst pass) worst_of_series = True; the series' P flag goes
    on every member."""
    series = group(encs, STORED)
    for g in series:
        for e in g.members:
            e["series"], e["series_count"] = g.key, g.count
            e["worst_of_series"] = e is g.worst
            e["proximity"] = g.proximity
            e["flags"] = with_proximity(e["flags"], g.proximity)
    return series


MARKER = ".screener-export.json"     # which store and run a folder of exports belongs to


def _owner(folder: str) -> dict | None:
    try:
        with open(os.path.join(folder, MARKER), encoding="utf-8") as fh:
            return json.load(fh)
    except (OSError, ValueError):
        return None


def export_run(store, run_id: int | None, folder: str, json_out=True, csv_out=True, cdm="act",
               report="text", diff_text: str = "", cdm_per: str = "series") -> list[str]:
    """Write the chosen exports into `folder`; returns the paths written.  CDMs: one per
    series (its worst pass) at or above the `cdm` level, or one per encounter with
    cdm_per = "encounter".  Everything is
    written into a fresh sibling folder first and renamed into place, so a reader never sees
    a half export and two stores never mix their files: an existing folder is replaced only
    when it holds an earlier export of the same store and run, and refused otherwise."""
    info = queries.run(store, run_id)
    if info is None:
        raise ScreenerError(f"{store.path}: no run {run_id if run_id is not None else '(store is empty)'}")
    folder = os.path.abspath(folder)
    owner = {"store": store.path, "run_id": info.id}
    if os.path.exists(folder):
        if not os.path.isdir(folder):
            raise ScreenerError(f"{folder}: exists and is not a folder; exports not written")
        if os.listdir(folder) and _owner(folder) != owner:
            raise ScreenerError(f"{folder}: holds files that are not an export of run {info.id} of "
                                f"{store.path}; exports not written (choose another folder)")
    parent = os.path.dirname(folder)
    try:
        os.makedirs(parent, exist_ok=True)
        tmp = tempfile.mkdtemp(prefix=f".{os.path.basename(folder)}.", dir=parent)
    except OSError as exc:
        raise ScreenerError(f"cannot create {folder}: {exc.strerror}") from None
    try:
        written = _write_all(store, info, tmp, json_out, csv_out, cdm, report, diff_text, cdm_per)
        with open(os.path.join(tmp, MARKER), "w", encoding="utf-8") as fh:
            json.dump(owner, fh)
        old = None
        if os.path.exists(folder):
            old = tempfile.mkdtemp(prefix=f".{os.path.basename(folder)}.old.", dir=parent)
            os.rename(folder, os.path.join(old, "x"))
        os.rename(tmp, folder)
        if old:
            shutil.rmtree(old, ignore_errors=True)
    except OSError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        raise ScreenerError(f"cannot write exports in {folder}: {exc.strerror}") from None
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return [os.path.join(folder, os.path.relpath(p, tmp)) for p in written]


def _write_all(store, info, folder, json_out, csv_out, cdm, report, diff_text, cdm_per) -> list[str]:
    rule = rule_of(info.config)
    encs = run_encounters(store, info.id, rule)
    series = run_series(encs)
    only = received_only_events(store, queries.thresholds_of(info), info.window_start_unix_s)
    head = {"run": {k: v for k, v in dataclasses.asdict(info).items() if k not in ("config", "stats")},
            "series_rule": SERIES_PC_RULE, "cumulative_rule": CUMULATIVE_RULE,
            "received_rule": rule.describe(), "received_only": only,
            "series": [describe_series(g, lambda e: e["tca"]) for g in series],
            "cumulative_pc_by_primary": cumulative_by_primary(series)}
    plotted = plotted_series(store, series) if report == "html" else []
    written = []
    maneuverable = {k: v.get("maneuverable") for k, v in info.config.get("members", {}).items()}
    if json_out:
        p = os.path.join(folder, "encounters.json")
        write_json(p, head, encs)
        written.append(p)
    if csv_out:
        p = os.path.join(folder, "encounters.csv")
        write_csv(p, encs)
        written.append(p)
    limit = CDM_LEVEL[cdm]
    candidates = encs if cdm_per == "encounter" else [g.worst for g in series]
    picked = [e for e in candidates if LEVEL_RANK.get(e.get("attention"), 2) <= limit]
    if picked:
        cdm_dir = os.path.join(folder, "cdm")
        os.makedirs(cdm_dir, exist_ok=True)
        written += [write_event_cdm(cdm_dir, e, maneuverable) for e in picked]
    if report == "text":
        p = os.path.join(folder, "report.txt")
        with open(p, "w", encoding="utf-8") as fh:
            fh.write(render_report(dataclasses.asdict(info), series, len(encs), diff_text,
                                   received_text=received_lines(encs, only)))
        written.append(p)
    elif report == "html":
        p = os.path.join(folder, "report.html")
        with open(p, "w", encoding="utf-8") as fh:
            fh.write(html_report(store, info, series, encs, plotted, diff_text,
                                 received_lines(encs, only)))
        written.append(p)
    return written


def plotted_series(store, series) -> list:
    """The series the HTML report plots (watch or above, most urgent first, at most
    PLOTTED_MAX), each worst pass given its Pc sensitivity and its history over runs (so that
    encounters.json carries every figure the report shows)."""
    from ..risk.sensitivity import of_encounter
    from .html_report import PLOTTED_MAX

    out = []
    for g in [g for g in series if g.level_rank <= LEVEL_RANK["watch"]][:PLOTTED_MAX]:
        e = g.worst
        s = of_encounter(e)
        if s is not None:
            e["pc_sensitivity"] = s.to_json()
        e["history"] = queries.event_history(store, e["event_id"]) if e.get("event_id") else []
        out.append(g)
    return out


def html_report(store, info, series, encs, plotted, diff_text: str, received_text: str) -> str:
    from .html_report import render_html
    from .svg_plots import event_svg

    run = {**dataclasses.asdict(info), "inputs": json.loads(store.conn.execute(
        "SELECT inputs_json FROM runs WHERE id = ?", (info.id,)).fetchone()[0])}
    parts = []
    for k, g in enumerate(plotted, start=1):
        e = g.worst
        got = e.get("received") or []
        parts.append((g, e["history"], got,
                      event_svg(e, e["history"], got, e.get("pc_sensitivity"), f"ev{k}")))
    return render_html(run, series, len(encs), parts, diff_text, received_text)
