"""screener: conjunction screening for satellite operators.

Layers, each importing only the ones before it:
elements -> propagation -> screening -> risk -> store -> cli / tui.

Results are advisory only; see CAUTION.
"""

__version__ = "0.1.0"

CAUTION = (
    "Advisory only: screener results do not replace the operator's own procedures, "
    "the official screening service, local regulation or licensed practice."
)

MANEUVER_CAUTION = (
    "Manoeuvre planning here is advisory: coordinate with the screening service and re-screen "
    "with the operator's own orbit determination before any burn; local regulation and "
    "licensed practice govern."
)

__all__ = ["CAUTION", "MANEUVER_CAUTION", "__version__"]
