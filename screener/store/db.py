"""Opening the store: location, WAL mode, schema version and migrations.

A run is written in one transaction (see runs.py), so an interrupted run (Ctrl-C, SIGTERM,
kill -9, power loss) leaves the previous runs intact and no half run behind; readers in WAL
mode see either the old or the new state and never block the writer.
"""

from __future__ import annotations

import os
import sqlite3
import urllib.parse

from ..environment import env_float
from ..errors import ScreenerError

SCHEMA_VERSION = 7
ENV_STORE = "SCREENER_STORE"
ENV_LOCK_WAIT = "SCREENER_LOCK_WAIT_S"
DEFAULT_LOCK_WAIT_S = 60.0      # how long a writer waits for another run's commit to finish
# An encounter's row is about 3 KB (its record as JSON): a 4 KB page, SQLite's default, holds
# one and leaves a quarter empty; 16 KB pages hold five (measured on 70,548 encounters: 312 ->
# 253 MB; the whole run is written twice per commit, into the WAL and back)
PAGE_SIZE_BYTES = 16384

# Each entry migrates from version k to k+1.  Never edit a released step; append a new one.
MIGRATIONS: list[str] = [
    """
    CREATE TABLE runs (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL,
        started_utc TEXT NOT NULL,
        finished_utc TEXT NOT NULL,
        window_start_utc TEXT NOT NULL,
        window_start_unix_s REAL NOT NULL,
        window_days REAL NOT NULL,
        volume TEXT NOT NULL,
        mode TEXT NOT NULL,
        software_version TEXT NOT NULL,
        config_json TEXT NOT NULL,
        inputs_json TEXT NOT NULL,
        stats_json TEXT NOT NULL,
        thresholds_json TEXT NOT NULL,
        n_primaries INTEGER NOT NULL,
        n_secondaries INTEGER NOT NULL,
        n_encounters INTEGER NOT NULL,
        log_path TEXT
    );
    CREATE TABLE elsets (
        run_id INTEGER NOT NULL REFERENCES runs(id),
        object_id TEXT NOT NULL,
        name TEXT NOT NULL,
        role TEXT NOT NULL,
        kind TEXT NOT NULL,
        epoch_utc TEXT NOT NULL,
        source TEXT NOT NULL,
        line1 TEXT,
        line2 TEXT,
        PRIMARY KEY (run_id, object_id, role)
    );
    CREATE TABLE events (
        id INTEGER PRIMARY KEY,
        primary_id TEXT NOT NULL,
        secondary_id TEXT NOT NULL,
        first_run_id INTEGER NOT NULL,
        last_run_id INTEGER NOT NULL,
        last_tca_unix_s REAL NOT NULL
    );
    CREATE INDEX events_pair ON events(primary_id, secondary_id);
    CREATE TABLE encounters (
        id INTEGER PRIMARY KEY,
        run_id INTEGER NOT NULL REFERENCES runs(id),
        event_id INTEGER NOT NULL REFERENCES events(id),
        primary_id TEXT NOT NULL,
        primary_name TEXT NOT NULL,
        secondary_id TEXT NOT NULL,
        secondary_name TEXT NOT NULL,
        tca_utc TEXT NOT NULL,
        tca_unix_s REAL NOT NULL,
        miss_km REAL NOT NULL,
        radial_km REAL NOT NULL,
        in_track_km REAL NOT NULL,
        cross_track_km REAL NOT NULL,
        relative_speed_km_s REAL NOT NULL,
        pc REAL NOT NULL,
        log10_pc REAL,
        pc_max REAL NOT NULL,
        attention TEXT NOT NULL,
        attention_rank INTEGER NOT NULL,
        covariance_source TEXT NOT NULL,
        dilution INTEGER NOT NULL,
        trend TEXT NOT NULL,
        change TEXT NOT NULL,
        data_json TEXT NOT NULL
    );
    CREATE INDEX encounters_run_rank ON encounters(run_id, pc DESC, miss_km);
    CREATE INDEX encounters_event ON encounters(event_id, run_id);
    """,
    # 1 -> 2: every element set also as its OMM keywords (full precision, any catalog number);
    # line1/line2 stay NULL where no valid TLE can be written (ids above 339999)
    """
    ALTER TABLE elsets ADD COLUMN omm_json TEXT;
    """,
    # 2 -> 3: each encounter's flags (A, D, S; see risk/flags.py) as shown in every output;
    # NULL for encounters stored before, which readers derive from the other columns
    """
    ALTER TABLE encounters ADD COLUMN flags TEXT;
    """,
    # 3 -> 4: manoeuvre trades made for an event (screener maneuver, the TUI's trade screen):
    # what was considered, the chosen burn and its re-screen, kept with the event's history
    """
    CREATE TABLE trades (
        id INTEGER PRIMARY KEY,
        event_id INTEGER REFERENCES events(id),
        run_id INTEGER REFERENCES runs(id),
        encounter_id INTEGER REFERENCES encounters(id),
        created_utc TEXT NOT NULL,
        target TEXT NOT NULL,
        chosen_dv_m_s REAL,
        chosen_burn_utc TEXT,
        created_count INTEGER,
        worsened_count INTEGER,
        oem_path TEXT,
        trade_json TEXT NOT NULL
    );
    CREATE INDEX trades_event ON trades(event_id, id);
    """,
    # 4 -> 5: received CDMs (screener receive, [received] folder): each message once (by
    # MESSAGE_ID), its Pc recomputed beside the sender's, joined to our event of the same pair
    # and TCA where there is one; `thread` is the MESSAGE_ID of the first message (by creation
    # date) of the received event it belongs to (same pair, TCA within the tolerance)
    """
    CREATE TABLE received (
        id INTEGER PRIMARY KEY,
        message_id TEXT NOT NULL UNIQUE,
        originator TEXT NOT NULL,
        creation_utc TEXT NOT NULL,
        creation_unix_s REAL NOT NULL,
        path TEXT NOT NULL,
        sha256 TEXT NOT NULL,
        object1_id TEXT NOT NULL,
        object1_name TEXT NOT NULL,
        object2_id TEXT NOT NULL,
        object2_name TEXT NOT NULL,
        tca_utc TEXT NOT NULL,
        tca_unix_s REAL NOT NULL,
        miss_km REAL NOT NULL,
        pc_sender REAL,
        pc REAL NOT NULL,
        pc_max REAL NOT NULL,
        dilution INTEGER NOT NULL,
        hbr_m REAL NOT NULL,
        event_id INTEGER REFERENCES events(id),
        thread TEXT NOT NULL,
        data_json TEXT NOT NULL
    );
    CREATE INDEX received_pair ON received(object1_id, object2_id, tca_unix_s);
    CREATE INDEX received_event ON received(event_id);
    """,
    # 5 -> 6: each received message's own text as it arrived (written back out on request,
    # the same bytes whatever became of the file); NULL for messages taken in before
    """
    ALTER TABLE received ADD COLUMN text TEXT;
    """,
    # 6 -> 7: alerts sent after a run (screener.alerts): what was sent, through which
    # channels, with what result; alert_subjects holds each event (series key) an alert told
    # of, at which level and Pc, so that the next runs alert again only on escalation
    """
    CREATE TABLE alerts (
        id INTEGER PRIMARY KEY,
        run_id INTEGER REFERENCES runs(id),
        rule TEXT NOT NULL,
        trigger TEXT NOT NULL,
        created_utc TEXT NOT NULL,
        delivered INTEGER NOT NULL,
        subject_line TEXT NOT NULL,
        payload_json TEXT NOT NULL,
        results_json TEXT NOT NULL
    );
    CREATE TABLE alert_subjects (
        alert_id INTEGER NOT NULL REFERENCES alerts(id),
        subject TEXT NOT NULL,
        level TEXT NOT NULL,
        pc REAL NOT NULL,
        last_tca_unix_s REAL NOT NULL
    );
    CREATE INDEX alert_subjects_subject ON alert_subjects(subject, alert_id);
    """,
]


