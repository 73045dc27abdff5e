"""The one-letter flags every output shows beside an encounter's Pc, defined once."""

from __future__ import annotations

ASSUMED, DILUTION, SLOW, PROXIMITY = "A", "D", "S", "P"

LEGEND = (
    ("A", "Pc from an assumed covariance (a regime model, not measured)"),
    ("D", "dilution region: Pc would rise if the uncertainty shrank, so a low Pc is not reassuring"),
    ("S", "slow or long encounter: the 2-D short-encounter Pc is doubtful (Pc by Monte Carlo "
          "along the path instead)"),
    ("P", "proximity pair: slow passes recurring through the window (co-orbital), one series"),
)


def encounter_flags(assumed: bool, dilution: bool, short_encounter_ok: bool | None) -> str:
    """'ADS' style flags of one encounter (P is a series' flag, added where series are shown)."""
    return ((ASSUMED if assumed else "") + (DILUTION if dilution else "")
            + (SLOW if short_encounter_ok is False else ""))


def with_proximity(flags: str, proximity: bool) -> str:
    """An encounter's flags as shown in a series: P added when the series is a proximity pair."""
    return flags + PROXIMITY if proximity and PROXIMITY not in flags else flags


def legend_text(sep: str = "; ") -> str:
    return sep.join(f"{k} = {v}" for k, v in LEGEND)
