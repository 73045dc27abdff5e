"""Taking received CDMs into the store: read and check each file (KVN or XML), recompute its
Pc with our methods and hard-body radius beside the sender's, store it once, join it to our
event of the same pair and TCA."""

from __future__ import annotations

import dataclasses
import os
from typing import Callable

from ..elements.ids import canonical_id
from ..errors import ParseError, ScreenerError
from ..risk.assess import assess_many
from ..risk.cdm import read_cdm
from ..store.received import Message, take_in
from ..textfile import open_regular
from .inputs import file_digest
from ..timeutil import iso_z, parse_iso

Report = Callable[[str], None]
DEFAULT_TCA_TOLERANCE_S = 600.0     # as the run store's own event matching (config default)


@dataclasses.dataclass
class Intake:
    taken: int = 0
    known: int = 0
    refused: int = 0
    skipped: int = 0


def files_of(paths: list[str]) -> list[tuple[str, bool]]:
    """(file, given by name): files given, and every regular file (sorted) in each folder."""
    out = []
    for p in paths:
        if os.path.isdir(p):
            out += [(os.path.join(p, n), False) for n in sorted(os.listdir(p))
                    if os.path.isfile(os.path.join(p, n)) and not n.startswith(".")]
        else:
            out.append((p, True))
    return out


def looks_like_cdm(path: str) -> bool:
    """Whether a file in a folder is meant as a CDM (KVN header keyword or an XML <cdm> root
    near its start); other files there are reported and skipped, not refused."""
    try:
        with open_regular(path) as fh:
            head = fh.read(4096).decode("utf-8", "replace")
    except (OSError, ScreenerError):
        return True          # unreadable: let the reader say why
    return "CCSDS_CDM_VERS" in head or "<cdm" in head



def _unix(text: str) -> float:
    return parse_iso(text).timestamp()


def parse_file(path: str):
    """One file read and checked (ParseError naming file, line and keyword)."""
    if not os.path.exists(path):
        raise ParseError("no such file", path)
    return read_cdm(path)


def messages_of(parsed: list[tuple[str, object]], hbr_m) -> list[Message]:
    """Checked CDMs as assessed messages, their Pc figures computed together (risk.assess_many:
    the same rules as one at a time).  hbr_m: metres, or a function of the two objects' ids."""
    staged = []
    for path, cdm in parsed:
        o1, o2 = cdm.objects
        ids = canonical_id(o1.fields["OBJECT_DESIGNATOR"]), canonical_id(o2.fields["OBJECT_DESIGNATOR"])
        hbr = hbr_m(*ids) if callable(hbr_m) else hbr_m
        staged.append((path, cdm, ids, hbr, (o1.r_km, o1.v_km_s, o1.cov_rtn_m[:3, :3] * 1e-6,
                                             o2.r_km, o2.v_km_s, o2.cov_rtn_m[:3, :3] * 1e-6,
                                             hbr, "CDM covariance")))
    risks = assess_many([x[4] for x in staged])
    return [_message(path, cdm, ids, hbr, risk)
            for (path, cdm, ids, hbr, _args), risk in zip(staged, risks)]


def read_message(path: str, hbr_m) -> Message:
    return messages_of([(path, parse_file(path))], hbr_m)[0]


