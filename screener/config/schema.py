"""The configuration of a recurring screening, read from TOML (stdlib tomllib).

Every unknown key and every bad value is a ConfigError naming the file, the line and the key.
Relative paths are taken from the configuration file's folder.
"""

from __future__ import annotations

import dataclasses
import math
import os
import tomllib
from typing import Any

from ..errors import ConfigError, ParseError
from ..textfile import read_bytes
from ..risk.attention import DEFAULT_ACT_PC, DEFAULT_WATCH_PC, Thresholds
from ..risk.covariance import SigmaGrowth
from .alerts import AlertRule, AlertsConfig, MailRelay, read_alerts
from .lines import key_lines

REGIMES = ("LEO", "MEO", "GEO", "HEO")
DEFAULT_RADIUS_M = 5.0
CDM_CHOICES = ("none", "act", "watch", "all")
REPORT_CHOICES = ("none", "text", "html")


@dataclasses.dataclass
class FleetMember:
    radius_m: float | None = None
    maneuverable: bool | None = None


@dataclasses.dataclass
class CovarianceConfig:
    objects: dict[str, SigmaGrowth] = dataclasses.field(default_factory=dict)
    regimes: dict[str, SigmaGrowth] = dataclasses.field(default_factory=dict)
    use_history: bool = True

    def mapping(self) -> dict[str, SigmaGrowth]:
        return {**self.regimes, **self.objects}


@dataclasses.dataclass
class OutputsConfig:
    folder: str | None = None          # None: exports only on request
    json: bool = True
    csv: bool = True
    cdm: str = "act"                   # write CDMs for events at or above this level
    cdm_per: str = "series"            # one CDM per series (its worst pass) or per "encounter"
    report: str = "html"


@dataclasses.dataclass
class Config:
    path: str | None
    name: str
    fleet_files: list[str]
    catalog_sources: list[str]
    start: str = "today"               # "today" (00:00 UTC of the run day), "now", or ISO 8601
    window_days: float = 3.0
    volume_shape: str = "sphere"
    radius_km: float = 5.0
    ric_km: tuple[float, float, float] | None = None
    workers: int = 2
    dask_scheduler: str | None = None  # e.g. "tls://10.0.0.5:8786": run tasks on that cluster
    dask_tls: dict = dataclasses.field(default_factory=dict)   # ca_file, cert_file, key_file
    dask_allow_plain_tcp: bool = False  # tcp:// to a host other than loopback
    max_elset_age_days: float = 7.0
    max_input_drop: float = 0.5        # warn when the catalog or fleet shrinks by more than this
    fail_on_input_drop: bool = False   # ... and refuse to screen (exit 2) instead
    strict: bool = False
    fleet_default_radius_m: float = DEFAULT_RADIUS_M
    catalog_default_radius_m: float = DEFAULT_RADIUS_M
    catalog_as_of: str | None = None   # ISO 8601: use only element sets with epochs up to this
    members: dict[str, FleetMember] = dataclasses.field(default_factory=dict)
    object_radius_m: dict[str, float] = dataclasses.field(default_factory=dict)
    covariance: CovarianceConfig = dataclasses.field(default_factory=CovarianceConfig)
    thresholds: Thresholds = dataclasses.field(default_factory=Thresholds)
    event_tca_tolerance_s: float = 600.0
    outputs: OutputsConfig = dataclasses.field(default_factory=OutputsConfig)
    store: str | None = None
    received_folder: str | None = None  # received CDMs taken in at the start of each run
    received_tca_diff_s: float = 10.0   # disagreement with a received CDM: TCA, miss, Pc factor
    received_miss_diff_km: float = 1.0
    received_pc_factor: float = 10.0
    alerts: AlertsConfig = dataclasses.field(default_factory=AlertsConfig)
    # where each per-object entry was written ("file:line"), keyed by (table, object id), so
    # an entry that matches no object can be reported at its line
    object_entries: dict[tuple[str, str], str] = dataclasses.field(default_factory=dict)

    def radius_m(self, object_id: str, is_primary: bool) -> float:
        m = self.members.get(object_id)
        if m and m.radius_m is not None:
            return m.radius_m
        if object_id in self.object_radius_m:
            return self.object_radius_m[object_id]
        return self.fleet_default_radius_m if is_primary else self.catalog_default_radius_m

    @classmethod
    def from_snapshot(cls, d: dict) -> "Config":
        """The configuration a stored run was made with (the inverse of snapshot())."""
        d = dict(d)
        d["members"] = {k: FleetMember(**v) for k, v in (d.get("members") or {}).items()}
        cov = d.get("covariance") or {}
        d["covariance"] = CovarianceConfig(
            objects={k: _growth(v) for k, v in (cov.get("objects") or {}).items()},
            regimes={k: _growth(v) for k, v in (cov.get("regimes") or {}).items()},
            use_history=bool(cov.get("use_history", True)))
        d["thresholds"] = Thresholds(**(d.get("thresholds") or {}))
        d["outputs"] = OutputsConfig(**(d.get("outputs") or {}))
        al = d.get("alerts") or {}
        d["alerts"] = AlertsConfig(rules=[AlertRule(**r) for r in al.get("rules", [])],
                                   mail=MailRelay(**al["mail"]) if al.get("mail") else None)
        if d.get("ric_km") is not None:
            d["ric_km"] = tuple(d["ric_km"])
        known = {f.name for f in dataclasses.fields(cls)}
        return cls(**{k: v for k, v in d.items() if k in known})

    def snapshot(self) -> dict:
        d = dataclasses.asdict(self)
        d.pop("object_entries")
        d["thresholds"] = {"act_pc": self.thresholds.act_pc, "watch_pc": self.thresholds.watch_pc}
        d["covariance"] = {
            "objects": {k: dataclasses.asdict(v) for k, v in self.covariance.objects.items()},
            "regimes": {k: dataclasses.asdict(v) for k, v in self.covariance.regimes.items()},
            "use_history": self.covariance.use_history}
        return d


