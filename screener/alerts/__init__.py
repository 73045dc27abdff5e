"""Alerts after a nightly run: rules decide (decide.py) about the run's events (subjects.py);
an alert goes out as JSON to a command hook or as plain-text mail (channels.py, message.py);
what was sent is kept in the store so the next runs alert again only on escalation."""

from .dispatch import AlertsOutcome, alert_failure, alert_run, alert_test

__all__ = ["AlertsOutcome", "alert_failure", "alert_run", "alert_test"]
