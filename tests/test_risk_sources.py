"""Pc attached to screening encounters: covariance sources in order of preference, the
element-set-history fit, the assumed model's label, hard-body radius, attention levels,
ranking and cumulative risk.  The chain (states + covariances -> encounter plane -> Pc) is
checked against an independent 3-D Monte Carlo of straight-line relative motion."""

from __future__ import annotations

import dataclasses
import json
import os

import numpy as np
import pytest
from scipy import stats

from screener import synth
from screener.elements import read_oem
from screener.elements.oem import OemCovariance
from screener.risk.series import ENGINE, cumulative_by_primary, group
from screener.risk.attention import Thresholds
from screener.risk.covariance import (ASSUMED, CONFIGURED, HISTORY, OEM, CovarianceSources,
                                      SigmaGrowth, assumed, fit_history, from_oem)
from screener.screening.ric import ric_basis
from screener.timeutil import datetime_to_jd, parse_iso

from .nightly import DEMO, screener

JD0, FR0 = datetime_to_jd(parse_iso("2026-12-02T00:00:00Z"))


def test_oem_covariance_in_an_inertial_frame_is_rotated_to_rtn():
    """Constructed case: an RTN-diagonal covariance written in the OEM's inertial frame via the
    RTN basis (common practice: R = r/|r|, N = r x v/|r x v|, T = N x R) comes back diagonal."""
    oem = read_oem(os.path.join(DEMO, "larkspur-3.oem"))
    seg = oem.segments[0]
    k = 100
    B = ric_basis(seg.r_km[k], seg.v_km_s[k])
    want = np.diag([0.01 ** 2, 0.2 ** 2, 0.03 ** 2])
    c = np.zeros((6, 6))
    c[:3, :3] = B.T @ want @ B
    t_jd, t_fr = seg.start_jd, seg.t_s[k] / 86400.0
    seg.covariances[:] = [OemCovariance(t_jd, t_fr, seg.frame, c)]
    got = from_oem(oem, t_jd, t_fr + 0.01)
    assert got.source == OEM
    np.testing.assert_allclose(got.cov_rtn_km2, want, atol=1e-12)


def test_sources_in_order_of_preference():
    oem = read_oem(os.path.join(DEMO, "larkspur-3.oem"))
    base = synth.circular("X0001", "HIST", 700.0, 98.0, 10.0, 0.0, JD0, FR0 - 0.2)
    sets = _history(base, offsets_km=lambda dt: 0.1 + 0.3 * dt)
    src = CovarianceSources(oems=[oem], configured={"X0002": SigmaGrowth((0.05, 0.2, 0.05))},
                            history={"X0001": sets, "X0002": sets})
    assert src.estimate("2026-903A", "LEO", 0.5, JD0, FR0 + 0.3).source == OEM
    assert src.estimate("X0002", "LEO", 0.5, JD0, FR0).source == CONFIGURED   # config beats history
    assert src.estimate("X0001", "LEO", 0.5, JD0, FR0).source == HISTORY
    got = src.estimate("X0003", "LEO", 0.5, JD0, FR0)
    assert got.source == ASSUMED and got.label().startswith("assumed covariance")


