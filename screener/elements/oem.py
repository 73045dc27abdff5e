"""CCSDS Orbit Ephemeris Message (CCSDS 502.0-B-3), KVN form: segments, states, covariance."""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np

from ..constants import MAX_RADIUS_KM, RE_WGS84_KM
from ..errors import ParseError
from ..textfile import clean_name, clean_text, read_text
from .ids import INTERNATIONAL_DESIGNATOR, canonical_id, object_id_problem
from ..timeutil import datetime_to_jd, parse_iso

_KVN = re.compile(r"^\s*([A-Z0-9_]+)\s*=\s*(.*?)\s*$")
SUPPORTED_FRAMES = ("TEME", "GCRF", "EME2000", "ICRF", "ITRF", "ITRF2000", "ITRF-93", "ITRF-97")


@dataclasses.dataclass
class OemCovariance:
    epoch_jd: float
    epoch_fr: float
    frame: str                # COV_REF_FRAME (RTN/RSW/TNW or the segment's REF_FRAME)
    cov_km: np.ndarray        # 6x6, km and km/s units (km^2, km^2/s, km^2/s^2)


@dataclasses.dataclass
class OemSegment:
    object_name: str
    object_id: str
    center: str
    frame: str
    time_system: str
    start_jd: float           # whole day; all times below are seconds from (start_jd, 0)
    t_s: np.ndarray           # seconds from start_jd (whole Julian day), float64, ascending
    r_km: np.ndarray          # (n, 3) in `frame`
    v_km_s: np.ndarray        # (n, 3)
    useable_start_s: float
    useable_stop_s: float
    interpolation: str
    degree: int
    covariances: list[OemCovariance]
    line: int                 # line of META_START


@dataclasses.dataclass(frozen=True)
class OemGap:
    """A stretch inside a segment with no ephemeris lines for longer than GAP_STEPS steps:
    never interpolated across (the segment is split there)."""
    line: int                 # the ephemeris line after the gap
    start_jd: float
    start_s: float            # from start_jd
    stop_s: float

    @property
    def duration_s(self) -> float:
        return self.stop_s - self.start_s


@dataclasses.dataclass
class Oem:
    path: str
    originator: str
    segments: list[OemSegment]
    gaps: list[OemGap] = dataclasses.field(default_factory=list)
    catalog_id: str = ""    # set when the inputs tie this ephemeris to a catalog number

    @property
    def object_id(self) -> str:
        """The object's one id: its catalog number where known (OBJECT_ID may be one, or the
        inputs matched the designator to an element set), else the file's OBJECT_ID."""
        return self.catalog_id or canonical_id(self.segments[0].object_id)

    @property
    def intl_designator(self) -> str:
        oid = self.segments[0].object_id
        return oid if INTERNATIONAL_DESIGNATOR.match(oid) else ""

    @property
    def object_name(self) -> str:
        return self.segments[0].object_name


def _epoch(text: str, path: str, line: int) -> tuple[float, float]:
    try:
        return datetime_to_jd(parse_iso(text))
    except ValueError as exc:
        raise ParseError(f"unparseable epoch: {exc}", path, line, 1) from None


def read_oem(path: str, text: str | None = None) -> Oem:
    """Parse an OEM file; every problem is a ParseError with file and line."""
    text = read_text(path, "OEM") if text is None else clean_text(text)
    lines = text.splitlines()
    header: dict[str, str] = {}
    segments: list[OemSegment] = []
    i, n = 0, len(lines)
    saw_version = False
    while i < n:
        s = lines[i].strip()
        if not s or s.startswith("COMMENT"):
            i += 1
            continue
        if s == "META_START":
            seg, line_of, i = _segment(lines, i, path)
            segments.append((seg, line_of))
            continue
        m = _KVN.match(s)
        if not m:
            raise ParseError(f"unexpected line outside a segment: {s[:40]!r}", path, i + 1, 1)
        header[m.group(1)] = m.group(2)
        saw_version |= m.group(1) == "CCSDS_OEM_VERS"
        i += 1
    if not saw_version:
        raise ParseError("missing CCSDS_OEM_VERS header keyword", path, 1)
    if not segments:
        raise ParseError("no META_START segment found (truncated file?)", path, n)
    parts, gaps = [], []
    for seg, line_of in segments:
        parts += _split_at_gaps(seg, line_of, gaps)
    return Oem(path=path, originator=header.get("ORIGINATOR", ""), segments=parts, gaps=gaps)


