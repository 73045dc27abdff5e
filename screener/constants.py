"""Physical constants, each with its source.  Units in the names."""

# WGS-72, as used inside SGP4 (Hoots & Roehrich 1980, Spacetrack Report #3; Vallado et al. 2006).
MU_WGS72_KM3_S2 = 398600.8
RE_WGS72_KM = 6378.135

# IERS Conventions (2010) / WGS-84 geocentric gravitational constant, for everything outside SGP4.
MU_EARTH_KM3_S2 = 398600.4418
RE_WGS84_KM = 6378.137

DAY_S = 86400.0
SIDEREAL_DAY_S = 86164.0905  # handbook value (common practice)
MIN_PER_DAY = 1440.0
TWO_PI = 6.283185307179586

# Sanity gates on SGP4 output (common practice: states below ~100 km altitude are re-entry,
# not orbit; speeds above local escape speed are not an element set's bound orbit).
MIN_ALTITUDE_KM = 100.0
MAX_RADIUS_KM = 500_000.0