def test_estimates_for_many_objects_equal_one_at_a_time():
    """estimate_many (the risk stage's columns: the assumed model in array operations, every
    other source through estimate) gives each object the same covariance, bitwise, and the
    same source and label as estimate() one object at a time, with every source taking part
    (an OEM, a configured object and regime, an element-set history, the assumed model in
    each regime, negative ages)."""
    oem = read_oem(os.path.join(DEMO, "larkspur-3.oem"))
    base = synth.circular("X0001", "HIST", 700.0, 98.0, 10.0, 0.0, JD0, FR0 - 0.2)
    sets = _history(base, offsets_km=lambda dt: 0.1 + 0.3 * dt)
    src = CovarianceSources(oems=[oem], configured={"X0002": SigmaGrowth((0.05, 0.2, 0.05)),
                                                    "GEO": SigmaGrowth((0.4, 1.0, 0.4), (0.1, 0.2, 0.1))},
                            history={"X0001": sets})
    ids = ["2026-903A", "X0002", "X0001", "X0003", "X0004", "X0005", "X0006", "X0007", "X0008"]
    regimes = ["LEO", "LEO", "LEO", "LEO", "MEO", "GEO", "HEO", "SPACE", "LEO"]
    ages = [0.5, 0.5, 0.5, 1.7, 0.25, 3.0, 0.8, 2.0, -1.3]
    tjd = [JD0] * len(ids)
    tfr = [FR0 + 0.3] * len(ids)
    many = src.estimate_many(ids, regimes, ages, tjd, tfr, {"X0008": ("X0002",)})
    got_sources = []
    for k, oid in enumerate(ids):
        one = src.estimate(oid, regimes[k], ages[k], tjd[k], tfr[k],
                           ("X0002",) if oid == "X0008" else ())
        assert (many.cov_rtn_km2[k] == one.cov_rtn_km2).all(), oid
        assert many.source[k] == one.source and many.label[k] == one.label(), oid
        assert tuple(many.sigma_rtn_km[k].tolist()) == one.sigma_rtn_km
        got_sources.append(one.source)
    assert set(got_sources) == {OEM, CONFIGURED, HISTORY, ASSUMED}
    assert many.assumed.tolist() == [s == ASSUMED for s in got_sources]


def _history(rec, offsets_km, backs=(4.0, 3.0, 2.0, 1.0)):
    """Older sets of the same orbit whose in-track error is offsets_km(age) (alternating sign)."""
    out = []
    for n, back in enumerate(backs):
        jd, fr = rec.epoch_jd, rec.epoch_fr - back
        shift = offsets_km(back) * (1 if n % 2 else -1)
        r, v = synth.state_of(rec, jd, fr + shift / 7.5 / 86400.0)
        out.append(synth.fit_elements(r, v, jd, fr, rec.catalog_id, rec.name))
    return out + [rec]


def test_history_fit_recovers_a_constructed_error_growth():
    """Constructed case: older element sets displaced along track by 0.1 km + 0.3 km/day of age.
    Reference: the in-track differences measured directly with the sgp4 library at the newest
    epoch, and numpy's least-squares line through them; the fit must agree with that line,
    and both must be near the constructed 0.3 km/day."""
    from sgp4.api import Satrec

    rec = synth.circular("X0001", "HIST", 700.0, 98.0, 10.0, 0.0, JD0, FR0 - 0.2)
    sets = _history(rec, lambda dt: 0.1 + 0.3 * dt)
    fit = fit_history(sets)
    assert fit is not None and fit.older_sets == 4
    newest = sets[-1]
    _, r0, v0 = Satrec.twoline2rv(*newest.to_tle()).sgp4(newest.epoch_jd, newest.epoch_fr)
    t_hat = ric_basis(np.array(r0), np.array(v0))[1]
    ages, errs = [], []
    for s in sets[:-1]:
        _, r, _ = Satrec.twoline2rv(*s.to_tle()).sgp4(newest.epoch_jd, newest.epoch_fr)
        ages.append((newest.epoch_jd - s.epoch_jd) + (newest.epoch_fr - s.epoch_fr))
        errs.append(abs(float(np.dot(np.array(r) - np.array(r0), t_hat))))
    slope, icept = np.polyfit(ages, errs, 1)
    assert fit.b_km_per_day[1] == pytest.approx(slope, rel=0.15)
    assert slope == pytest.approx(0.3, rel=0.3)
    assert fit.a_km[1] == pytest.approx(max(icept, 0.0), abs=0.08)
    assert max(fit.b_km_per_day[0], fit.b_km_per_day[2]) < 0.03
    est = fit.at(JD0, FR0 + 1.0)      # 1.2 d after the newest epoch
    assert est.sigma_rtn_km[1] == pytest.approx(fit.a_km[1] + fit.b_km_per_day[1] * 1.2, rel=1e-6)
    assert fit_history(_history(rec, lambda dt: 0.1, backs=(1.0,))) is None   # too few sets


