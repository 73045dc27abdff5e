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

# Zonal harmonics of EGM96 (Lemoine et al. 1998, NASA/TP-1998-206861), unnormalised:
# J_n = -sqrt(2n + 1) * C_n0 with the normalised C20 = -0.484165371736e-3 (EGM96 table),
# C30 = 0.957254173792e-6 and C40 = 0.539873863789e-6 (from memory).  Used with the IERS mu
# and the WGS-84 equatorial radius in the numerical propagator (propagation/cowell.py).
J2_EGM96 = 1.082626683553e-3
J3_EGM96 = -2.532656485e-6
J4_EGM96 = -1.619621591e-6

# Earth's nominal rotation rate, rad/s (WGS-84; IERS Conventions 2010 Table 1.1): the
# atmosphere co-rotates with it in the drag model.
EARTH_ROTATION_RAD_S = 7.292115e-5
WGS84_FLATTENING = 1.0 / 298.257223563
