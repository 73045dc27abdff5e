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
    n_cdm = write_received(fleet, engineered, jd0, fr0, plan, np.random.default_rng(SEED + 1))
    print(f"wrote {len(fleet)} fleet OMMs, {len(engineered) + len(background)} catalog TLEs, "
          f"{3 * len(engineered)} older TLEs, 1 OEM with covariance, {n_cdm} received CDMs")


SERVICE = "KESTREL SCREENING CELL"      # the invented screening service sending the CDMs


def _tca(a, b, jd0, fr0, hours):
    """TCA (seconds from the window start) of two element sets near `hours`: 10 s samples over
    +-15 min, then a bounded scalar minimisation of the range."""
    from scipy.optimize import minimize_scalar

    sa, sb = a.make_satrec(), b.make_satrec()
    t = hours * 3600.0 + np.arange(-900.0, 901.0, 10.0)
    _e, ra, _v = sa.sgp4_array(np.full(len(t), jd0), fr0 + t / 86400.0)
    _e, rb, _v = sb.sgp4_array(np.full(len(t), jd0), fr0 + t / 86400.0)
    k = int(np.argmin(np.linalg.norm(ra - rb, axis=1)))

    def rng_km(ts):
        return float(np.linalg.norm(np.subtract(sa.sgp4(jd0, fr0 + ts / 86400.0)[1],
                                                sb.sgp4(jd0, fr0 + ts / 86400.0)[1])))

    return minimize_scalar(rng_km, bounds=(t[k] - 10.0, t[k] + 10.0), method="bounded",
                           options={"xatol": 1e-4}).x


def _message(prim, sec_name, sec_id, s1, s2, tca_s, jd0, fr0, created_h, sig1_m, sig2_m, n):
    """One invented CDM as (header, relative, objects, comments) for risk.cdm.write_cdm: states
    at TCA (TEME in, GCRF out, through the exporter), RTN position covariances in m^2, the
    sender's Pc computed for an assumed 20 m hard-body radius."""
    from screener.exports.cdm_out import cdm_for_encounter
    from screener.risk.assess import assess
    from screener.timeutil import jd_to_datetime

    tca = jd_to_datetime(jd0, fr0 + tca_s / 86400.0)
    c1, c2 = np.diag(np.square(sig1_m) * 1e-6), np.diag(np.square(sig2_m) * 1e-6)
    risk = assess(s1[:3], s1[3:], c1, s2[:3], s2[3:], c2, 20.0, "CDM")
    e = {"tca": iso_z(tca, 6), "primary": prim.catalog_id, "secondary": sec_id,
         "primary_name": prim.name, "secondary_name": sec_name,
         "primary_designator": prim.intl_designator, "secondary_designator": "2026-999Z",
         "primary_state_teme": list(s1), "secondary_state_teme": list(s2),
         "miss_km": risk["miss_km"], "relative_speed_km_s": risk["relative_speed_km_s"],
         "pc": risk["pc"], "pc_method": risk["pc_method"], "hbr_m": 20.0,
         "primary_cov_rtn_km2": c1.tolist(), "secondary_cov_rtn_km2": c2.tolist(),
         "primary_covariance": "orbit determination", "secondary_covariance": "orbit determination"}
    header, rel, objects, _comments = cdm_for_encounter(e, {prim.catalog_id: True}, SERVICE)
    for obj in objects:
        obj["CATALOG_NAME"] = "KSC-CATALOG"
    created = jd_to_datetime(jd0, fr0 + created_h / 24.0)
    header.update({"CREATION_DATE": iso_z(created, 3)[:-1],
                   "MESSAGE_ID": f"KSC-{prim.catalog_id[-1]}-{sec_id}-{n:02d}"})
    comments = ["Invented demo message from a fictional screening service (screener demo data)."]
    return header, rel, objects, comments