def lock_wait_s() -> float:
    """$SCREENER_LOCK_WAIT_S (seconds, 0 to a day), else DEFAULT_LOCK_WAIT_S."""
    return env_float(ENV_LOCK_WAIT, DEFAULT_LOCK_WAIT_S, 0.0, 86400.0, "seconds")


def describe_sqlite_error(path: str, exc: Exception, waited_s: float) -> str:
    """One line for an SQLite failure, naming the store and what to do."""
    text = str(exc)
    if "locked" in text or "busy" in text:
        return (f"{path}: the store is locked by another writer (waited {waited_s:g} s, "
                f"{ENV_LOCK_WAIT} sets the wait); try again when the other run has finished")
    if "readonly" in text or "read-only" in text:
        return f"{path}: the store cannot be written (read-only file or folder)"
    return f"{path}: store error: {text}"


def default_store_path() -> str:
    """$SCREENER_STORE, else $XDG_DATA_HOME/screener/store.sqlite (~/.local/share/...)."""
    if os.environ.get(ENV_STORE):
        return os.environ[ENV_STORE]
    base = os.environ.get("XDG_DATA_HOME") or os.path.join(os.path.expanduser("~"), ".local", "share")
    return os.path.join(base, "screener", "store.sqlite")


class Store:
    """A connection to one store file.  Use as a context manager or call close()."""

    def __init__(self, path: str | None = None, create: bool = True, readonly: bool = False):
        self.path = os.path.abspath(path or default_store_path())
        if not os.path.exists(self.path):
            if not create or readonly:
                raise ScreenerError(f"{self.path}: no store here (run `screener run` first, or "
                                    f"give --store)")
            try:
                os.makedirs(os.path.dirname(self.path), exist_ok=True)
            except OSError as exc:
                raise ScreenerError(f"{self.path}: cannot create the store folder: {exc.strerror}") from None
        self.lock_wait_s = lock_wait_s()
        try:
            # the path is percent-encoded: '?', '#' and '%' in a file name are not URI syntax
            uri = "file:" + urllib.parse.quote(self.path) + ("?mode=ro" if readonly else "")
            self.conn = sqlite3.connect(uri, uri=True, timeout=self.lock_wait_s,
                                        isolation_level=None, check_same_thread=False)
            self.conn.row_factory = sqlite3.Row
            if not readonly:
                # a new store only (an existing one keeps its page size; see PAGE_SIZE_BYTES)
                self.conn.execute(f"PRAGMA page_size={PAGE_SIZE_BYTES}")
                self.conn.execute("PRAGMA journal_mode=WAL")
                self.conn.execute("PRAGMA synchronous=NORMAL")
            self.conn.execute("PRAGMA foreign_keys=ON")
            self._migrate(readonly)
        except sqlite3.OperationalError as exc:
            raise ScreenerError(describe_sqlite_error(self.path, exc, self.lock_wait_s)) from None
        except sqlite3.DatabaseError as exc:
            raise ScreenerError(f"{self.path}: not a usable screener store ({exc})") from None

    def check_writable(self) -> None:
        """Before any long work: the file and its folder are writable and no other writer holds
        the store longer than the lock wait.  Raises ScreenerError (the CLI exits 4)."""
        for what, p in (("store file", self.path), ("store folder", self.folder)):
            if not os.access(p, os.W_OK):
                raise ScreenerError(f"{p}: the {what} is not writable")
        try:
            self.conn.execute("BEGIN IMMEDIATE")
            self.conn.execute("ROLLBACK")
        except sqlite3.Error as exc:
            raise ScreenerError(describe_sqlite_error(self.path, exc, self.lock_wait_s)) from None

    @property
    def folder(self) -> str:
        return os.path.dirname(self.path)

    def version(self) -> int:
        return int(self.conn.execute("PRAGMA user_version").fetchone()[0])

    def _migrate(self, readonly: bool) -> None:
        v = self.version()
        if v > SCHEMA_VERSION:
            raise ScreenerError(f"{self.path}: store schema {v} is newer than this screener "
                                f"understands ({SCHEMA_VERSION}); upgrade screener")
        if v == SCHEMA_VERSION:
            return
        if readonly:
            raise ScreenerError(f"{self.path}: store schema {v} needs migrating; open it once "
                                f"with `screener run` or `screener tui`")
        self.conn.execute("BEGIN IMMEDIATE")
        try:
            v = self.version()          # another process may have migrated meanwhile
            for step in range(v, SCHEMA_VERSION):
                for stmt in MIGRATIONS[step].split(";"):
                    if stmt.strip():
                        self.conn.execute(stmt)
                self.conn.execute(f"PRAGMA user_version = {step + 1}")
            self.conn.execute("COMMIT")
        except BaseException:
            self.conn.execute("ROLLBACK")
            raise

    def close(self) -> None:
        self.conn.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
