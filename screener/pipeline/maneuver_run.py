"""One manoeuvre trade from an event in the store (or a received CDM) to its re-screen:
load the event, run the trade (maneuver/trade.py), write the chosen burn's OEM, screen that
trajectory against the run's catalog, list what it creates or worsens, keep it in the store."""

from __future__ import annotations

import dataclasses
import json
import math
from typing import Callable

import numpy as np

from .. import CAUTION, MANEUVER_CAUTION
from ..config.schema import Config
from ..errors import ScreenerError
from ..maneuver.burn import apply_burn
from ..maneuver.closest import Covariances
from ..maneuver.compare import Before, compare, rule_text
from ..maneuver.ephemeris_out import manoeuvred_oem_text, read_back
from ..maneuver.trade import (DEFAULT_DIRECTIONS, DEFAULT_LEADS_ORBITS, DEFAULT_MAX_DV_M_S,
                              BurnOption, Target, Trade, TradeEvent, burn_times, run_trade)
from ..maneuver.tracks import NumericalTrack, OemTrack, Sgp4Track
from ..propagation.cowell import DEFAULT_MODEL, ForceModel
from ..propagation.orbit import osculating
from ..timeutil import datetime_to_jd, iso_z, jd_to_datetime, parse_iso

Progress = Callable[[str, int, int], None]
Warn = Callable[[str], None]
CDM_WINDOW_AFTER_TCA_S = 86400.0     # a CDM-based trade screens to one day after TCA


@dataclasses.dataclass
class Context:
    """Where the event came from, for the re-screen."""
    event: TradeEvent
    cfg: Config | None = None           # the run's configuration (None: a CDM)
    primary_rec: object = None          # the primary's ElementSet, if it had one
    primary_oem: object = None
    before: list[Before] = dataclasses.field(default_factory=list)
    catalog_files: list[dict] = dataclasses.field(default_factory=list)
    tca_tol_s: float = 600.0


def _window(iso: str) -> tuple[float, float]:
    return datetime_to_jd(parse_iso(iso))


def _period_s(state: np.ndarray) -> float:
    size = osculating(state[:3], state[3:]).size
    if size is None:
        raise ScreenerError("the primary's state at TCA is not a bound orbit: no trade")
    return size.period_s


def event_from_store(store, event_id: int) -> Context:
    """The event's newest encounter, its run's window, element sets and covariances."""
    from ..elements.oem import read_oem
    from ..store.queries import element_sets, encounter_detail

    row = store.conn.execute("SELECT id, run_id FROM encounters WHERE event_id = ? ORDER BY run_id "
                             "DESC LIMIT 1", (event_id,)).fetchone()
    if row is None:
        raise ScreenerError(f"{store.path}: no event {event_id} in this store (the TUI's event view "
                            f"and `screener export` show event ids)")
    d = encounter_detail(store, row["id"])
    run = store.conn.execute("SELECT * FROM runs WHERE id = ?", (row["run_id"],)).fetchone()
    jd0, fr0 = _window(run["window_start_utc"])
    window_s = float(run["window_days"]) * 86400.0
    sets = element_sets(store, row["run_id"])
    ctx = Context(event=None)  # filled below
    prim_rec = sets.get((d["primary"], "primary")) or sets.get((d["primary"], "catalog"))
    if prim_rec is not None:
        primary = Sgp4Track(prim_rec, jd0, fr0)
        ctx.primary_rec = prim_rec
    else:
        src = store.conn.execute("SELECT source FROM elsets WHERE run_id = ? AND object_id = ? AND "
                                 "kind = 'OEM'", (row["run_id"], d["primary"])).fetchone()
        if src is None:
            raise ScreenerError(f"run {row['run_id']} kept no orbit for {d['primary']}")
        try:
            ctx.primary_oem = read_oem(src["source"])
        except OSError as exc:
            raise ScreenerError(f"{src['source']}: the primary's OEM of run {row['run_id']} cannot "
                                f"be read ({exc.strerror})") from None
        primary = OemTrack(ctx.primary_oem, jd0, fr0)
    sec_rec = sets.get((d["secondary"], "catalog")) or sets.get((d["secondary"], "primary"))
    if sec_rec is None:
        raise ScreenerError(f"run {row['run_id']} kept no element set for {d['secondary']}")
    tca_s = (parse_iso(d["tca"]) - jd_to_datetime(jd0, fr0)).total_seconds()
    p_state = np.array(d["primary_state_teme"], float)
    ev = TradeEvent(
        d["primary"], d["primary_name"], d["secondary"], d["secondary_name"], jd0, fr0, window_s,
        tca_s, float(d["miss_km"]), float(d["pc"]), float(d["relative_speed_km_s"]),
        _period_s(p_state), primary, Sgp4Track(sec_rec, jd0, fr0),
        Covariances(np.array(d["primary_cov_rtn_km2"]), np.array(d["secondary_cov_rtn_km2"]),
                    float(d["hbr_m"]), d["covariance_source"]),
        event_id=event_id, run_id=row["run_id"], encounter_id=row["id"],
        source=f"{store.path} event {event_id} (run {row['run_id']})")
    ctx.event = ev
    ctx.cfg = Config.from_snapshot(json.loads(run["config_json"]))
    ctx.tca_tol_s = ctx.cfg.event_tca_tolerance_s
    ctx.catalog_files = [f for f in json.loads(run["inputs_json"]) if f.get("role") == "catalog"]
    ctx.before = _before(store, row["run_id"], d["primary"])
    return ctx


