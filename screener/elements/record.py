"""One internal record per element set, with named constructors per input format."""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math

from ..constants import MIN_PER_DAY, TWO_PI
from ..timeutil import jd_to_datetime

# SGP4's own satellite-number field holds at most alpha-5 "Z9999" = 339999.
SGP4_MAX_SATNUM = 339_999
PLACEHOLDER_SATNUM = 0


@dataclasses.dataclass(frozen=True)
class Source:
    path: str
    line: int

    def __str__(self) -> str:
        return f"{self.path}:{self.line}"


@dataclasses.dataclass(frozen=True)
class ElementSet:
    """SGP4 mean elements of one object at one epoch (TEME, Kozai mean motion as in TLEs).

    Angles in degrees, mean motion in revolutions per day, epoch as a split Julian date.
    """

    catalog_id: str
    name: str
    epoch_jd: float
    epoch_fr: float
    mean_motion_rev_day: float
    eccentricity: float
    inclination_deg: float
    raan_deg: float
    arg_perigee_deg: float
    mean_anomaly_deg: float
    bstar_per_earth_radius: float
    ndot_rev_day2: float = 0.0      # first derivative / 2, as in TLE line 1
    nddot_rev_day3: float = 0.0     # second derivative / 6
    intl_designator: str = ""
    classification: str = "U"
    element_set_no: int = 999
    rev_at_epoch: int = 0
    ephemeris_type: int = 0
    source: Source = Source("<input>", 0)
    tle_lines: tuple[str, str] | None = None  # original text, when read from a TLE

    # ---- named constructors -------------------------------------------------------------
    @classmethod
    def from_tle(cls, line1: str, line2: str, name: str = "", source: Source | None = None,
                 verify_checksum: bool = True) -> "ElementSet":
        from .tle import parse_tle_pair

        return parse_tle_pair(line1, line2, name=name, source=source,
                              verify_checksum=verify_checksum)

    @classmethod
    def from_omm(cls, fields: dict[str, str], source: Source | None = None) -> "ElementSet":
        from .omm import record_from_omm_fields

        return record_from_omm_fields(fields, source or Source("<input>", 0))

    # ---- derived quantities --------------------------------------------------------------
    @property
    def epoch(self) -> _dt.datetime:
        return jd_to_datetime(self.epoch_jd, self.epoch_fr)

    @property
    def sgp4_satnum(self) -> int:
        """Number handed to SGP4: the catalog number if it fits, else a placeholder."""
        from .tle import catalog_id_to_int

        n = catalog_id_to_int(self.catalog_id)
        return n if n is not None and n <= SGP4_MAX_SATNUM else PLACEHOLDER_SATNUM

    @property
    def mean_motion_rad_s(self) -> float:
        return self.mean_motion_rev_day * TWO_PI / 86400.0

    def orbit(self):
        """Kepler's-third-law quantities (see propagation.orbit)."""
        from ..propagation.orbit import orbit_from_mean_motion

        return orbit_from_mean_motion(self.mean_motion_rad_s, self.eccentricity)

    def age_days_at(self, jd: float, fr: float) -> float:
        return (jd - self.epoch_jd) + (fr - self.epoch_fr)

    def to_tle(self) -> tuple[str, str]:
        from .tle import format_tle

        return format_tle(self)

    def make_satrec(self):
        """Build an sgp4 Satrec.  TLE-born records go through twoline2rv (bit-identical)."""
        from sgp4.api import WGS72, Satrec

        if self.tle_lines is not None and self.sgp4_satnum != PLACEHOLDER_SATNUM:
            return Satrec.twoline2rv(self.tle_lines[0][:69], self.tle_lines[1][:69], WGS72)
        sat = Satrec()
        deg = math.pi / 180.0
        epoch_days_1949 = (self.epoch_jd - 2433281.5) + self.epoch_fr
        sat.sgp4init(
            WGS72, "i", self.sgp4_satnum, epoch_days_1949, self.bstar_per_earth_radius,
            self.ndot_rev_day2 * TWO_PI / MIN_PER_DAY**2,
            self.nddot_rev_day3 * TWO_PI / MIN_PER_DAY**3,
            self.eccentricity, self.arg_perigee_deg * deg, self.inclination_deg * deg,
            self.mean_anomaly_deg * deg, self.mean_motion_rev_day * TWO_PI / MIN_PER_DAY,
            self.raan_deg * deg,
        )
        return sat

    def label(self) -> str:
        return f"{self.catalog_id} {self.name}".strip()


