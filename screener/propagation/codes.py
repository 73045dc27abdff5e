"""Per-sample state codes: SGP4's own error codes 1-6, and the project's sanity gates."""

from sgp4.api import SGP4_ERRORS

OK = 0
BELOW_100_KM = 10
IMPLAUSIBLE_SPEED = 11
IMPLAUSIBLE_RADIUS = 12
OUTSIDE_EPHEMERIS = 20

_GATES = {
    BELOW_100_KM: "altitude below 100 km (re-entry, not a usable orbit state)",
    IMPLAUSIBLE_SPEED: "speed above local escape speed (element set not usable here)",
    IMPLAUSIBLE_RADIUS: "radius beyond 500,000 km (element set not usable here)",
    OUTSIDE_EPHEMERIS: "time outside the ephemeris' usable span",
}


def describe(code: int) -> str:
    if code == OK:
        return "ok"
    if code in SGP4_ERRORS:
        return f"SGP4 error {code}: {SGP4_ERRORS[code]}"
    return _GATES.get(code, f"code {code}")
