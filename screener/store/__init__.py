"""The run store: SQLite (WAL), runs committed whole, events tracked across runs."""

from .db import SCHEMA_VERSION, Store, default_store_path
from .events import Diff, match_events, trend
from .queries import EncounterRow, RunInfo

__all__ = ["SCHEMA_VERSION", "Store", "default_store_path", "Diff", "match_events", "trend",
           "EncounterRow", "RunInfo"]