# Physical ranges every element set must meet (common practice for SGP4 mean elements; the
# bounds are generous: they refuse nonsense, not unusual orbits).
MAX_MEAN_MOTION_REV_DAY = 20.0      # ~ a 100 km circular orbit is 16.4 rev/day
MAX_ABS_BSTAR = 1.0                 # per Earth radius; real values are below ~0.05
MAX_ABS_NDOT = 1.0                  # rev/day^2 (TLE field limit)
MAX_ABS_NDDOT = 1.0                 # rev/day^3
MAX_ABS_ANGLE_DEG = 1e6             # any finite angle is reduced mod 360; this is absurdity
EPOCH_MIN_JD = 2436115.5            # 1957-10-04
EPOCH_MAX_JD = 2488069.5            # 2100-01-01


def check_elements(rec: ElementSet) -> str | None:
    """Physical checks common to every format; returns a reason or None.  Every numeric field
    must be finite and in range: a NaN or an infinity would otherwise pass silently and the
    object would never be screened."""
    numeric = (("epoch", rec.epoch_jd + rec.epoch_fr), ("mean motion", rec.mean_motion_rev_day),
               ("eccentricity", rec.eccentricity), ("inclination", rec.inclination_deg),
               ("RAAN", rec.raan_deg), ("argument of perigee", rec.arg_perigee_deg),
               ("mean anomaly", rec.mean_anomaly_deg), ("B*", rec.bstar_per_earth_radius),
               ("first derivative of mean motion", rec.ndot_rev_day2),
               ("second derivative of mean motion", rec.nddot_rev_day3))
    for what, x in numeric:
        if not math.isfinite(x):
            return f"{what} is not a finite number ({x})"
    if not (0.0 <= rec.eccentricity < 1.0):
        return f"eccentricity {rec.eccentricity} outside [0, 1)"
    if not (0.0 < rec.mean_motion_rev_day <= MAX_MEAN_MOTION_REV_DAY):
        # (a tiny positive mean motion is left to SGP4, which reports it as its error 1 or 3)
        return f"mean motion {rec.mean_motion_rev_day} rev/day outside (0, {MAX_MEAN_MOTION_REV_DAY}]"
    if not (0.0 <= rec.inclination_deg <= 180.0):
        return f"inclination {rec.inclination_deg} deg outside [0, 180]"
    for what, x in (("RAAN", rec.raan_deg), ("argument of perigee", rec.arg_perigee_deg),
                    ("mean anomaly", rec.mean_anomaly_deg)):
        if abs(x) > MAX_ABS_ANGLE_DEG:
            return f"{what} {x} deg is not a plausible angle"
    if abs(rec.bstar_per_earth_radius) > MAX_ABS_BSTAR:
        return f"B* {rec.bstar_per_earth_radius} outside [-{MAX_ABS_BSTAR}, {MAX_ABS_BSTAR}] per Earth radius"
    if abs(rec.ndot_rev_day2) > MAX_ABS_NDOT:
        return f"first derivative of mean motion {rec.ndot_rev_day2} outside +-{MAX_ABS_NDOT} rev/day^2"
    if abs(rec.nddot_rev_day3) > MAX_ABS_NDDOT:
        return f"second derivative of mean motion {rec.nddot_rev_day3} outside +-{MAX_ABS_NDDOT} rev/day^3"
    if not (EPOCH_MIN_JD <= rec.epoch_jd + rec.epoch_fr <= EPOCH_MAX_JD):
        return f"epoch {rec.epoch_jd + rec.epoch_fr:.1f} (JD) outside 1957-10-04 .. 2100-01-01"
    return None