def test_assumed_model_grows_with_age_and_by_regime():
    young, old = assumed("LEO", 0.5), assumed("LEO", 3.0)
    assert old.sigma_rtn_km[1] > young.sigma_rtn_km[1]
    assert assumed("HEO", 1.0).sigma_rtn_km[1] > assumed("LEO", 1.0).sigma_rtn_km[1]
    assert young.assumed and "LEO model" in young.detail


def test_attention_levels_and_the_dilution_rule():
    t = Thresholds()          # defaults from common practice: act 1e-4, watch 1e-5
    assert t.is_default and "defaults" in t.describe()
    assert t.level(2e-4, 1e-3, False)[0] == "act"
    assert t.level(1e-4, 1e-3, False)[0] == "act"
    assert t.level(3e-5, 1e-3, False)[0] == "watch"
    assert t.level(1e-7, 1e-6, True)[0] == "routine"
    lvl, why = t.level(1e-7, 1e-3, True)     # low only because the covariance is large
    assert lvl == "watch" and "dilution" in why
    with pytest.raises(ValueError):
        Thresholds(act_pc=1e-6, watch_pc=1e-5)


def test_cumulative_per_primary_combines_series_not_passes():
    """Probability of at least one of independent events, 1 - prod(1 - p_i) (probability
    axioms), over a primary's series (different secondaries); the passes of one pair share
    the same orbit errors, so a series counts once, with its highest pass Pc."""
    from screener.screening.encounter import Encounter

    def enc(p, s, pc, t_s, v=10.0):
        e = Encounter(p, p, s, s, t_s, JD0, FR0, 1.0, 0, 0, 0, v, 90.0)
        e.risk = {"pc": pc, "attention": "routine"}
        return e

    encs = [enc("A", "S", 1e-3, 0.0), enc("A", "S", 2e-3, 3000.0), enc("A", "T", 4e-4, 100.0),
            enc("B", "S", 5e-5, 0.0)]
    series = group(encs, ENGINE)
    by = {g.key: g for g in series}
    assert by["AxS"].pc == 2e-3 and by["AxS"].count == 2 and by["AxS"].worst is encs[1]
    got = cumulative_by_primary(series)
    assert got["A"] == pytest.approx(1 - (1 - 2e-3) * (1 - 4e-4), rel=1e-12)
    assert got["B"] == pytest.approx(5e-5, rel=1e-12)
    # a slow pass recurring three times is a proximity pair; two fast passes are not
    slow = [enc("C", "S", 1e-6, k * 3000.0, v=0.004) for k in range(3)]
    assert group(slow, ENGINE)[0].proximity and not by["AxS"].proximity


def _demo_encounters():
    from screener.config import load_config
    from screener.pipeline import execute

    cfg = load_config(os.path.join(DEMO, "demo.toml"))
    cfg = dataclasses.replace(cfg, window_days=1.0, workers=1)
    return cfg, execute(cfg).result.encounters


@pytest.fixture(scope="module")
def demo_encounters():
    return _demo_encounters()


def test_hard_body_radius_is_the_sum_of_configured_radii(demo_encounters):
    cfg, encs = demo_encounters
    e = next(e for e in encs if e.primary == "900000001")
    assert e.risk["hbr_m"] == pytest.approx(6.5 + 5.0)     # configured 6.5 m + catalog default 5 m
    e = next(e for e in encs if e.primary == "900000002")
    assert e.risk["hbr_m"] == pytest.approx(4.0 + 5.0)     # fleet default 4 m


