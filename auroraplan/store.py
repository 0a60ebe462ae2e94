"""The workspace database: one SQLite file that keeps the plan of record and its history.

The file is ``WORKSPACE/auroraplan.sqlite`` (`DATABASE_NAME`). It is opened
with the standard library's :mod:`sqlite3` in write-ahead-log mode, its schema
version lives in ``PRAGMA user_version``, and every schema change is a
forward migration in `MIGRATIONS`, applied in order inside one transaction
each, so a database made by an older release is brought up to date when it is
opened and never loses a row. Every write goes through `Store.transaction`:
either all of it reaches the file or none of it does, so a crash, a SIGKILL or
Ctrl-C leaves the last committed state.

The database is an input of every command: `protected_files` names it (and
its ``-wal``/``-shm`` companions) so that no output option can overwrite it.

Commands that only read the plan (tonight, itinerary with a plan already
made) open it with ``create=False`` and get None when it does not exist, so
they never leave a new file in the operator's folder as a side effect.

References
----------
SQLite documentation: "Write-Ahead Logging" (https://sqlite.org/wal.html),
"PRAGMA user_version" and "Atomic Commit In SQLite"
(https://sqlite.org/atomiccommit.html).
"""

from __future__ import annotations

import contextlib
import sqlite3
from dataclasses import dataclass
from pathlib import Path

from auroraplan.errors import InputError

DATABASE_NAME = "auroraplan.sqlite"
"""File name of the workspace database inside the workspace folder."""

APPLICATION_ID = 0x41555250
"""``PRAGMA application_id`` of an auroraplan database ("AURP"), so that another
program's SQLite file is not taken for ours (SQLite file format, header offset 68)."""

BUSY_TIMEOUT_MS = 10_000
"""How long a command waits for another command's write to finish before giving up."""


@dataclass(frozen=True)
class Migration:
    """One forward step of the schema: applied once, in order, inside one transaction.

    Parameters
    ----------
    version : int
        The ``user_version`` the database has after this step (1, 2, 3 ...).
    what : str
        One line saying what the step adds.
    statements : tuple of str
        SQL statements run in order. Only additions (new tables, columns, indexes)
        and data-preserving rewrites belong here: a migration never drops a row.
    """

    version: int
    what: str
    statements: tuple[str, ...]


