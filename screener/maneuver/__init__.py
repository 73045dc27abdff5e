"""The avoidance manoeuvre trade: burn an event's primary, see what it does.

tracks (trajectories behind one interface) -> burn (the burned-minus-unburned model) ->
closest (closest approach near a known TCA, and its Pc) -> trade (the smallest delta-v per
burn time and direction) -> ephemeris_out (the burn as a CCSDS OEM) -> compare (what a
re-screen creates or worsens).  pipeline/maneuver_run.py wires it to the store and the engine.
Advisory only: see screener.MANEUVER_CAUTION.
"""

from .burn import apply_burn, dv_teme_km_s, linearise
from .closest import Approach, Covariances, closest_approach
from .trade import DIRECTIONS, BurnOption, Target, Trade, TradeEvent, burn_times, run_trade

__all__ = ["apply_burn", "dv_teme_km_s", "linearise", "Approach", "Covariances",
           "closest_approach", "DIRECTIONS", "BurnOption", "Target", "Trade", "TradeEvent",
           "burn_times", "run_trade"]