def write_received(fleet, engineered, jd0, fr0, plan, rng) -> int:
    """received/: the screening service's CDMs for a few demo events (invented): three
    successive messages that agree with our screening, two for the act event, one that
    disagrees (the sender's secondary 1.6 km higher), one for an event our catalog does not
    hold, and one malformed file (TCA left out) that intake refuses."""
    from screener.elements.ids import canonical_id
    from screener.risk.cdm import write_cdm
    from screener.screening.ric import ric_basis

    folder = os.path.join(HERE, "received")
    os.makedirs(folder, exist_ok=True)
    for name in os.listdir(folder):
        os.remove(os.path.join(folder, name))
    written = []

    def series(who, sec_rec, sec_id, hours, created_h, sig2, offset_rtn_km=(0.0, 0.0, 0.0),
               sec_state=None, sec_name=None):
        prim = fleet[who]
        tca_s = hours * 3600.0 if sec_state is not None else _tca(prim, sec_rec, jd0, fr0, hours)
        r1, v1 = synth.state_of(prim, jd0, fr0 + tca_s / 86400.0)
        for n, (ch, s2) in enumerate(zip(created_h, sig2), start=1):
            if sec_state is None:
                r2, v2 = synth.state_of(sec_rec, jd0, fr0 + tca_s / 86400.0)
            else:
                r2, v2 = sec_state(r1, v1)
            # each message's orbit determination differs a little (tens of metres)
            B = ric_basis(r2, v2)
            r2 = r2 + B.T @ (np.asarray(offset_rtn_km) + rng.normal(0.0, 0.01, 3))
            msg = _message(prim, sec_name or sec_rec.name, sec_id, np.r_[r1, v1], np.r_[r2, v2],
                           tca_s, jd0, fr0, ch, (15.0, 60.0 * s2 / 300.0 + 20.0, 15.0),
                           (s2 / 5.0, s2, s2 / 5.0), n)
            path = os.path.join(folder, f"{msg[0]['MESSAGE_ID']}.kvn")
            write_cdm(path, *msg[:3], comments=msg[3])
            written.append(path)

    sec_of = {k: (who, hours, rec) for k, ((who, hours, _kind, _miss), rec) in enumerate(zip(plan, engineered))}
    # agreeing: DEB-001 (LARKSPUR-1, 6.5 h) over three messages, the covariance shrinking
    who, hours, rec = sec_of[0]
    series(who, rec, canonical_id(rec.catalog_id), hours, (-18.0, -6.0, 0.5), (400.0, 250.0, 150.0))
    # the act event: DEB-007 (LARKSPUR-6, 66 h), two messages
    who, hours, rec = sec_of[6]
    series(who, rec, canonical_id(rec.catalog_id), hours, (12.0, 24.0), (1600.0, 1200.0))
    # disagreeing: DEB-004 (LARKSPUR-3, 30 h): the sender puts the secondary 1.6 km higher
    who, hours, rec = sec_of[3]
    series(who, rec, canonical_id(rec.catalog_id), hours, (6.0,), (300.0,), offset_rtn_km=(1.6, 0.0, 0.0))

    # received only: LARKSPUR-2 and an object our catalog does not hold, 38 h in, 250 m
    def unseen(r1, v1):
        B = ric_basis(r1, v1)
        v2 = B.T @ (np.array([0.0, -0.55, 0.83]) * np.linalg.norm(v1))   # crossing at ~124 deg
        return r1 + B.T @ np.array([0.12, 0.0, 0.22]), v2
    series(1, None, "339901", 38.0, (20.0, 26.0), (600.0, 420.0), sec_state=unseen, sec_name="DEB-901")
    # malformed: a copy of the first message without its TCA (a mandatory keyword)
    with open(written[0], encoding="utf-8") as fh:
        text = [ln for ln in fh if not ln.startswith("TCA ")]
    bad = os.path.join(folder, "KSC-truncated-copy.kvn")
    with open(bad, "w", encoding="utf-8") as fh:
        fh.write("".join(text).replace("MESSAGE_ID                          = KSC-",
                                       "MESSAGE_ID                          = BAD-KSC-"))
    return len(written) + 1


if __name__ == "__main__":
    main()
