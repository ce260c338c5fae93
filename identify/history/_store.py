"""The per-rig history store: one row per test, one transaction per add.

Each stored test keeps the rig, when the test was made and where that time came from,
the file's path and SHA-256, the job that analysed it, its poles with their intervals
(the public ``poles`` JSON shape), the job's settings and warnings, the Poleprint
version and free ``key=value`` tags (temperature, excitation amplitude, configuration).

Nothing is lost: every add is one ``BEGIN IMMEDIATE`` transaction (several processes
may add at once; each waits for the lock, and retries), a process killed mid-add
leaves the previous state (SQLite's write-ahead log), and the SHA-256 of the file bytes
makes re-adding a file a no-op with a note.
"""
from __future__ import annotations

import csv
import hashlib
import json
import os
import sqlite3
import time
from dataclasses import dataclass, field
from datetime import date, datetime, timezone

from .._atomic import atomic_writer
from .._errors import HistoryError, ParameterTypeError, ParameterValueError, PoleprintError
from ._schema import connect

__all__ = ["HistoryStore", "StoredTest", "AddOutcome", "RigSummary", "parse_time",
           "resolve_test_time", "file_sha256", "DEFAULT_DB", "TIME_METADATA_KEYS"]

#: default database file, in the working folder
DEFAULT_DB = "poleprint-history.sqlite"

#: preamble keys (lower case) searched, in this order, for the test time
TIME_METADATA_KEYS = ("test date", "test_date", "test time", "test_time", "date", "datetime",
                      "date time", "recorded", "recorded at", "timestamp", "start time",
                      "start_time", "time")

GIVEN = "given (--when)"
MODIFICATION_TIME = "file modification time"


def _utc(dt: datetime) -> datetime:
    return dt.replace(tzinfo=timezone.utc) if dt.tzinfo is None else dt.astimezone(timezone.utc)


def parse_time(value, *, name: str = "when") -> datetime:
    """Parse an ISO-8601 date or date-time; return an aware UTC ``datetime``.

    A time without a zone is taken as UTC; a date alone means midnight UTC.
    ``datetime`` and ``date`` objects are accepted as they are.
    """
    if isinstance(value, datetime):
        return _utc(value)
    if isinstance(value, date):
        return datetime(value.year, value.month, value.day, tzinfo=timezone.utc)
    if not isinstance(value, str):
        raise ParameterTypeError(f"{name} must be an ISO-8601 date or date-time string; got {value!r}")
    text = value.strip()
    if text.endswith(("Z", "z")):
        text = text[:-1] + "+00:00"
    try:
        return _utc(datetime.fromisoformat(text))
    except ValueError:
        pass
    try:
        return _utc(datetime.combine(date.fromisoformat(text), datetime.min.time()))
    except ValueError:
        raise ParameterValueError(f"{name} must be an ISO-8601 date or date-time such as "
                                  f"2026-03-01 or 2026-03-01T09:30:00Z; got {value!r}") from None


def resolve_test_time(path, *, when=None, metadata=None) -> tuple:
    """Return ``(time, where_it_came_from)`` for a test.

    Order: ``when`` if given; else the first of :data:`TIME_METADATA_KEYS` in the record's
    preamble metadata that parses as ISO-8601; else the file's modification time.
    """
    if when is not None:
        return parse_time(when), GIVEN
    for key in TIME_METADATA_KEYS:
        raw = (metadata or {}).get(key)
        if raw is None:
            continue
        try:
            return parse_time(str(raw), name=key), f"record metadata '{key}'"
        except PoleprintError:
            continue
    try:
        mtime = os.stat(path).st_mtime
    except OSError as exc:
        raise HistoryError(f"cannot read the file's modification time ({exc.strerror or exc})", path) from None
    return datetime.fromtimestamp(mtime, tz=timezone.utc), MODIFICATION_TIME


def file_sha256(path) -> str:
    """SHA-256 (hex) of a file's bytes."""
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                digest.update(block)
    except OSError as exc:
        raise HistoryError(f"cannot read the file ({exc.strerror or exc})", path) from None
    return digest.hexdigest()