def _before(store, run_id: int, primary_id: str) -> list[Before]:
    out = []
    for r in store.conn.execute("SELECT primary_id, secondary_id, tca_unix_s, miss_km, pc, attention "
                                "FROM encounters WHERE run_id = ? AND (primary_id = ? OR "
                                "secondary_id = ?)", (run_id, primary_id, primary_id)):
        other = r["secondary_id"] if r["primary_id"] == primary_id else r["primary_id"]
        out.append(Before(other, r["tca_unix_s"], r["miss_km"], r["pc"], r["attention"]))
    return out


def event_from_cdm(path: str, hbr_m: float, lead_s: float | None, model: ForceModel) -> Context:
    """A received CDM: both objects' TCA states propagated numerically (no element sets), from
    lead_s (default: the earliest default burn time) plus half an orbit before TCA to a day
    after it."""
    from ..propagation.frames import to_teme
    from ..risk.cdm import read_cdm

    cdm = read_cdm(path)
    tca = parse_iso(cdm.tca_text)
    o1, o2 = cdm.objects
    tjd, tfr = datetime_to_jd(tca)
    states = []
    for o in (o1, o2):
        r, v = to_teme(o.fields["REF_FRAME"], o.r_km[None], o.v_km_s[None], tjd, tfr, np.zeros(1))
        states.append(np.concatenate([r[0], v[0]]))
    period = _period_s(states[0])
    if lead_s is None:
        lead_s = max(DEFAULT_LEADS_ORBITS) * period
    before_s = lead_s + 0.5 * period
    jd0, fr0 = tjd, tfr - before_s / 86400.0
    window_s = before_s + CDM_WINDOW_AFTER_TCA_S
    tracks = [NumericalTrack(s, before_s, 0.0, window_s, jd0, fr0, model,
                             label=f"CDM state at TCA, numerically propagated ({model.describe()})")
              for s in states]
    names = [o.fields.get("OBJECT_NAME", "") or o.fields["OBJECT_DESIGNATOR"] for o in (o1, o2)]
    rho = states[1] - states[0]
    ev = TradeEvent(o1.fields["OBJECT_DESIGNATOR"], names[0], o2.fields["OBJECT_DESIGNATOR"],
                    names[1], jd0, fr0, window_s, before_s, float(np.linalg.norm(rho[:3])),
                    float("nan"), float(np.linalg.norm(rho[3:])), period, tracks[0], tracks[1],
                    Covariances(o1.cov_rtn_m[:3, :3] * 1e-6, o2.cov_rtn_m[:3, :3] * 1e-6, hbr_m,
                                "CDM covariance"), source=f"CDM {path}")
    return Context(event=ev)