def _message(path, cdm, ids, hbr_m, risk) -> Message:
    o1, o2 = cdm.objects
    sender = cdm.relative.get("COLLISION_PROBABILITY")
    try:
        pc_sender = float(sender) if sender not in (None, "") else None
    except ValueError:
        pc_sender = None
    rel = {k[len("RELATIVE_POSITION_"):].lower() + "_m": float(v) for k, v in cdm.relative.items()
           if k.startswith("RELATIVE_POSITION_") and _is_number(v)}
    data = {"pc_method": risk["pc_method"], "pc_quadrature": risk["pc_quadrature"],
            "sigma_major_m": risk["sigma_major_m"], "sigma_minor_m": risk["sigma_minor_m"],
            "relative_speed_km_s": risk["relative_speed_km_s"],
            "pc_sender_method": cdm.relative.get("COLLISION_PROBABILITY_METHOD"),
            "relative_position_rtn": rel, "ref_frames": [o1.fields["REF_FRAME"], o2.fields["REF_FRAME"]],
            "object1_state": [*o1.r_km, *o1.v_km_s], "object2_state": [*o2.r_km, *o2.v_km_s],
            "message_for": cdm.header.get("MESSAGE_FOR") or cdm.relative.get("MESSAGE_FOR")}
    return Message(
        message_id=cdm.header["MESSAGE_ID"], originator=cdm.header["ORIGINATOR"],
        creation_utc=iso_z(parse_iso(cdm.header["CREATION_DATE"]), 3),
        creation_unix_s=_unix(cdm.header["CREATION_DATE"]), path=os.path.abspath(path),
        sha256=file_digest(path)["sha256"], object1_id=ids[0], object1_name=o1.fields.get("OBJECT_NAME", ""),
        object2_id=ids[1], object2_name=o2.fields.get("OBJECT_NAME", ""),
        tca_utc=iso_z(parse_iso(cdm.tca_text), 6), tca_unix_s=_unix(cdm.tca_text),
        miss_km=risk["miss_km"], pc_sender=pc_sender, pc=risk["pc"], pc_max=risk["pc_max"],
        dilution=bool(risk["dilution_region"]), hbr_m=hbr_m, data=data, text=_text_of(path))


def _text_of(path: str) -> str:
    """The file as it arrived (already read and checked once; kept so the message can be
    written back out as it came)."""
    with open_regular(path) as fh:
        return fh.read().decode("utf-8", "replace")


def _is_number(v: str) -> bool:
    try:
        float(v)
    except ValueError:
        return False
    return True


def receive(store, paths: list[str], hbr_m, report: Report, strict: bool = False,
            tol_s: float = DEFAULT_TCA_TOLERANCE_S) -> Intake:
    """Take files in; one report line per file.  strict: check every file first and store
    nothing if one is refused."""
    out = Intake()
    read: list[tuple[str, object, str]] = []
    for path, named in files_of(paths):
        if not named and not looks_like_cdm(path):
            report(f"skipped: {path}: not a CDM")
            out.skipped += 1
            continue
        try:
            read.append((path, parse_file(path), ""))
        except ParseError as exc:
            read.append((path, None, str(exc)))
        except ScreenerError as exc:
            read.append((path, None, f"{path}: {exc}"))
    good = iter(messages_of([(p, c) for p, c, _w in read if c is not None], hbr_m))
    read = [(p, next(good) if c is not None else None, w) for p, c, w in read]
    bad = [why for _p, m, why in read if m is None]
    if strict and bad:
        for why in bad:
            report(f"refused: {why}")
        report(f"nothing taken in (--strict): {len(bad)} of {len(read)} files refused")
        out.refused = len(bad)
        return out
    for path, m, why in read:
        if m is None:
            report(f"refused: {why}")
            out.refused += 1
            continue
        try:
            status, ev = take_in(store, m, tol_s)
        except ValueError as exc:
            report(f"refused: {path}: {exc}")
            out.refused += 1
            continue
        if status == "known":
            out.known += 1
            report(f"already in: {path}: {m.message_id}")
            continue
        out.taken += 1
        theirs = f"{m.pc_sender:.2e}" if m.pc_sender is not None else "not given"
        report(f"taken in: {path}: {m.message_id} {m.object1_name or m.object1_id} x "
               f"{m.object2_name or m.object2_id} TCA {m.tca_utc[:19]}Z miss {m.miss_km * 1e3:.0f} m "
               f"Pc ours {m.pc:.2e} theirs {theirs}; "
               + (f"joins our event {ev}" if ev is not None else "no event of ours"))
    return out