GAP_STEPS = 3.0     # a step longer than this many times the segment's median step is a gap


def _split_at_gaps(seg: OemSegment, line_of: list[int], gaps: list) -> list[OemSegment]:
    dt = np.diff(seg.t_s)
    cut = np.nonzero(dt > GAP_STEPS * float(np.median(dt)))[0]
    if not len(cut):
        return [seg]
    out, a = [], 0
    for c in [*cut, len(seg.t_s) - 1]:
        b = c + 1
        if b - a >= 2:
            t0, t1 = seg.t_s[a], seg.t_s[b - 1]
            out.append(dataclasses.replace(
                seg, t_s=seg.t_s[a:b], r_km=seg.r_km[a:b], v_km_s=seg.v_km_s[a:b],
                useable_start_s=max(seg.useable_start_s, t0), useable_stop_s=min(seg.useable_stop_s, t1),
                covariances=[cv for cv in seg.covariances
                             if t0 <= ((cv.epoch_jd - seg.start_jd) + cv.epoch_fr) * 86400.0 <= t1]))
        a = b
    for c in cut:
        gaps.append(OemGap(line_of[c + 1], seg.start_jd, float(seg.t_s[c]), float(seg.t_s[c + 1])))
    return out


def _segment(lines: list[str], i: int, path: str) -> tuple[OemSegment, list[int], int]:
    meta_line = i + 1
    meta: dict[str, tuple[str, int]] = {}
    i += 1
    n = len(lines)
    while i < n and lines[i].strip() != "META_STOP":
        s = lines[i].strip()
        if s and not s.startswith("COMMENT"):
            m = _KVN.match(s)
            if not m:
                raise ParseError(f"not a KEY = value line in metadata: {s[:40]!r}", path, i + 1, 1)
            meta[m.group(1)] = (m.group(2), i + 1)
        i += 1
    if i >= n:
        raise ParseError("META_START without META_STOP (truncated file)", path, meta_line)
    for key in ("OBJECT_NAME", "OBJECT_ID", "CENTER_NAME", "REF_FRAME", "TIME_SYSTEM",
                "START_TIME", "STOP_TIME"):
        if key not in meta:
            raise ParseError(f"missing required OEM metadata keyword {key}", path, meta_line)
    why = object_id_problem(meta["OBJECT_ID"][0])
    if why:
        raise ParseError(why, path, meta["OBJECT_ID"][1])
    frame = meta["REF_FRAME"][0].upper()
    if frame not in SUPPORTED_FRAMES:
        raise ParseError(f"REF_FRAME {frame} not supported (use one of {', '.join(SUPPORTED_FRAMES)})",
                         path, meta["REF_FRAME"][1])
    ts = meta["TIME_SYSTEM"][0].upper()
    if ts != "UTC":
        raise ParseError(f"TIME_SYSTEM {ts} not supported; write the OEM in UTC", path,
                         meta["TIME_SYSTEM"][1])
    if meta["CENTER_NAME"][0].upper() != "EARTH":
        raise ParseError("CENTER_NAME must be EARTH", path, meta["CENTER_NAME"][1])
    start_jd, start_fr = _epoch(meta["START_TIME"][0], path, meta["START_TIME"][1])
    stop_jd, stop_fr = _epoch(meta["STOP_TIME"][0], path, meta["STOP_TIME"][1])

    def secs(jd, fr):
        return (jd - start_jd) * 86400.0 + fr * 86400.0

    u0 = meta.get("USEABLE_START_TIME")
    u1 = meta.get("USEABLE_STOP_TIME")
    useable_start = secs(*_epoch(u0[0], path, u0[1])) if u0 else secs(start_jd, start_fr)
    useable_stop = secs(*_epoch(u1[0], path, u1[1])) if u1 else secs(stop_jd, stop_fr)
    interp = meta.get("INTERPOLATION", ("LAGRANGE", 0))[0].upper()
    try:
        degree = int(meta.get("INTERPOLATION_DEGREE", ("7", 0))[0])
    except ValueError:
        raise ParseError("INTERPOLATION_DEGREE is not an integer", path,
                         meta["INTERPOLATION_DEGREE"][1]) from None
    i += 1
    t_list, rv_list, covs, line_of = [], [], [], []
    while i < n:
        s = lines[i].strip()
        if not s or s.startswith("COMMENT"):
            i += 1
            continue
        if s == "META_START":
            break
        if s == "COVARIANCE_START":
            i = _covariances(lines, i, path, frame, covs)
            continue
        parts = s.split()
        if _KVN.match(s):
            break  # next message's header keyword
        if len(parts) not in (7, 10):
            raise ParseError(f"ephemeris line has {len(parts)} fields, expected 7 or 10",
                             path, i + 1, 1)
        jd, fr = _epoch(parts[0], path, i + 1)
        try:
            vals = [float(x) for x in parts[1:7]]
        except ValueError:
            raise ParseError("non-numeric value in ephemeris line", path, i + 1,
                             len(lines[i]) - len(lines[i].lstrip()) + len(parts[0]) + 2) from None
        if not all(math.isfinite(x) for x in vals):
            raise ParseError("non-finite value (NaN or infinity) in ephemeris line", path, i + 1, 1)
        t = secs(jd, fr)
        if t_list and t <= t_list[-1]:
            raise ParseError("ephemeris epochs must increase within a segment", path, i + 1, 1)
        t_list.append(t)
        rv_list.append(vals)
        line_of.append(i + 1)
        i += 1
    if len(t_list) < 2:
        raise ParseError("segment has fewer than two ephemeris lines", path, meta_line)
    rv = np.array(rv_list)
    radius = np.linalg.norm(rv[:, :3], axis=1)
    bad = np.nonzero((radius <= RE_WGS84_KM - 100.0) | (radius >= MAX_RADIUS_KM))[0]
    if len(bad):
        raise ParseError(f"ephemeris position {radius[bad[0]]:.1f} km from the Earth's centre is "
                         f"not an Earth orbit", path, line_of[bad[0]])
    seg = OemSegment(
        object_name=clean_name(meta["OBJECT_NAME"][0]), object_id=meta["OBJECT_ID"][0],
        center="EARTH", frame=frame, time_system=ts, start_jd=start_jd,
        t_s=np.array(t_list), r_km=rv[:, :3], v_km_s=rv[:, 3:],
        useable_start_s=max(useable_start, t_list[0]), useable_stop_s=min(useable_stop, t_list[-1]),
        interpolation=interp, degree=max(1, degree), covariances=covs, line=meta_line,
    )
    return seg, line_of, i