MIGRATIONS: list[Migration] = [
    Migration(1, "plans and outings of the plan of record, with their history", (
        """CREATE TABLE plans (
            id INTEGER PRIMARY KEY,
            made_at TEXT NOT NULL,          -- UTC ISO 8601
            made_by TEXT NOT NULL,
            command TEXT NOT NULL,
            first_night TEXT NOT NULL,      -- local date of the first evening planned
            last_night TEXT NOT NULL,
            trips TEXT NOT NULL,            -- JSON list of the trip ids planned
            inputs TEXT NOT NULL            -- JSON: digests of the inputs the plan rests on
        )""",
        """CREATE TABLE outings (
            id INTEGER PRIMARY KEY,
            plan_id INTEGER NOT NULL REFERENCES plans(id),
            trip TEXT NOT NULL,
            night TEXT NOT NULL,            -- local date of the evening
            site TEXT NOT NULL,
            backup TEXT,
            chance REAL,
            state TEXT NOT NULL CHECK (state IN ('proposed', 'confirmed', 'released',
                                                 'replaced')),
            changed_at TEXT NOT NULL,
            changed_by TEXT NOT NULL,
            note TEXT NOT NULL DEFAULT ''
        )""",
        """CREATE UNIQUE INDEX outings_live ON outings(trip, night)
           WHERE state IN ('proposed', 'confirmed')""",
        "CREATE INDEX outings_trip_night ON outings(trip, night)",
        """CREATE TABLE outing_events (
            id INTEGER PRIMARY KEY,
            outing_id INTEGER NOT NULL REFERENCES outings(id),
            state TEXT NOT NULL,
            at TEXT NOT NULL,
            by TEXT NOT NULL,
            note TEXT NOT NULL DEFAULT ''
        )""",
        """CREATE TABLE planned_trips (
            trip TEXT PRIMARY KEY,
            plan_id INTEGER NOT NULL REFERENCES plans(id)
        )""",
    )),
    Migration(2, "chances as issued (per site and night, per site and hour) and the logbook", (
        """CREATE TABLE issue_runs (
            id INTEGER PRIMARY KEY,
            made_at TEXT NOT NULL,          -- UTC ISO 8601
            command TEXT NOT NULL,
            inputs TEXT NOT NULL,           -- JSON: file role -> SHA-256 of its bytes
            inputs_digest TEXT NOT NULL,    -- SHA-256 over the activity and weather files
            settings TEXT NOT NULL,         -- JSON: the chance settings used
            settings_digest TEXT NOT NULL,
            step_min REAL NOT NULL
        )""",
        """CREATE TABLE issued_nights (
            run_id INTEGER NOT NULL REFERENCES issue_runs(id),
            site TEXT NOT NULL,
            night TEXT NOT NULL,            -- local date of the evening
            kind TEXT NOT NULL CHECK (kind IN ('forecast', 'outlook', 'nowcast')),
            outing_start TEXT NOT NULL,     -- UTC ISO 8601: first step of the outing hours
            lead_hours REAL NOT NULL,       -- outing_start - made_at
            chance REAL NOT NULL,           -- chance of a sighting during the outing window
            factors BLOB                    -- per dark step: float32 rows (see archive.py)
        )""",
        "CREATE INDEX issued_nights_site_night ON issued_nights(site, night)",
        """CREATE TABLE issued_hours (
            run_id INTEGER NOT NULL REFERENCES issue_runs(id),
            site TEXT NOT NULL,
            night TEXT NOT NULL,
            hour_start TEXT NOT NULL,       -- UTC ISO 8601
            kind TEXT NOT NULL CHECK (kind IN ('forecast', 'outlook', 'nowcast')),
            lead_hours REAL NOT NULL,       -- hour_start - made_at
            chance REAL NOT NULL            -- chance in this hour
        )""",
        "CREATE INDEX issued_hours_site_night ON issued_hours(site, night)",
        """CREATE TABLE logbook (
            id INTEGER PRIMARY KEY,
            entry_key TEXT NOT NULL UNIQUE, -- digest of the normalised fields
            site TEXT NOT NULL,
            night TEXT NOT NULL,            -- local date of the evening
            out_from TEXT,                  -- local HH:MM, or NULL
            out_until TEXT,
            aurora TEXT NOT NULL CHECK (aurora IN ('none', 'faint', 'clear', 'strong')),
            cloud_pct REAL,
            note TEXT NOT NULL DEFAULT '',
            source TEXT NOT NULL DEFAULT '',
            added_at TEXT NOT NULL          -- UTC ISO 8601
        )""",
        "CREATE INDEX logbook_site_night ON logbook(site, night)",
    )),
    Migration(3, "each weather model's forecast cloud per site and hour, as issued", (
        """CREATE TABLE issued_cloud (
            run_id INTEGER NOT NULL REFERENCES issue_runs(id),
            site TEXT NOT NULL,
            night TEXT NOT NULL,            -- local date of the evening
            hour_start TEXT NOT NULL,       -- UTC ISO 8601, as in issued_hours
            model TEXT NOT NULL,            -- weather-model name from its file
            cloud_pct REAL NOT NULL         -- that model's cloud cover at the hour's start
        )""",
        "CREATE INDEX issued_cloud_site_night ON issued_cloud(site, night)",
    )),
    Migration(4, "the hours and each model's cloud packed into the night rows (archive.py)", (
        "ALTER TABLE issue_runs ADD COLUMN models TEXT NOT NULL DEFAULT '[]'",  # JSON names
        "ALTER TABLE issued_nights ADD COLUMN hours BLOB",  # archive.HOUR_FIELDS per dark hour
        "ALTER TABLE issued_nights ADD COLUMN cloud BLOB",  # archive.CLOUD_FIELDS per hour, model
    )),
]
"""The schema, step by step. Append a `Migration` with the next version to change it;
never edit or reorder a step that has been released."""


def schema_version() -> int:
    """The ``user_version`` this code brings a database to."""
    return MIGRATIONS[-1].version if MIGRATIONS else 0


def database_path(workspace) -> Path:
    """The database file of a workspace folder."""
    return Path(workspace) / DATABASE_NAME


