"""The one-letter flags every output shows beside an encounter's Pc, defined once."""

from __future__ import annotations

ASSUMED, DILUTION, SLOW, PROXIMITY, RECEIVED, DISAGREES = "A", "D", "S", "P", "R", "X"

LEGEND = (
    ("A", "Pc from an assumed covariance (a regime model, not measured)"),
    ("D", "dilution region: Pc would rise if the uncertainty shrank, so a low Pc is not reassuring"),
    ("S", "slow or long encounter: the 2-D short-encounter Pc is doubtful (Pc by Monte Carlo "
          "along the path instead)"),
    ("P", "proximity pair: slow passes recurring through the window (co-orbital), one series"),
    ("R", "received CDMs exist for this event (the screening service's messages; a row with "
          "R and no passes of ours, n = 0, is known only from them)"),
    ("X", "the latest received CDM disagrees with our screening (TCA, miss or Pc beyond the "
          "[received] thresholds)"),
)


def encounter_flags(assumed: bool, dilution: bool, short_encounter_ok: bool | None) -> str:
    """'ADS' style flags of one encounter (P is a series' flag, added where series are shown)."""
    return ((ASSUMED if assumed else "") + (DILUTION if dilution else "")
            + (SLOW if short_encounter_ok is False else ""))


def with_proximity(flags: str, proximity: bool) -> str:
    """An encounter's flags as shown in a series: P added when the series is a proximity pair."""
    return flags + PROXIMITY if proximity and PROXIMITY not in flags else flags


def with_received(flags: str, received: bool, disagrees: bool = False) -> str:
    """Flags with R added where the event has received CDMs, and X where the latest one
    disagrees with our screening."""
    for letter, on in ((RECEIVED, received), (DISAGREES, received and disagrees)):
        if on and letter not in flags:
            flags += letter
    return flags


def legend_text(sep: str = "; ") -> str:
    return sep.join(f"{k} = {v}" for k, v in LEGEND)