def _iso(dt: datetime) -> str:
    return _utc(dt).isoformat(timespec="seconds")


@dataclass(frozen=True)
class StoredTest:
    """One stored test.

    Parameters
    ----------
    id : int
        Row number in the database (increasing in the order tests were added).
    rig : str
        Rig name.
    test_time : str
        When the test was made, ISO-8601 UTC.
    time_source : str
        Where the test time came from: ``"given (--when)"``, ``"record metadata 'KEY'"`` or
        ``"file modification time"``.
    source, sha256 : str
        The analysed file and the SHA-256 of its bytes.
    job : str
        ``"decay"``, ``"step"``...
    poles : tuple of identify.poles.Pole
        The job's poles with their intervals.
    settings : dict
        The job's settings; ``warnings`` its one-line warnings.
    tags : dict
        ``key -> value`` strings (temperature, amplitude, configuration...).
    tool_version : str
        Poleprint version that made the analysis; ``added_at`` when the row was stored.
    """

    id: int
    rig: str
    test_time: str
    time_source: str
    source: str
    sha256: str
    job: str
    poles: tuple
    settings: dict = field(default_factory=dict)
    warnings: tuple = ()
    tags: dict = field(default_factory=dict)
    tool_version: str = ""
    added_at: str = ""

    @property
    def time(self) -> datetime:
        """The test time as an aware UTC ``datetime``."""
        return parse_time(self.test_time, name="test_time")

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return {"id": self.id, "rig": self.rig, "test_time": self.test_time,
                "time_source": self.time_source, "source": self.source, "sha256": self.sha256,
                "job": self.job, "poles": [p.to_dict() for p in self.poles],
                "settings": jsonable(self.settings), "warnings": list(self.warnings),
                "tags": dict(self.tags), "tool_version": self.tool_version,
                "added_at": self.added_at}


@dataclass(frozen=True)
class AddOutcome:
    """What one ``add`` did: ``added`` is false for a file already stored (see ``note``)."""

    source: str
    added: bool
    test: StoredTest
    note: str | None = None

    @property
    def warnings(self) -> tuple:
        return self.test.warnings if self.added else ()

    def to_dict(self) -> dict:
        return {"source": self.source, "added": self.added, "note": self.note,
                "test": self.test.to_dict()}


@dataclass(frozen=True)
class RigSummary:
    """One rig in the database: number of tests and the first and last test times."""

    rig: str
    n_tests: int
    first_test_time: str
    last_test_time: str

    def to_dict(self) -> dict:
        return {"rig": self.rig, "n_tests": self.n_tests, "first_test_time": self.first_test_time,
                "last_test_time": self.last_test_time}


def _check_rig(rig) -> str:
    if not isinstance(rig, str):
        raise ParameterTypeError(f"rig must be a name (a string); got {rig!r}")
    name = " ".join(rig.split())
    if not name:
        raise ParameterValueError(f"rig must be a non-empty name; got {rig!r}")
    return name


def _check_tags(tags) -> dict:
    if tags is None:
        return {}
    if not isinstance(tags, dict):
        raise ParameterTypeError(f"tags must be a dict of key -> value strings; got {tags!r}")
    out = {}
    for key, value in tags.items():
        k = str(key).strip()
        if not k:
            raise ParameterValueError(f"tag keys must be non-empty; got {tags!r}")
        out[k] = str(value).strip()
    return out


_COLUMNS = ("id, rig, test_time, time_source, source, sha256, job, poles_json, settings_json, "
            "warnings_json, tags_json, tool_version, added_at")


def _row_to_test(row) -> StoredTest:
    from ..poles import Pole

    (id_, rig, test_time, time_source, source, sha, job, poles_json, settings_json,
     warnings_json, tags_json, tool_version, added_at) = row
    return StoredTest(int(id_), rig, test_time, time_source, source, sha, job,
                      tuple(Pole.from_dict(p) for p in json.loads(poles_json)),
                      json.loads(settings_json), tuple(json.loads(warnings_json)),
                      json.loads(tags_json), tool_version, added_at)


