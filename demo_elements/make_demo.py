"""Generate the invented demo scenario (seeded; its output is committed beside this script).

Operator: Larkspur Orbital Works (fictional), six spacecraft LARKSPUR-1..6 in a 540-560 km
shell; a synthetic background catalog of 4,000 objects across LEO, MEO, GEO and GTO; a few
engineered close approaches so the demo shows real events; an OEM for LARKSPUR-3.
Nothing here is a real object, catalog number or element set.

    python demo_elements/make_demo.py
"""

from __future__ import annotations

import dataclasses
import json
import os

import numpy as np

from screener import synth
from screener.elements import write_oem
from screener.elements.tle import format_tle, int_to_alpha5
from screener.timeutil import datetime_to_jd, iso_z, jd_to_datetime, parse_iso

HERE = os.path.dirname(os.path.abspath(__file__))
WINDOW_START = "2026-12-02T00:00:00Z"
SEED = 20261202


def main() -> None:
    rng = np.random.default_rng(SEED)
    jd0, fr0 = datetime_to_jd(parse_iso(WINDOW_START))
    fleet = []
    for k in range(6):
        rec = synth.circular(f"9{k + 1:08d}", f"LARKSPUR-{k + 1}", 540.0 + 4 * k, 53.0 + (k % 2) * 44.6,
                             30.0 * k, 60.0 * k, jd0, fr0 - 0.25 - 0.05 * k, bstar=2.1e-5)
        fleet.append(dataclasses.replace(rec, intl_designator=f"2026-9{k + 1:02d}A"))
    # engineered secondaries: (fleet member, hours after start, kind, miss km)
    plan = [(0, 6.5, "head-on", 0.18), (0, 40.0, "crossing", 1.1), (1, 20.0, "slow", 0.6),
            (2, 30.0, "head-on", 0.45), (3, 52.0, "gto", 0.9), (4, 12.0, "crossing", 2.4),
            (5, 66.0, "head-on", 0.08), (2, 60.0, "crossing", 3.5)]
    engineered = []
    for n, (who, hours, kind, miss) in enumerate(plan):
        sec = synth.engineer(fleet[who], jd0, fr0 + hours / 24.0, int_to_alpha5(339000 + n),
                             f"DEB-{n + 1:03d}", kind, miss_km=miss, epoch_back_days=0.5, rng=rng)
        engineered.append(sec)
    background = synth.background_catalog(
        4000, jd0, fr0, seed=SEED, id_of=lambda k: int_to_alpha5(320000 + k), age_days=(0.1, 2.5))
    # older element sets of the engineered objects, 1-3 days before their current epoch, with
    # errors that grow with age (so the history-based covariance has something to fit, and a
    # run with catalog.as_of set earlier sees the older predictions)
    with open(os.path.join(HERE, "catalog-history.tle"), "w") as fh:
        fh.write("# Older synthetic element sets of the engineered demo objects (invented).\n")
        for rec in engineered:
            for back in (3.0, 2.0, 1.0):
                # an in-track error of (0.15 + 0.25 * age) km: the older set's state is the
                # current set's state a little earlier or later along the same orbit
                e_jd, e_fr = rec.epoch_jd, rec.epoch_fr - back
                shift_km = rng.normal(0, 0.15 + 0.25 * back)
                r, v = synth.state_of(rec, e_jd, e_fr + shift_km / 7.6 / 86400.0)
                old = synth.fit_elements(r, v, e_jd, e_fr, rec.catalog_id, rec.name)
                l1, l2 = format_tle(dataclasses.replace(old, intl_designator="26999Z"))
                fh.write(f"{rec.name}\n{l1}\n{l2}\n")
    with open(os.path.join(HERE, "catalog.tle"), "w") as fh:
        fh.write("# Synthetic background catalog for the screener demo (invented objects).\n")
        for rec in engineered + background:
            l1, l2 = format_tle(dataclasses.replace(rec, intl_designator="26999Z"))
            fh.write(f"{rec.name}\n{l1}\n{l2}\n")
    omm = []
    for rec in fleet:
        omm.append({
            "CCSDS_OMM_VERS": "3.0", "OBJECT_NAME": rec.name, "OBJECT_ID": rec.intl_designator,
            "CENTER_NAME": "EARTH", "REF_FRAME": "TEME", "TIME_SYSTEM": "UTC",
            "MEAN_ELEMENT_THEORY": "SGP4",
            "EPOCH": iso_z(jd_to_datetime(rec.epoch_jd, rec.epoch_fr), 6)[:-1],
            "MEAN_MOTION": round(rec.mean_motion_rev_day, 8), "ECCENTRICITY": round(rec.eccentricity, 7),
            "INCLINATION": round(rec.inclination_deg, 4), "RA_OF_ASC_NODE": round(rec.raan_deg, 4),
            "ARG_OF_PERICENTER": round(rec.arg_perigee_deg, 4),
            "MEAN_ANOMALY": round(rec.mean_anomaly_deg, 4), "EPHEMERIS_TYPE": 0,
            "CLASSIFICATION_TYPE": "U", "NORAD_CAT_ID": int(rec.catalog_id), "ELEMENT_SET_NO": 999,
            "REV_AT_EPOCH": 100, "BSTAR": rec.bstar_per_earth_radius, "MEAN_MOTION_DOT": 0.0,
            "MEAN_MOTION_DDOT": 0.0,
        })
    with open(os.path.join(HERE, "fleet.json"), "w") as fh:
        json.dump(omm, fh, indent=1)
    # OEM of LARKSPUR-3 from its propagated states, 60 s spacing, 4 days from the window start
    from screener.elements import ElementSet
    rec3 = ElementSet.from_omm({k: str(v) for k, v in omm[2].items()})
    t_s = np.arange(0.0, 4 * 86400.0 + 1, 60.0)
    sat = rec3.make_satrec()
    e, r, v = sat.sgp4_array(np.full(len(t_s), jd0), fr0 + t_s / 86400.0)
    # covariance every 6 h in RTN: 15 m radial, 60 m in-track growing 40 m/day, 15 m cross-track
    from screener.elements import OemCovariance
    covs = []
    for h in range(0, 4 * 24 + 1, 6):
        s_km = np.array([0.015, 0.060 + 0.040 * h / 24.0, 0.015])
        c = np.zeros((6, 6))
        c[:3, :3] = np.diag(s_km ** 2)
        c[3:, 3:] = np.diag([1e-8, 1e-8, 1e-8])
        covs.append(OemCovariance(jd0, fr0 + h / 24.0, "RTN", c))
    write_oem(os.path.join(HERE, "larkspur-3.oem"), "LARKSPUR-3", "2026-903A", jd0,
              fr0 * 86400.0 + t_s, r, v, frame="TEME", originator="LARKSPUR ORBITAL WORKS",
              covariance=covs, creation="2026-12-01T18:00:00.000000")
    print(f"wrote {len(fleet)} fleet OMMs, {len(engineered) + len(background)} catalog TLEs, "
          f"{3 * len(engineered)} older TLEs, 1 OEM with covariance")


if __name__ == "__main__":
    main()
