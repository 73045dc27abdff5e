"""The terminal UI (textual): triage the ranked encounters, drill into one event.

The UI reads the store and calls the pipeline; nothing below it imports the UI."""

from .app import ScreenerApp, make_app


def run_tui(store_path: str | None = None, config_path: str | None = None) -> int:
    app = make_app(store_path, config_path)
    app.run()
    return app.return_code or 0


__all__ = ["ScreenerApp", "make_app", "run_tui"]