def _default_metadata(path, result) -> dict:
    """The record's preamble metadata: from the result if it carries it, else re-read."""
    for holder in (result, getattr(result, "record", None)):
        meta = getattr(holder, "metadata", None)
        if isinstance(meta, dict):
            return meta
    try:
        from .._csv import read_record
    except ImportError:
        return {}
    try:
        return dict(read_record(path).metadata)
    except PoleprintError:
        return {}


class HistoryStore:
    """A per-rig history database (SQLite, WAL mode, versioned schema).

    Parameters
    ----------
    path : str or os.PathLike, default="poleprint-history.sqlite"
        The database file.  It is created when missing (if ``create``), upgraded when
        written by an older Poleprint, and refused with :class:`HistoryError` when it is
        not a history database, is damaged or is newer; a refused file is not touched.
    create : bool, default=True
        Create the file when it does not exist; else raise :class:`HistoryError`.

    Notes
    -----
    Writers use ``BEGIN IMMEDIATE`` (the write lock is taken at the start of the
    transaction, so two adds never interleave), a busy timeout and a few retries with
    growing pauses; the analysis itself runs outside the transaction.  Use as a context
    manager, or call :meth:`close`.
    """

    def __init__(self, path=DEFAULT_DB, *, create: bool = True):
        self.path = os.fspath(path)
        self._conn = connect(self.path, create=create)

    # -- plumbing -----------------------------------------------------------------
    def close(self) -> None:
        if self._conn is not None:
            self._conn.close()
            self._conn = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    @property
    def conn(self) -> sqlite3.Connection:
        if self._conn is None:
            raise HistoryError("the history database is closed", self.path)
        return self._conn

    @property
    def schema_version(self) -> int:
        return int(self.conn.execute("SELECT MAX(version) FROM poleprint_schema").fetchone()[0])

    def _read(self, sql, params=()):
        try:
            return self.conn.execute(sql, params).fetchall()
        except sqlite3.DatabaseError as exc:
            raise HistoryError(f"cannot read the history database ({exc})", self.path) from None

    def _write(self, work, attempts: int = 6):
        """Run ``work(conn)`` inside one ``BEGIN IMMEDIATE`` transaction; retry on a busy lock."""
        conn = self.conn
        delay = 0.05
        for attempt in range(attempts):
            try:
                conn.execute("BEGIN IMMEDIATE")
            except sqlite3.OperationalError as exc:
                if attempt == attempts - 1:
                    raise HistoryError(f"the history database stayed locked by another process ({exc})",
                                       self.path) from None
                time.sleep(delay)
                delay = min(2 * delay, 2.0)
                continue
            try:
                value = work(conn)
                conn.execute("COMMIT")
                return value
            except BaseException as exc:
                if conn.in_transaction:
                    conn.execute("ROLLBACK")
                if isinstance(exc, sqlite3.DatabaseError):
                    raise HistoryError(f"cannot write to the history database ({exc})", self.path) from None
                raise
        raise HistoryError("the history database stayed locked by another process", self.path)

    # -- adding -------------------------------------------------------------------
    def find_sha256(self, sha256: str) -> StoredTest | None:
        """The stored test whose file had this SHA-256, or ``None``."""
        rows = self._read(f"SELECT {_COLUMNS} FROM tests WHERE sha256 = ?", (sha256,))
        return _row_to_test(rows[0]) if rows else None

    @staticmethod
    def _duplicate_note(existing: StoredTest, source: str) -> str:
        return (f"already stored: {source} has the same SHA-256 as test #{existing.id} of rig "
                f"'{existing.rig}' ({existing.source}, {existing.test_time}); nothing added")

    def _insert_test(self, conn, row: dict) -> int:
        """Insert one row inside the open transaction; return its id (overridable in tests)."""
        cur = conn.execute(
            "INSERT INTO tests (rig, test_time, time_source, source, sha256, job, poles_json, "
            "settings_json, warnings_json, tags_json, tool_version, added_at) "
            "VALUES (:rig, :test_time, :time_source, :source, :sha256, :job, :poles_json, "
            ":settings_json, :warnings_json, :tags_json, :tool_version, :added_at)", row)
        return int(cur.lastrowid)

    def add_result(self, rig: str, result, *, job: str, test_time, time_source: str,
                   tags=None, source=None, sha256=None) -> AddOutcome:
        """Store an analysed result (one transaction); a known SHA-256 is a no-op with a note.

        Parameters
        ----------
        rig : str
            Rig name.
        result : job result
            Any object with ``poles``, ``settings``, ``warnings``, ``source``, ``sha256``.
        job : str
            Name of the job that made ``result``.
        test_time : str or datetime
            When the test was made (ISO-8601; no zone means UTC).
        time_source : str
            Where ``test_time`` came from (stored and shown beside it).
        tags : dict, optional
            ``key -> value`` strings.
        source, sha256 : str, optional
            Override ``result.source`` / ``result.sha256``.
        """
        from .._version import __version__
        from .._jsonable import jsonable

        rig = _check_rig(rig)
        tags = _check_tags(tags)
        if not isinstance(job, str) or not job.strip():
            raise ParameterValueError(f"job must be a non-empty name such as 'decay'; got {job!r}")
        source = str(source if source is not None else getattr(result, "source", ""))
        sha = str(sha256 if sha256 is not None else getattr(result, "sha256", "") or "")
        if not sha:
            raise ParameterValueError(f"the result of {source} carries no SHA-256 to identify it")
        poles = tuple(getattr(result, "poles", ()) or ())
        row = {
            "rig": rig, "test_time": _iso(parse_time(test_time, name="test_time")),
            "time_source": str(time_source), "source": source, "sha256": sha, "job": job.strip(),
            "poles_json": json.dumps([jsonable(p.to_dict()) for p in poles], allow_nan=False),
            "settings_json": json.dumps(jsonable(getattr(result, "settings", {}) or {}), allow_nan=False),
            "warnings_json": json.dumps([str(w) for w in getattr(result, "warnings", ()) or ()]),
            "tags_json": json.dumps(tags, sort_keys=True), "tool_version": __version__,
            "added_at": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        }

        def work(conn):
            found = conn.execute(f"SELECT {_COLUMNS} FROM tests WHERE sha256 = ?", (sha,)).fetchall()
            if found:
                return False, _row_to_test(found[0])
            new_id = self._insert_test(conn, row)
            stored = conn.execute(f"SELECT {_COLUMNS} FROM tests WHERE id = ?", (new_id,)).fetchall()
            return True, _row_to_test(stored[0])

        added, test = self._write(work)
        note = None if added else self._duplicate_note(test, source)
        return AddOutcome(source, added, test, note)

    def add(self, rig: str, path, *, analyse, job: str = "decay", when=None, tags=None,
            read_metadata=None) -> AddOutcome:
        """Analyse one file and store the result (one transaction).

        Parameters
        ----------
        rig : str
            Rig name.
        path : str or os.PathLike
            The record file.
        analyse : callable
            ``analyse(path) -> result`` (e.g. ``identify.decay.analyse_decay`` with its
            options bound); run outside the transaction.
        job : str, default="decay"
            Name stored with the test.
        when : str or datetime, optional
            Test time; else the record's metadata, else the file's modification time
            (:func:`resolve_test_time`; the stored ``time_source`` says which).
        tags : dict, optional
            ``key -> value`` strings.
        read_metadata : callable, optional
            ``read_metadata(path, result) -> dict`` of preamble metadata; by default the
            result's own metadata or the record re-read with ``identify._csv.read_record``.

        Returns
        -------
        AddOutcome
            ``added=False`` with a note when a file with the same SHA-256 is stored.
        """
        rig = _check_rig(rig)
        tags = _check_tags(tags)
        if when is not None:
            when = parse_time(when)
        path = os.fspath(path)
        sha = file_sha256(path)
        existing = self.find_sha256(sha)
        if existing is not None:
            return AddOutcome(path, False, existing, self._duplicate_note(existing, path))
        try:
            result = analyse(path)
        except PoleprintError as exc:
            raise exc.with_source(path)
        if when is not None:
            test_time, time_source = resolve_test_time(path, when=when)
        else:
            meta = (read_metadata or _default_metadata)(path, result)
            test_time, time_source = resolve_test_time(path, metadata=meta)
        return self.add_result(rig, result, job=job, test_time=test_time, time_source=time_source,
                               tags=tags, source=path, sha256=sha)

    # -- reading ------------------------------------------------------------------
    def rigs(self) -> tuple:
        """Every rig with its number of tests and first and last test times."""
        rows = self._read("SELECT rig, COUNT(*), MIN(test_time), MAX(test_time) FROM tests "
                          "GROUP BY rig ORDER BY rig")
        return tuple(RigSummary(r[0], int(r[1]), r[2], r[3]) for r in rows)

    def tests(self, rig: str | None = None, *, tags=None) -> tuple:
        """Stored tests of ``rig`` (all rigs if ``None``) in time order, filtered by ``tags``.

        A test is kept when every ``key=value`` of ``tags`` is among its tags.
        """
        want = _check_tags(tags)
        if rig is None:
            rows = self._read(f"SELECT {_COLUMNS} FROM tests ORDER BY test_time, id")
        else:
            rows = self._read(f"SELECT {_COLUMNS} FROM tests WHERE rig = ? ORDER BY test_time, id",
                              (_check_rig(rig),))
        out = [_row_to_test(r) for r in rows]
        return tuple(t for t in out if all(t.tags.get(k) == v for k, v in want.items()))

    def get(self, rig: str, *, tags=None) -> tuple:
        """The tests of one rig in time order; :class:`HistoryError` if the rig is unknown."""
        rig = _check_rig(rig)
        found = self.tests(rig, tags=tags)
        if not found and not self._read("SELECT 1 FROM tests WHERE rig = ? LIMIT 1", (rig,)):
            known = ", ".join(r.rig for r in self.rigs()) or "none yet"
            raise HistoryError(f"no tests stored for rig '{rig}' (rigs: {known})", self.path)
        return found

    def count(self) -> int:
        return int(self._read("SELECT COUNT(*) FROM tests")[0][0])

    # -- export -------------------------------------------------------------------
    def export_csv(self, rig: str, csv_path, *, tags=None) -> int:
        """Write the rig's tests as CSV, one row per pole; return the number of rows.

        The file is written to a temporary file in the same folder and renamed over
        ``csv_path`` only when complete, so a half-written file never appears.
        """
        tests = self.get(rig, tags=tags)
        csv_path = os.fspath(csv_path)
        header = ["test_id", "rig", "test_time", "time_source", "source", "sha256", "job",
                  "tool_version", "tags", "pole", "natural_frequency_hz",
                  "natural_frequency_hz_lower", "natural_frequency_hz_upper", "damping_ratio",
                  "damping_ratio_lower", "damping_ratio_upper", "decay_rate_per_s",
                  "real_per_s_lower", "real_per_s_upper", "interval_level", "interval_method",
                  "verdict"]
        rows = []
        for t in tests:
            base = [t.id, t.rig, t.test_time, t.time_source, t.source, t.sha256, t.job,
                    t.tool_version, json.dumps(t.tags, sort_keys=True)]
            if not t.poles:
                rows.append(base + [""] * (len(header) - len(base)))
            for i, p in enumerate(t.poles, 1):
                ci = p.ci
                rows.append(base + [
                    i, repr(p.natural_frequency_hz),
                    *(repr(v) for v in (ci.natural_frequency_hz if ci else ("", ""))),
                    repr(p.damping_ratio),
                    *(repr(v) for v in (ci.damping_ratio if ci else ("", ""))),
                    repr(p.decay_rate_per_s),
                    *(repr(v) for v in (ci.real if ci else ("", ""))),
                    ci.level if ci else "", ci.method if ci else "", p.verdict])
        try:
            with atomic_writer(csv_path, "w", newline="", encoding="utf-8") as fh:
                writer = csv.writer(fh)
                writer.writerow(header)
                writer.writerows(rows)
        except OSError as exc:
            raise HistoryError(f"cannot write the CSV file ({exc.strerror or exc})", csv_path) from None
        return len(rows)

