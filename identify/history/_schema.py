"""The history database file: schema, version table, checks before any write, migrations.

A history database is a plain SQLite file (standard library ``sqlite3``) in WAL mode.
It is recognised as ours by its ``application_id`` (schema 2 onwards) or by its
``poleprint_schema`` version table (schema 1).  Before anything is written the file is
checked in a read-only connection: a file that is not SQLite, a SQLite file of another
program, a damaged file or a file from a newer Poleprint raises :class:`HistoryError`
and is left byte-for-byte as it was.

Versions
--------
1   ``tests`` (rig, test time, source, sha256, job, poles, settings, tool version).
2   adds where the test time came from (``time_source``), warnings, tags, the time the
    row was added, the ``application_id`` and an index on (rig, test time).  Rows
    stored under version 1 get ``time_source = 'unknown (stored under schema 1)'``.
"""
from __future__ import annotations

import os
import sqlite3
import time
from datetime import datetime, timezone

from .._errors import HistoryError

__all__ = ["SCHEMA_VERSION", "APPLICATION_ID", "connect", "check_file", "BUSY_TIMEOUT_S"]

#: the schema this code writes
SCHEMA_VERSION = 2
#: ``PRAGMA application_id`` of a Poleprint history file (ASCII "PPHI")
APPLICATION_ID = 0x50504849
#: how long a writer waits for another writer's lock before retrying (seconds)
BUSY_TIMEOUT_S = 30.0

_SQLITE_MAGIC = b"SQLite format 3\x00"

_VERSION_TABLE = """
CREATE TABLE IF NOT EXISTS poleprint_schema (
    version INTEGER NOT NULL,
    applied_at TEXT NOT NULL
)"""

_TESTS_V1 = """
CREATE TABLE tests (
    id INTEGER PRIMARY KEY,
    rig TEXT NOT NULL,
    test_time TEXT NOT NULL,
    source TEXT NOT NULL,
    sha256 TEXT NOT NULL UNIQUE,
    job TEXT NOT NULL,
    poles_json TEXT NOT NULL,
    settings_json TEXT NOT NULL,
    tool_version TEXT NOT NULL
)"""

#: version -> statements that bring a database from version - 1 to version
_MIGRATIONS = {
    1: [_TESTS_V1],
    2: [
        "ALTER TABLE tests ADD COLUMN time_source TEXT NOT NULL DEFAULT 'unknown (stored under schema 1)'",
        "ALTER TABLE tests ADD COLUMN warnings_json TEXT NOT NULL DEFAULT '[]'",
        "ALTER TABLE tests ADD COLUMN tags_json TEXT NOT NULL DEFAULT '{}'",
        "ALTER TABLE tests ADD COLUMN added_at TEXT NOT NULL DEFAULT ''",
        "CREATE INDEX IF NOT EXISTS tests_rig_time ON tests (rig, test_time)",
        f"PRAGMA application_id = {APPLICATION_ID}",
    ],
}


def _now_iso() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def _user_tables(conn) -> set:
    rows = conn.execute("SELECT name FROM sqlite_master WHERE type = 'table' "
                        "AND name NOT LIKE 'sqlite_%'").fetchall()
    return {r[0] for r in rows}


def _stored_version(conn) -> int:
    row = conn.execute("SELECT MAX(version) FROM poleprint_schema").fetchone()
    return int(row[0]) if row and row[0] is not None else 0