def protected_files(database) -> list[Path]:
    """The database file and its write-ahead-log companions: inputs no output may replace."""
    database = Path(database)
    return [database, database.with_name(database.name + "-wal"),
            database.with_name(database.name + "-shm")]


def protected_inputs(ws, database=None) -> list[Path]:
    """Every input of a workspace that an output may not replace: the files it read and the
    workspace database (``database``, when another one is named, as well)."""
    paths = list(ws.files.values()) + protected_files(database_path(ws.path))
    if database:
        paths += protected_files(Path(database).expanduser())
    return paths


class Store:
    """An open workspace database; use as a context manager or call `close`."""

    def __init__(self, path: Path, connection: sqlite3.Connection):
        self.path = path
        self.connection = connection

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self) -> None:
        self.connection.close()

    @contextlib.contextmanager
    def transaction(self):
        """One write transaction: committed whole at the end of the block, or rolled back.

        ``BEGIN IMMEDIATE`` takes the write lock at once, so two commands writing at
        the same time queue (up to BUSY_TIMEOUT_MS) instead of failing half-way.
        """
        con = self.connection
        con.execute("BEGIN IMMEDIATE")
        try:
            yield con
        except BaseException:
            con.execute("ROLLBACK")
            raise
        con.execute("COMMIT")

    def query(self, sql: str, params=()) -> list[sqlite3.Row]:
        """Rows of a read-only query."""
        return self.connection.execute(sql, params).fetchall()


def open_store(path, create: bool = True) -> Store | None:
    """Open (and when needed create and migrate) a workspace database.

    Parameters
    ----------
    path : str or Path
        The database file, usually ``database_path(workspace)``.
    create : bool, optional
        With False a missing file is not created and None is returned.

    Returns
    -------
    Store or None

    Raises
    ------
    InputError
        When the file is not an auroraplan database, is damaged, or was made by a
        newer auroraplan (one line naming the file and what to do).
    """
    path = Path(path)
    if not path.exists():
        if not create:
            return None
        if not path.parent.is_dir():
            raise InputError(f"{path}: folder {path.parent} does not exist; create it first")
    elif path.is_dir():
        raise InputError(f"{path}: is a folder; the workspace database must be a file")
    try:
        con = sqlite3.connect(path, isolation_level=None, timeout=BUSY_TIMEOUT_MS / 1000)
    except sqlite3.Error as exc:
        raise InputError(f"{path}: cannot open the workspace database ({exc})") from None
    con.row_factory = sqlite3.Row
    try:
        _check_and_migrate(path, con)
    except BaseException:
        con.close()
        raise
    return Store(path, con)


def _check_and_migrate(path: Path, con: sqlite3.Connection) -> None:
    try:
        con.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        app_id = con.execute("PRAGMA application_id").fetchone()[0]
        version = con.execute("PRAGMA user_version").fetchone()[0]
        tables = con.execute("SELECT count(*) FROM sqlite_master").fetchone()[0]
    except sqlite3.DatabaseError as exc:
        raise InputError(f"{path}: not a readable auroraplan database ({exc}); move it aside "
                         "and plan again, or restore it from a backup") from None
    if app_id not in (0, APPLICATION_ID) or (app_id == 0 and tables):
        raise InputError(f"{path}: is an SQLite file of another program; move it aside, "
                         f"auroraplan keeps its plan of record in {DATABASE_NAME}")
    if version > schema_version():
        raise InputError(f"{path}: made by a newer auroraplan (schema {version}, this one "
                         f"knows {schema_version()}); update auroraplan to use it")
    # WAL: readers never block the writer, and a killed writer leaves the last commit.
    con.execute("PRAGMA journal_mode = WAL")
    con.execute("PRAGMA synchronous = FULL")
    con.execute("PRAGMA foreign_keys = ON")
    for step in MIGRATIONS:
        if step.version <= version:
            continue
        con.execute("BEGIN IMMEDIATE")
        try:
            # Another command may have migrated while we waited for the lock.
            now = con.execute("PRAGMA user_version").fetchone()[0]
            if now < step.version:
                for sql in step.statements:
                    con.execute(sql)
                con.execute(f"PRAGMA application_id = {APPLICATION_ID}")
                con.execute(f"PRAGMA user_version = {int(step.version)}")
        except BaseException:
            con.execute("ROLLBACK")
            raise
        con.execute("COMMIT")