def _covariances(lines, i, path, frame, out) -> int:
    i += 1
    n = len(lines)
    while i < n and lines[i].strip() != "COVARIANCE_STOP":
        s = lines[i].strip()
        if not s or s.startswith("COMMENT"):
            i += 1
            continue
        m = _KVN.match(s)
        if not m or m.group(1) != "EPOCH":
            raise ParseError("covariance block must start with EPOCH =", path, i + 1, 1)
        jd, fr = _epoch(m.group(2), path, i + 1)
        i += 1
        cov_frame = frame
        m = _KVN.match(lines[i].strip()) if i < n else None
        if m and m.group(1) == "COV_REF_FRAME":
            cov_frame = m.group(2).upper()
            i += 1
        vals: list[float] = []
        for row in range(6):
            if i >= n:
                raise ParseError("covariance block truncated", path, i)
            parts = lines[i].split()
            if len(parts) != row + 1:
                raise ParseError(f"covariance row {row + 1} has {len(parts)} values, expected {row + 1}",
                                 path, i + 1, 1)
            try:
                vals += [float(x) for x in parts]
            except ValueError:
                raise ParseError("non-numeric covariance value", path, i + 1, 1) from None
            i += 1
        c = np.zeros((6, 6))
        c[np.tril_indices(6)] = vals
        c = c + np.tril(c, -1).T
        out.append(OemCovariance(jd, fr, cov_frame, c))
    if i >= n:
        raise ParseError("COVARIANCE_START without COVARIANCE_STOP (truncated file)", path, i)
    return i + 1


