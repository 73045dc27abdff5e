"""What a stored run can alert about: one subject per series (a pair's passes in the window),
and one per event known only from received CDMs.

A subject's level and Pc are the best source's (screener.risk.attention.best_source): the
level the exports, the run summary and --fail-on-act use.  Its previous level and Pc are the
same series' in the run before (for escalation).
"""

from __future__ import annotations

import dataclasses

from ..risk.attention import LEVEL_RANK, ROUTINE
from ..risk.series import STORED, group, series_key
from ..timeutil import parse_iso


@dataclasses.dataclass
class Subject:
    key: str                        # series key: "<primary>x<secondary>"
    primary: str
    primary_name: str
    secondary: str
    secondary_name: str
    level: str                      # best source
    set_by: str                     # "set by our screening", "set by received CDM ..."
    source: str                     # ours | both | received
    pc: float                       # the series' Pc (its worst pass)
    miss_km: float                  # the worst pass's miss distance
    tca: str                        # the worst pass's TCA (ISO 8601 UTC)
    first_act_tca_unix_s: float | None   # the earliest pass at the act level
    first_tca_unix_s: float
    last_tca_unix_s: float
    passes: int
    event_id: int | None
    previous_level: str | None      # the series' level in the previous run (None: not in it)
    previous_pc: float | None

    @property
    def rank(self) -> int:
        return LEVEL_RANK[self.level]

    def to_json(self, now_unix_s: float) -> dict:
        return {"series": self.key, "primary": self.primary, "primary_name": self.primary_name,
                "secondary": self.secondary, "secondary_name": self.secondary_name,
                "level": self.level, "level_set_by": self.set_by, "source": self.source,
                "pc": self.pc, "miss_km": self.miss_km, "tca": self.tca,
                "hours_to_tca": round((unix_of(self.tca) - now_unix_s) / 3600.0, 2),
                "passes": self.passes, "event_id": self.event_id,
                "previous_level": self.previous_level, "previous_pc": self.previous_pc}


def unix_of(iso: str) -> float:
    return parse_iso(iso).timestamp()


def run_subjects(encs: list[dict], received_only: list[dict], from_unix_s: float) -> list[Subject]:
    """Subjects of a run from its exported encounters (exports.write.run_encounters) and its
    received-only events (exports.write.received_only_events), most urgent first; passes with
    TCA before from_unix_s (the alert's time) are over and left out."""
    out = []
    encs = [e for e in encs if unix_of(e["tca"]) >= from_unix_s]
    received_only = [r for r in received_only if unix_of(r["tca"]) >= from_unix_s]
    for g in group(encs, STORED):
        w = g.worst
        level = min((e["attention"] for e in g.members), key=LEVEL_RANK.__getitem__)
        top = min(g.members, key=lambda e: (LEVEL_RANK[e["attention"]], -(e.get("pc") or 0.0)))
        acts = [unix_of(e["tca"]) for e in g.members if e["attention"] == "act"]
        prev = [e["previous"] for e in g.members if e.get("previous")]
        out.append(Subject(
            g.key, g.primary, w["primary_name"], g.secondary, w["secondary_name"], level,
            top.get("attention_set_by", ""), "both" if any(e.get("source") == "both" for e in g.members)
            else "ours", g.pc, w["miss_km"], w["tca"], min(acts) if acts else None,
            unix_of(g.members[0]["tca"]), unix_of(g.members[-1]["tca"]), g.count, w.get("event_id"),
            min((p.get("attention") or ROUTINE for p in prev), key=LEVEL_RANK.__getitem__) if prev else None,
            max(p.get("pc") or 0.0 for p in prev) if prev else None))
    for r in received_only:
        t = unix_of(r["tca"])
        out.append(Subject(
            series_key(r["object1"], r["object2"]), r["object1"], r["object1_name"], r["object2"],
            r["object2_name"], r["attention"],
            f"set by received CDM {r['received'][-1]['message_id']} (our screening does not see it)",
            "received", r["pc"], r["miss_km"], r["tca"], t if r["attention"] == "act" else None,
            t, t, 0, None, None, None))
    out.sort(key=lambda s: (s.rank, -s.pc, s.miss_km))
    return out