def test_attached_pc_matches_a_3d_monte_carlo(demo_encounters):
    """Independent check of projection + quadrature: sample the relative position from the
    combined covariance (sum of both objects' RTN covariances rotated to inertial), move along
    the relative velocity in a straight line, count misses under the hard-body radius; the
    attached Pc must sit inside the Monte Carlo's 99 % Wilson interval."""
    cfg, encs = demo_encounters
    e = max(encs, key=lambda x: x.pc if x.relative_speed_km_s > 1 else 0)
    assert e.pc > 1e-5, "enough hits for the Monte Carlo to say something"
    r1, v1 = np.array(e.primary_r_km), np.array(e.primary_v_km_s)
    r2, v2 = np.array(e.secondary_r_km), np.array(e.secondary_v_km_s)
    c = sum(ric_basis(r, v).T @ np.array(e.risk[f"{who}_cov_rtn_km2"]) @ ric_basis(r, v)
            for who, r, v in (("primary", r1, v1), ("secondary", r2, v2)))
    rng = np.random.default_rng(12)
    n = 4_000_000
    rho = rng.multivariate_normal(r2 - r1, c, size=n)
    w = (v2 - v1) / np.linalg.norm(v2 - v1)
    perp = rho - np.outer(rho @ w, w)
    hits = int((np.linalg.norm(perp, axis=1) < e.risk["hbr_m"] / 1000.0).sum())
    z = stats.norm.ppf(0.995)
    p = hits / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    assert centre - half <= e.pc <= centre + half, (e.pc, p, hits)


def test_screen_json_and_summary_label_assumed_covariance(tmp_path):
    out = tmp_path / "e.json"
    p = screener("screen", "--catalog", os.path.join(DEMO, "catalog.tle"), "--primaries",
                 os.path.join(DEMO, "fleet.json"), "--start", "2026-12-02T00:00:00Z", "--days", "1",
                 "--json", str(out), "--workers", "1")
    assert p.returncode == 0, p.stderr
    encs = json.loads(out.read_text())["encounters"]
    assert encs and all(e["covariance_source"] == "assumed covariance" for e in encs)
    assert all(e["assumed_covariance"] for e in encs)
    pcs = [e["pc"] for e in encs]
    assert "Per spacecraft" in p.stdout and "A = Pc from an assumed covariance" in p.stdout
    assert ", 1 day," in p.stdout and "1 days" not in p.stdout
    lines = [l for l in p.stdout.splitlines()
             if l[:3].strip().isdigit() and l.split()[1] in ("act", "watch", "routine")]
    rank = {"act": 0, "watch": 1, "routine": 2}
    shown = [(rank[l.split()[1]], -float(l.split()[2]) if l.split()[2] != "<1e-10" else 0.0)
             for l in lines]
    assert shown == sorted(shown), "one row per series, by level, then Pc"
    assert max(pcs) == pytest.approx(-min(x[1] for x in shown), rel=6e-2)   # shown to 2 digits


@pytest.mark.parametrize("xm_m,sx_m,sy_m,hbr_m", [(30.0, 50.0, 50.0, 10.0), (200.0, 80.0, 300.0, 20.0),
                                                  (0.0, 40.0, 120.0, 5.0)])
def test_path_monte_carlo_on_a_straight_path_equals_the_2d_reference(xm_m, sx_m, sy_m, hbr_m):
    """On a straight relative path the along-path Monte Carlo and the 2-D Pc (Foster & Estes
    1992 quadrature, checked against Serra et al. 2016 in test_pc_reference.py) are the same
    quantity: the quadrature must fall inside the Monte Carlo's 99 % interval."""
    from screener.risk.pc import pc_quadrature
    from screener.risk.pc_path import pc_path_monte_carlo

    t = np.linspace(-600.0, 600.0, 41)
    w = np.array([0.0, 0.0, 0.01])                        # 10 m/s along z: the plane is x-y
    path = np.array([xm_m / 1e3, 0.0, 0.0]) + t[:, None] * w
    cov = np.diag([(sx_m / 1e3) ** 2, (sy_m / 1e3) ** 2, 0.3 ** 2])
    mc = pc_path_monte_carlo(path, cov, hbr_m / 1e3, samples=400_000)
    want = pc_quadrature(xm_m, 0.0, sx_m, sy_m, hbr_m)
    assert mc.lo99 <= want <= mc.hi99, (mc, want)