def model_of(ctx: Context) -> ForceModel:
    """The numerical model for the primary: drag from its element set's B* (as SGP4 has it),
    else the default small-satellite value."""
    from ..propagation.cowell import model_for_bstar

    if ctx.primary_rec is not None:
        return model_for_bstar(ctx.primary_rec.bstar_per_earth_radius)
    return DEFAULT_MODEL


def parse_target(miss_km: float | None, pc: float | None, radial_km: float | None,
                 default_pc: float) -> Target:
    given = [(k, v) for k, v in (("miss", miss_km), ("pc", pc), ("radial", radial_km)) if v is not None]
    if len(given) > 1:
        raise ScreenerError("give one target: --target-miss-km, --target-pc or --target-radial-km")
    kind, value = given[0] if given else ("pc", default_pc)
    if not (value > 0 and math.isfinite(value)) or (kind == "pc" and value >= 1):
        raise ScreenerError(f"the {kind} target must be a positive number"
                            + (" below 1" if kind == "pc" else ""))
    return Target(kind, float(value))


def rescreen(ctx: Context, oem, burn_s: float, workers: int, warn: Warn,
             progress: Progress | None = None, catalog_paths: list[str] | None = None,
             cancel=None, executor=None) -> dict:
    """Screen the manoeuvred primary (an OEM) against the run's catalog from the burn to the
    window's end (before the burn its trajectory is the run's own, and so are its encounters),
    with risk as the run attached it; compare with the run's encounters of that primary."""
    from ..screening.engine import ScreeningRequest, screen
    from .inputs import file_digest, load_inputs
    from .run import add_risk, volume_of

    ev = ctx.event
    cfg = ctx.cfg
    if cfg is None:
        from ..config.schema import config_from_options

        cfg = config_from_options(catalog_paths or [], None, ev.iso(0.0), ev.window_s / 86400.0,
                                  None, None, workers, 30.0, False, hbr_m=ev.covariances.hbr_m)
    else:
        cfg = dataclasses.replace(cfg, workers=workers)
        for f in ctx.catalog_files:
            try:
                now = file_digest(f["path"])["sha256"]
            except OSError:
                raise ScreenerError(f"{f['path']}: catalog file of run {ev.run_id} is gone; cannot "
                                    f"re-screen (use --no-rescreen for the trade alone)") from None
            if now != f["sha256"]:
                warn(f"{f['path']}: changed since run {ev.run_id} (SHA-256 differs); the re-screen "
                     f"uses the file as it is now")
    inputs = load_inputs(cfg, ev.jd0, ev.fr0, lambda m: None)
    catalog = [r for r in inputs.catalog if r.catalog_id != ev.primary_id]
    from_s = max(0.0, burn_s)
    req = ScreeningRequest(catalog=catalog, jd0=ev.jd0, fr0=ev.fr0 + from_s / 86400.0,
                           duration_s=ev.window_s - from_s, volume=volume_of(cfg),
                           primary_oems=[oem], workers=workers)
    result = screen(req, progress=progress, cancel=cancel, executor=executor)
    # the manoeuvred primary keeps the element-set age of the orbit it came from, so its
    # covariance is estimated as the run estimated it
    if ctx.primary_rec is not None:
        ejd, efr = ctx.primary_rec.epoch_jd, ctx.primary_rec.epoch_fr
        for e in result.encounters:
            tjd, tfr = e.tca_jd
            e.primary_age_days = (tjd - ejd) + (tfr - efr)
    risk_inputs = dataclasses.replace(
        inputs, primaries=[ctx.primary_rec] if ctx.primary_rec is not None else [],
        oems=[ctx.primary_oem] if ctx.primary_oem is not None else [])
    add_risk(cfg, risk_inputs, result, progress=progress)
    from ..store.runs import unix_s

    after = []
    for e in result.encounters:
        j = e.to_json()
        j["tca_unix_s"] = unix_s(*e.tca_jd)      # the fields of `screener screen --json`, and this
        after.append(j)
    target_tca = unix_s(ev.jd0, ev.fr0 + ev.tca_s / 86400.0)
    out = compare(ctx.before, after, ev.secondary_id, target_tca, ctx.tca_tol_s)
    out.update({"encounters": after, "catalog_objects": len(catalog),
                "window_start": ev.iso(from_s), "window_days": (ev.window_s - from_s) / 86400.0,
                "window_note": "from the burn to the run window's end (before the burn the "
                               "trajectory, and its encounters, are the run's)",
                "volume": req.volume.describe(), "compare_rule": rule_text(ctx.tca_tol_s),
                "wall_s": result.stats.get("wall_s", 0.0),
                "compared_with": (f"run {ev.run_id}'s encounters of {ev.primary_id}"
                                  if ctx.cfg is not None else "nothing (a CDM has no run): every "
                                  "encounter is listed as created; risk from the catalog's "
                                  "assumed covariances, not the CDM's")})
    return out


