"""Pc sensitivity curves (screener.risk.sensitivity) against closed forms and a reference
library.

Sources:
- Alfano (2005), "Relating position uncertainty to maximum conjunction probability",
  J. Astronaut. Sci. 53(2) (also Alfriend et al. 1999): for an isotropic covariance and a
  small hard-body radius R, the largest Pc over the covariance's size is R^2 / (e d^2), reached
  at sigma = d / sqrt(2) (a covariance factor of d^2 / (2 sigma^2) on the encounter's own).
- scipy.stats.ncx2 (reference library): the isotropic Pc is P[chi'^2(2, d^2/s^2) <= R^2/s^2].
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from screener.risk.sensitivity import of_encounter, sensitivity


def ncx2_pc(d, s, R):
    return float(stats.ncx2.cdf(R * R / (s * s), 2, d * d / (s * s)))


@pytest.mark.parametrize("d_m, sigma_m, hbr_m", [
    (1000.0, 1000.0, 10.0),      # maximum at a factor 0.5
    (500.0, 200.0, 5.0),         # maximum at 3.1x
    (2000.0, 1200.0, 20.0),
])
def test_curve_maximum_over_scale_is_alfano_2005_bound(d_m, sigma_m, hbr_m):
    """Isotropic case: the curve over the covariance factor (sampled finely, within its span)
    peaks at R^2/(e d^2) within 1 %, at the factor d^2/(2 sigma^2); the computed maximum over any
    factor agrees too."""
    bound = hbr_m ** 2 / (math.e * d_m ** 2)                        # Alfano 2005
    f_star = d_m ** 2 / (2.0 * sigma_m ** 2)
    s = sensitivity(d_m / math.sqrt(2), d_m / math.sqrt(2), sigma_m, sigma_m, hbr_m, n=401)
    assert max(s.pc_by_scale) == pytest.approx(bound, rel=0.01)
    assert s.pc_max == pytest.approx(bound, rel=0.01)
    assert s.scale_at_max == pytest.approx(f_star, rel=0.01)
    k = int(np.argmax(s.pc_by_scale))
    assert s.scale[k] == pytest.approx(f_star, rel=0.03)
    assert s.dilution == (f_star < 1.0)


def test_curves_equal_the_noncentral_chi_square():
    """Every point of both curves equals scipy's noncentral chi-square form (isotropic)."""
    d, sig, R = 800.0, 300.0, 8.0
    s = sensitivity(d, 0.0, sig, sig, R)
    for r, pc in zip(s.hbr_m, s.pc_by_hbr):
        assert pc == pytest.approx(ncx2_pc(d, sig, r), rel=1e-6)
    for f, pc in zip(s.scale, s.pc_by_scale):
        assert pc == pytest.approx(ncx2_pc(d, sig * math.sqrt(f), R), rel=1e-6)
    assert s.pc_now == pytest.approx(ncx2_pc(d, sig, R), rel=1e-6)
    assert s.hbr_m[0] == pytest.approx(1.0) and s.hbr_m[-1] == pytest.approx(30.0)
    assert s.scale[0] == pytest.approx(0.1) and s.scale[-1] == pytest.approx(10.0)


def test_dilution_is_explained_by_the_curve():
    """A large covariance against the miss: the maximum lies below factor 1 (dilution, common
    practice reading of Alfano 2005); a tight one: above 1."""
    wide = sensitivity(100.0, 0.0, 2000.0, 2000.0, 10.0)
    assert wide.dilution and "dilution region" in wide.explain()
    assert wide.pc_max > wide.pc_now
    tight = sensitivity(2000.0, 0.0, 300.0, 300.0, 10.0)
    assert not tight.dilution and "not diluted" in tight.explain()


def test_of_encounter_reads_the_plane_figures():
    e = {"plane_xm_m": 20.0, "plane_ym_m": -400.0, "plane_sx_m": 35.0, "plane_sy_m": 345.0, "hbr_m": 9.0}
    s = of_encounter(e)
    assert s is not None and s.hbr_now_m == 9.0 and len(s.pc_by_hbr) == len(s.hbr_m)
    assert of_encounter({"miss_km": 1.0}) is None


async def test_event_view_plots_the_sensitivity_at_80x24(store):
    """Pilot at 80x24: key 5 in the event view draws both curves and the dilution reading;
    its figures equal risk.sensitivity's for the event."""
    from screener.store import Store
    from screener.store.queries import encounter_detail
    from screener.tui import make_app

    from .nightly import open_top_event

    app = make_app(store_path=store)
    async with app.run_test(size=(80, 24)) as pilot:
        await open_top_event(app, pilot)
        await pilot.press("5")
        await pilot.pause()
        plot = str(app.screen.query_one("#event-plot").render())
        d = app.screen.detail
    with Store(store) as st:
        s = of_encounter(encounter_detail(st, d["encounter_id"]))
    assert "log10 Pc vs hard-body radius (m)" in plot and "log10 Pc vs log10 covariance factor" in plot
    assert f"max {s.pc_max:.1e} at {s.scale_at_max:.3g}x the covariance" in plot
    assert ("dilution region" in plot) == s.dilution