def test_slow_encounters_get_the_path_monte_carlo(demo_encounters):
    _, encs = demo_encounters
    slow = [e for e in encs if e.relative_speed_km_s < 0.1]
    assert slow, "the demo's co-orbital pair passes at about 4 m/s"
    for e in slow:
        assert e.risk["short_encounter_ok"] is False
        assert e.risk["pc_method"].startswith("Monte Carlo along the relative path")
        assert e.risk["pc_mc_lo99"] <= e.risk["pc"] <= e.risk["pc_mc_hi99"]
        assert "pc_2d" in e.risk


def test_risk_on_worker_processes_equals_risk_in_process(monkeypatch):
    """The risk stage split over two spawned workers (the encounters sent as
    pack_for_risk's arrays, the pool shared with the screening) gives every encounter the
    same risk record, key for key, as the same stage run in this process (the parallel path
    is only a schedule)."""
    from screener.config import load_config
    from screener.pipeline import execute
    from screener.pipeline import run as run_mod

    cfg = load_config(os.path.join(DEMO, "demo.toml"))
    serial = execute(dataclasses.replace(cfg, window_days=1.0, workers=1)).result.encounters
    monkeypatch.setattr(run_mod, "PARALLEL_RISK_MIN", 1)
    assert run_mod.wants_workers(serial)
    parallel = execute(dataclasses.replace(cfg, window_days=1.0, workers=2)).result.encounters
    key = lambda e: (e.primary, e.secondary, round(e.tca_s, 3))  # noqa: E731
    a, b = sorted(serial, key=key), sorted(parallel, key=key)
    assert [key(e) for e in a] == [key(e) for e in b] and len(a) > 10
    sources = {x.risk["covariance_source"] for x in a}
    assert len(sources) > 1, sources           # more than one covariance source took part
    assert any("pc_2d" in x.risk for x in a)   # and at least one slow pass (its path sent too)
    for x, y in zip(a, b):
        assert x.risk == y.risk, key(x)


def test_long_fast_pass_completed_with_its_path_after_the_workers():
    """Only slow passes send their relative path to the risk workers (pack_for_risk). A pass
    that is not slow but stays long in a very large covariance needs its path too: its
    record comes back marked, and the parent completes the Pc along the path. Every record
    must equal the one made in this process with every path at hand (the split is only a
    schedule). The covariance is an invented test input, far beyond any element set's."""
    import copy

    from screener.config import load_config
    from screener.pipeline import execute
    from screener.pipeline.run import risk_in_workers
    from screener.risk.attach import PATH_PENDING, SLOW_PASS_KM_S, attach_risk

    cfg = load_config(os.path.join(DEMO, "demo.toml"))
    encs = execute(dataclasses.replace(cfg, window_days=1.0, workers=1)).result.encounters
    huge = {"LEO": SigmaGrowth((300.0, 900.0, 300.0))}      # km: 5 sigma spans ~4,500 km
    here = copy.deepcopy(encs)
    attach_risk(here, CovarianceSources(configured=huge))
    fast_long = [e for e in here if "pc_2d" in e.risk and e.relative_speed_km_s >= SLOW_PASS_KM_S]
    assert fast_long, "no fast pass needed its path"
    there = copy.deepcopy(encs)
    radii = {oid: 5.0 for e in there for oid in (e.primary, e.secondary)}
    risk_in_workers(there, [], huge, None, radii, Thresholds(), workers=2)
    for x, y in zip(here, there):
        assert PATH_PENDING not in y.risk
        assert x.risk == y.risk, (x.primary, x.secondary, x.tca_s)