def trade_output(trade: Trade, picked: BurnOption | None = None) -> dict:
    """The trade as JSON (the `screener maneuver --json` object, without its re-screen);
    `picked` replaces the trade's own choice (a row picked in the TUI)."""
    out = trade.to_json()
    if picked is not None:
        out["chosen"] = picked.to_json(trade.event)
        out["picked_by_user"] = True
    out["caution"] = [CAUTION, MANEUVER_CAUTION]
    out["burn_model"] = ("impulsive delta-v in the primary's RTN frame at the burn time; the "
                         "manoeuvred trajectory is the screened one plus (burned - unburned), "
                         "both integrated numerically from the screened state at the burn")
    out["covariance_note"] = ("new Pc: the event's covariances in each object's RTN frame, the new "
                              "relative geometry projected in its own encounter plane; no "
                              "burn-execution error added")
    return out


def burn_oem(ctx: Context, option: BurnOption, model: ForceModel) -> tuple[str, object]:
    """OEM text of one burn's trajectory over the whole window, and the same read back."""
    ev = ctx.event
    track = apply_burn(ev.primary, option.burn_s, option.dv_rtn_m_s, ev.window_s, model)
    dv = ", ".join(f"{x:+.5f}" for x in option.dv_rtn_m_s)
    comment = (f"burn at {ev.iso(option.burn_s, 3)}: impulsive delta-v [R, T, N] = [{dv}] m/s "
               f"({option.dv_m_s * 100:.3f} cm/s, {option.direction}), to clear {ev.secondary_id} "
               f"{ev.secondary_name} at {ev.iso(ev.tca_s, 3)}")
    text = manoeuvred_oem_text(track, option.burn_s, ev.window_s, ev.primary_name or ev.primary_id,
                               ev.primary_id, comment, ev.covariances.primary_rtn_km2,
                               ev.primary_period_s,
                               creation=iso_z(jd_to_datetime(ev.jd0, ev.fr0), 3)[:-1])
    return text, read_back(text)


def plan(ctx: Context, target: Target, window_h=None, extra_burns_s=(),
         directions=DEFAULT_DIRECTIONS, max_dv_m_s: float = DEFAULT_MAX_DV_M_S,
         model: ForceModel = DEFAULT_MODEL, progress: Progress | None = None) -> Trade:
    import datetime as dt

    ev = ctx.event
    times, notes = burn_times(ev, window_h, list(extra_burns_s))
    if not times:
        raise ScreenerError("no burn time left to try: " + "; ".join(notes))
    now_s = (dt.datetime.now(dt.timezone.utc) - jd_to_datetime(ev.jd0, ev.fr0)).total_seconds()
    past = [t for t in times if t < now_s]
    if past:
        notes.append(f"{len(past)} of the {len(times)} burn times are already past (now "
                     f"{ev.iso(now_s, 0)}): kept in the table for the record, not to be flown")
    return run_trade(ctx.event, target, times, directions, max_dv_m_s, model, notes, progress)