def check_file(path) -> int:
    """Check an existing file without writing to it; return its schema version (0 = empty).

    Raises
    ------
    HistoryError
        The file is not SQLite, is another program's database, is damaged, or was written
        by a newer Poleprint.  The message names the file and says which.
    """
    path = os.fspath(path)
    try:
        with open(path, "rb") as fh:
            head = fh.read(100)
    except OSError as exc:
        raise HistoryError(f"cannot read the history database ({exc.strerror or exc})", path) from None
    if len(head) == 0:
        return 0  # an empty file is an empty SQLite database
    if not head.startswith(_SQLITE_MAGIC):
        raise HistoryError("not a history database: the file is not SQLite; it was left unchanged "
                           "(give another --db path)", path)
    try:
        conn = sqlite3.connect(f"file:{_uri_path(path)}?mode=ro", uri=True, timeout=BUSY_TIMEOUT_S)
    except sqlite3.Error as exc:
        raise HistoryError(f"cannot open the history database read-only ({exc})", path) from None
    try:
        try:
            tables = _user_tables(conn)
            app_id = conn.execute("PRAGMA application_id").fetchone()[0]
            problems = [r[0] for r in conn.execute("PRAGMA quick_check").fetchall()]
        except sqlite3.DatabaseError as exc:
            raise HistoryError(f"the history database is damaged ({exc}); it was left unchanged: "
                               "restore it from a backup", path) from None
        if problems != ["ok"]:
            raise HistoryError(f"the history database is damaged ({problems[0]}); it was left "
                               "unchanged: restore it from a backup", path)
        if not tables and app_id in (0, APPLICATION_ID):
            return 0
        ours = app_id == APPLICATION_ID or (app_id == 0 and "poleprint_schema" in tables)
        if not ours:
            raise HistoryError("not a history database: a SQLite file of another program (no "
                               "Poleprint tables); it was left unchanged (give another --db path)", path)
        try:
            version = _stored_version(conn) if "poleprint_schema" in tables else 0
        except sqlite3.DatabaseError as exc:
            raise HistoryError(f"the history database is damaged ({exc}); it was left unchanged", path) from None
        if version > SCHEMA_VERSION:
            raise HistoryError(f"the history database has schema version {version}, newer than this "
                               f"Poleprint understands ({SCHEMA_VERSION}); upgrade Poleprint", path)
        if version >= 1 and "tests" not in tables:
            raise HistoryError("the history database is damaged (its tests table is missing); it "
                               "was left unchanged", path)
        return version
    finally:
        conn.close()


def _uri_path(path: str) -> str:
    from urllib.parse import quote

    return quote(os.path.abspath(path))


def _retry(operation, path, what: str, attempts: int = 8):
    """Run ``operation()``; retry when another process holds the lock."""
    delay = 0.05
    for i in range(attempts):
        try:
            return operation()
        except sqlite3.OperationalError as exc:
            text = str(exc).lower()
            if ("locked" not in text and "busy" not in text) or i == attempts - 1:
                raise HistoryError(f"cannot {what} ({exc})", path) from None
            time.sleep(delay)
            delay = min(2 * delay, 2.0)


def _migrate(conn, path) -> None:
    """Bring the database to :data:`SCHEMA_VERSION` in one transaction (others wait)."""
    def step():
        conn.execute("BEGIN IMMEDIATE")
        try:
            conn.execute(_VERSION_TABLE)
            version = _stored_version(conn)  # re-read under the lock: another process may have won
            if version > SCHEMA_VERSION:
                raise HistoryError(f"the history database has schema version {version}, newer "
                                   f"than this Poleprint understands ({SCHEMA_VERSION})", path)
            for target in range(version + 1, SCHEMA_VERSION + 1):
                for statement in _MIGRATIONS[target]:
                    conn.execute(statement)
                conn.execute("INSERT INTO poleprint_schema (version, applied_at) VALUES (?, ?)",
                             (target, _now_iso()))
            conn.execute("COMMIT")
        except BaseException:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            raise

    _retry(step, path, "upgrade the history database")


def connect(path, *, create: bool = True) -> sqlite3.Connection:
    """Open (and if needed create or upgrade) a history database; return the connection.

    The connection is in autocommit mode (``isolation_level=None``): callers open their
    own ``BEGIN IMMEDIATE`` transactions.  WAL journal mode and a busy timeout of
    :data:`BUSY_TIMEOUT_S` are set.

    Raises
    ------
    HistoryError
        See :func:`check_file`; also when the file does not exist and ``create`` is false.
    """
    path = os.fspath(path)
    if os.path.isdir(path):
        raise HistoryError("the history database path is a folder", path)
    exists = os.path.exists(path)
    if not exists and not create:
        raise HistoryError("no history database here (add a test first with 'history add')", path)
    version = check_file(path) if exists else 0
    try:
        conn = sqlite3.connect(path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
    except sqlite3.Error as exc:
        raise HistoryError(f"cannot open the history database ({exc})", path) from None
    try:
        conn.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        mode = _retry(lambda: conn.execute("PRAGMA journal_mode = WAL").fetchone()[0], path,
                      "switch the history database to WAL mode")
        if str(mode).lower() != "wal":
            raise HistoryError(f"the history database cannot use WAL mode (got {mode})", path)
        conn.execute("PRAGMA synchronous = FULL")
        conn.execute("PRAGMA foreign_keys = ON")
        if version < SCHEMA_VERSION:
            _migrate(conn, path)
    except BaseException:
        conn.close()
        raise
    return conn