@dataclasses.dataclass
class SegmentOut:
    """One segment to write: t_s seconds from the whole Julian day start_jd."""
    start_jd: float
    t_s: np.ndarray
    r_km: np.ndarray
    v_km_s: np.ndarray
    comments: tuple[str, ...] = ()
    covariance: tuple[OemCovariance, ...] = ()


def format_oem(object_name: str, object_id: str, segments: list[SegmentOut], frame: str = "TEME",
               originator: str = "screener", degree: int = 7, creation: str | None = None,
               comments: tuple[str, ...] = ()) -> str:
    """OEM KVN text (CCSDS 502.0-B-3) of one object in one or more segments."""
    from ..timeutil import iso_z, jd_to_datetime

    def iso(jd, t):
        return iso_z(jd_to_datetime(jd, t / 86400.0), 6)[:-1]

    first = segments[0]
    out = ["CCSDS_OEM_VERS = 2.0", *(f"COMMENT {c}" for c in comments),
           f"CREATION_DATE = {creation or iso(first.start_jd, first.t_s[0])}",
           f"ORIGINATOR = {originator}"]
    for seg in segments:
        out += ["", "META_START", f"OBJECT_NAME = {object_name}", f"OBJECT_ID = {object_id}",
                "CENTER_NAME = EARTH", f"REF_FRAME = {frame}", "TIME_SYSTEM = UTC",
                f"START_TIME = {iso(seg.start_jd, seg.t_s[0])}",
                f"STOP_TIME = {iso(seg.start_jd, seg.t_s[-1])}",
                "INTERPOLATION = LAGRANGE", f"INTERPOLATION_DEGREE = {degree}", "META_STOP", ""]
        out += [f"COMMENT {c}" for c in seg.comments]
        for t, r, v in zip(seg.t_s, seg.r_km, seg.v_km_s):
            out.append(f"{iso(seg.start_jd, t)} {r[0]:.6f} {r[1]:.6f} {r[2]:.6f} "
                       f"{v[0]:.9f} {v[1]:.9f} {v[2]:.9f}")
        if seg.covariance:
            out += ["", "COVARIANCE_START"]
            for c in seg.covariance:
                out.append(f"EPOCH = {iso(c.epoch_jd, c.epoch_fr * 86400.0)}")
                out.append(f"COV_REF_FRAME = {c.frame}")
                for row in range(6):
                    out.append(" ".join(f"{c.cov_km[row, k]: .7e}" for k in range(row + 1)))
            out.append("COVARIANCE_STOP")
    return "\n".join(out) + "\n"


def write_oem(path: str, object_name: str, object_id: str, start_jd: float,
              t_s: np.ndarray, r_km: np.ndarray, v_km_s: np.ndarray, frame: str = "TEME",
              originator: str = "screener", degree: int = 7,
              covariance: list[OemCovariance] | None = None, creation: str | None = None) -> None:
    """Write one-segment OEM KVN.  t_s counts seconds from the whole Julian day start_jd."""
    text = format_oem(object_name, object_id,
                      [SegmentOut(start_jd, t_s, r_km, v_km_s, covariance=tuple(covariance or ()))],
                      frame=frame, originator=originator, degree=degree, creation=creation)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(text)