def _growth(v: dict) -> SigmaGrowth:
    return SigmaGrowth(tuple(v["sigma_km"]), tuple(v.get("growth_km_per_day", (0.0, 0.0, 0.0))))


class _Reader:
    def __init__(self, path: str, text: str):
        self.path = path
        self.lines = key_lines(text)

    def where(self, keys: tuple[str, ...]) -> str:
        for k in range(len(keys), 0, -1):
            if keys[:k] in self.lines:
                return f"{self.path}:{self.lines[keys[:k]]}"
        return self.path

    def fail(self, keys: tuple[str, ...], msg: str):
        raise ConfigError(f"{self.where(keys)}: {'.'.join(keys)}: {msg}")

    def table(self, d: Any, keys: tuple[str, ...], allowed: set[str] | None) -> dict:
        if not isinstance(d, dict):
            self.fail(keys, "must be a table")
        if allowed is not None:
            for k in d:
                if k not in allowed:
                    self.fail(keys + (k,), f"unknown key (allowed here: {', '.join(sorted(allowed))})")
        return d

    def num(self, d: dict, keys: tuple[str, ...], default, lo=None, hi=None, positive=False):
        k = keys[-1]
        if k not in d:
            return default
        v = d[k]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            self.fail(keys, f"must be a number, got {v!r}")
        if positive and not v > 0:
            self.fail(keys, f"must be positive, got {v!r}")
        if lo is not None and v < lo or hi is not None and v > hi:
            self.fail(keys, f"must be between {lo} and {hi}, got {v!r}")
        return float(v)

    def boolean(self, d, keys, default):
        if keys[-1] not in d:
            return default
        if not isinstance(d[keys[-1]], bool):
            self.fail(keys, f"must be true or false, got {d[keys[-1]]!r}")
        return d[keys[-1]]

    def string(self, d, keys, default, choices=None):
        if keys[-1] not in d:
            return default
        v = d[keys[-1]]
        if not isinstance(v, str):
            self.fail(keys, f"must be a string, got {v!r}")
        if choices and v not in choices:
            self.fail(keys, f"must be one of {', '.join(choices)}, got {v!r}")
        return v

    def paths(self, d, keys, base: str, required: bool) -> list[str]:
        v = d.get(keys[-1])
        if v is None:
            if required:
                self.fail(keys, "is required (a list of files or folders)")
            return []
        if isinstance(v, str):
            v = [v]
        if not isinstance(v, list) or not all(isinstance(x, str) for x in v) or not v:
            self.fail(keys, "must be a list of file or folder paths")
        out = []
        for x in v:
            p = os.path.normpath(os.path.join(base, os.path.expanduser(x)))
            if not os.path.exists(p):
                self.fail(keys, f"{x}: no such file or folder (looked for {p})")
            out.append(p)
        return out

    def triple(self, d, keys, default=None):
        if keys[-1] not in d:
            return default
        v = d[keys[-1]]
        if (not isinstance(v, list) or len(v) != 3 or
                not all(isinstance(x, (int, float)) and not isinstance(x, bool) and x >= 0 for x in v)):
            self.fail(keys, f"must be three non-negative numbers [R, I, C], got {v!r}")
        return tuple(float(x) for x in v)

    def sigma(self, d, keys) -> SigmaGrowth:
        t = self.table(d, keys, {"sigma_rtn_km", "growth_rtn_km_per_day"})
        s = self.triple(t, keys + ("sigma_rtn_km",))
        if s is None:
            self.fail(keys + ("sigma_rtn_km",), "is required")
        if not all(x > 0 for x in s):
            self.fail(keys + ("sigma_rtn_km",), "all three sigmas must be positive")
        g = self.triple(t, keys + ("growth_rtn_km_per_day",), (0.0, 0.0, 0.0))
        return SigmaGrowth(s, g)


TOP = {"run", "fleet", "catalog", "volume", "covariance", "thresholds", "events", "outputs", "store",
       "received", "alerts"}


def load_config(path: str) -> Config:
    try:
        raw = read_bytes(path, "configuration")
    except ParseError as exc:
        raise ConfigError(str(exc)) from None
    text = raw.decode("utf-8", "replace")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path}: not valid TOML: {exc}") from None
    return _build(data, _Reader(path, text), os.path.dirname(os.path.abspath(path)), path)


def _build(data: dict, rd: _Reader, base: str, path: str | None) -> Config:
    rd.table(data, (), TOP)
    run = rd.table(data.get("run", {}), ("run",),
                   {"name", "start", "window_days", "workers", "max_elset_age_days", "strict",
                    "max_input_drop", "fail_on_input_drop",
                    "dask_scheduler", "dask_tls_ca_file", "dask_tls_cert_file",
                    "dask_tls_key_file", "dask_allow_plain_tcp"})
    fleet = rd.table(data.get("fleet", {}), ("fleet",), {"files", "default_radius_m", "objects"})
    cat = rd.table(data.get("catalog", {}), ("catalog",), {"sources", "default_radius_m", "objects", "as_of"})
    vol = rd.table(data.get("volume", {}), ("volume",), {"shape", "radius_km", "ric_km"})
    cov = rd.table(data.get("covariance", {}), ("covariance",), {"objects", "regimes", "use_history"})
    thr = rd.table(data.get("thresholds", {}), ("thresholds",), {"act_pc", "watch_pc"})
    ev = rd.table(data.get("events", {}), ("events",), {"tca_tolerance_s"})
    out = rd.table(data.get("outputs", {}), ("outputs",), {"folder", "json", "csv", "cdm", "cdm_per", "report"})
    st = rd.table(data.get("store", {}), ("store",), {"path"})
    rc = rd.table(data.get("received", {}), ("received",),
                  {"folder", "tca_diff_s", "miss_diff_km", "pc_factor"})

    cfg = Config(
        path=path,
        name=rd.string(run, ("run", "name"), "screening"),
        fleet_files=rd.paths(fleet, ("fleet", "files"), base, required=False),
        catalog_sources=rd.paths(cat, ("catalog", "sources"), base, required=True),
    )
    cfg.start = rd.string(run, ("run", "start"), "today")
    if cfg.start not in ("today", "now"):
        from ..timeutil import parse_start

        try:
            parse_start(cfg.start)
        except Exception as exc:  # noqa: BLE001 - re-raised with the key's line
            rd.fail(("run", "start"), f"not 'today', 'now' or an ISO 8601 time: {exc}")
    cfg.window_days = rd.num(run, ("run", "window_days"), 3.0, positive=True, hi=60.0)
    cfg.workers = int(rd.num(run, ("run", "workers"), 2, lo=1, hi=256))
    cfg.max_elset_age_days = rd.num(run, ("run", "max_elset_age_days"), 7.0, positive=True)
    cfg.strict = rd.boolean(run, ("run", "strict"), False)
    cfg.max_input_drop = rd.num(run, ("run", "max_input_drop"), 0.5, lo=0.0, hi=1.0)
    cfg.fail_on_input_drop = rd.boolean(run, ("run", "fail_on_input_drop"), False)
    cfg.dask_scheduler = rd.string(run, ("run", "dask_scheduler"), None)
    for key in ("ca_file", "cert_file", "key_file"):
        got = rd.paths(run, ("run", f"dask_tls_{key}"), base, required=False)
        if got:
            cfg.dask_tls[key] = got[0]
    cfg.dask_allow_plain_tcp = rd.boolean(run, ("run", "dask_allow_plain_tcp"), False)
    if cfg.dask_scheduler:
        from ..pipeline.cluster import address_problem

        why = address_problem(cfg.dask_scheduler, cfg.dask_allow_plain_tcp, cfg.dask_tls)
        if why:
            rd.fail(("run", "dask_scheduler"), why)

    cfg.fleet_default_radius_m = rd.num(fleet, ("fleet", "default_radius_m"), DEFAULT_RADIUS_M, positive=True)
    for oid, m in rd.table(fleet.get("objects", {}), ("fleet", "objects"), None).items():
        keys = ("fleet", "objects", oid)
        cfg.object_entries[("fleet.objects", oid)] = rd.where(keys)
        t = rd.table(m, keys, {"radius_m", "maneuverable"})
        cfg.members[oid] = FleetMember(rd.num(t, keys + ("radius_m",), None, positive=True),
                                       rd.boolean(t, keys + ("maneuverable",), None))
    cfg.catalog_as_of = rd.string(cat, ("catalog", "as_of"), None)
    if cfg.catalog_as_of is not None:
        from ..timeutil import parse_start

        try:
            parse_start(cfg.catalog_as_of)
        except Exception as exc:  # noqa: BLE001 - re-raised with the key's line
            rd.fail(("catalog", "as_of"), f"not an ISO 8601 time: {exc}")
    cfg.catalog_default_radius_m = rd.num(cat, ("catalog", "default_radius_m"), DEFAULT_RADIUS_M, positive=True)
    for oid, m in rd.table(cat.get("objects", {}), ("catalog", "objects"), None).items():
        keys = ("catalog", "objects", oid)
        cfg.object_entries[("catalog.objects", oid)] = rd.where(keys)
        t = rd.table(m, keys, {"radius_m"})
        r = rd.num(t, keys + ("radius_m",), None, positive=True)
        if r is not None:
            cfg.object_radius_m[oid] = r

    cfg.volume_shape = rd.string(vol, ("volume", "shape"), "sphere", ("sphere", "ellipsoid", "box"))
    cfg.radius_km = rd.num(vol, ("volume", "radius_km"), 5.0, positive=True, hi=500.0)
    cfg.ric_km = rd.triple(vol, ("volume", "ric_km"))
    if cfg.volume_shape != "sphere" and cfg.ric_km is None:
        rd.fail(("volume", "ric_km"), f"is required for shape = {cfg.volume_shape!r}")
    if cfg.ric_km is not None and not all(x > 0 for x in cfg.ric_km):
        rd.fail(("volume", "ric_km"), "all three half-sizes must be positive")

    cc = CovarianceConfig(use_history=rd.boolean(cov, ("covariance", "use_history"), True))
    for oid, t in rd.table(cov.get("objects", {}), ("covariance", "objects"), None).items():
        cfg.object_entries[("covariance.objects", oid)] = rd.where(("covariance", "objects", oid))
        cc.objects[oid] = rd.sigma(t, ("covariance", "objects", oid))
    for reg, t in rd.table(cov.get("regimes", {}), ("covariance", "regimes"), set(REGIMES)).items():
        cc.regimes[reg] = rd.sigma(t, ("covariance", "regimes", reg))
    cfg.covariance = cc

    act = rd.num(thr, ("thresholds", "act_pc"), DEFAULT_ACT_PC, positive=True, hi=1.0)
    watch = rd.num(thr, ("thresholds", "watch_pc"), DEFAULT_WATCH_PC, positive=True, hi=1.0)
    if watch > act:
        rd.fail(("thresholds", "watch_pc"), f"must not exceed act_pc ({act:g})")
    cfg.thresholds = Thresholds(act, watch)
    cfg.event_tca_tolerance_s = rd.num(ev, ("events", "tca_tolerance_s"), 600.0, positive=True, hi=3600.0)

    folder = rd.string(out, ("outputs", "folder"), None)
    cfg.outputs = OutputsConfig(
        folder=os.path.normpath(os.path.join(base, os.path.expanduser(folder))) if folder else None,
        json=rd.boolean(out, ("outputs", "json"), True),
        csv=rd.boolean(out, ("outputs", "csv"), True),
        cdm=rd.string(out, ("outputs", "cdm"), "act", CDM_CHOICES),
        cdm_per=rd.string(out, ("outputs", "cdm_per"), "series", ("series", "encounter")),
        report=rd.string(out, ("outputs", "report"), "html", REPORT_CHOICES))
    sp = rd.string(st, ("store", "path"), None)
    cfg.store = os.path.normpath(os.path.join(base, os.path.expanduser(sp))) if sp else None
    cfg.received_tca_diff_s = rd.num(rc, ("received", "tca_diff_s"), 10.0, positive=True)
    cfg.received_miss_diff_km = rd.num(rc, ("received", "miss_diff_km"), 1.0, positive=True)
    cfg.received_pc_factor = rd.num(rc, ("received", "pc_factor"), 10.0, lo=1.0)
    rf = rd.string(rc, ("received", "folder"), None)
    cfg.received_folder = os.path.normpath(os.path.join(base, os.path.expanduser(rf))) if rf else None
    if "alerts" in data:
        cfg.alerts = read_alerts(rd, data["alerts"], base)
    return cfg


def config_from_options(catalog: list[str], primaries: list[str] | None, start: str,
                        days: float, radius_km: float | None, ric_km: tuple | None,
                        workers: int, max_age_days: float, strict: bool,
                        hbr_m: float | None = None) -> Config:
    """A one-off configuration from `screen`-style command-line options."""
    cfg = Config(path=None, name="one-off", fleet_files=list(primaries or []),
                 catalog_sources=list(catalog), start=start, window_days=days,
                 workers=workers, max_elset_age_days=max_age_days, strict=strict)
    if ric_km:
        cfg.volume_shape, cfg.ric_km = "ellipsoid", tuple(ric_km)
    elif radius_km is not None:
        cfg.radius_km = radius_km
    if hbr_m is not None:
        cfg.fleet_default_radius_m = cfg.catalog_default_radius_m = hbr_m / 2.0
    return cfg

