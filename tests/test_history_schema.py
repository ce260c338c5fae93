"""The history file: version table, upgrade from schema 1, refusal of foreign or damaged files."""
from __future__ import annotations

import hashlib
import json
import os
import sqlite3

import numpy as np
import pytest

from identify._errors import HistoryError
from identify.history import SCHEMA_VERSION, HistoryStore
from identify.history._schema import APPLICATION_ID
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals


class Result:
    def __init__(self, i):
        self.source = f"test{i}.csv"
        self.sha256 = hashlib.sha256(f"record {i}".encode()).hexdigest()
        self.poles = (pole_with_delta_intervals(pole_from_frequency_damping(10.0 + i, 0.02),
                                                np.diag([0.01, 0.02]), 0.95),)
        self.warnings = ()
        self.settings = {"i": i}


def filled_db(path, n=40):
    with HistoryStore(path) as store:
        for i in range(n):
            store.add_result("rig", Result(i), job="decay", test_time=f"2026-01-{1 + i % 28:02d}",
                             time_source="given")
    return path


def digest(path):
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def test_new_file_records_version_and_application_id(tmp_path):
    db = tmp_path / "h.sqlite"
    with HistoryStore(db) as store:
        assert store.schema_version == SCHEMA_VERSION == 2
    conn = sqlite3.connect(db)
    assert conn.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID
    assert [r[0] for r in conn.execute("SELECT version FROM poleprint_schema ORDER BY version")] == [1, 2]
    conn.close()
    HistoryStore(db).close()  # reopening adds no version row
    conn = sqlite3.connect(db)
    assert conn.execute("SELECT COUNT(*) FROM poleprint_schema").fetchone()[0] == 2
    conn.close()


def test_empty_file_becomes_a_database(tmp_path):
    db = tmp_path / "empty.sqlite"
    db.write_bytes(b"")
    with HistoryStore(db) as store:
        assert store.count() == 0 and store.schema_version == SCHEMA_VERSION


def test_schema_1_database_is_upgraded_without_losing_rows(tmp_path):
    db = tmp_path / "old.sqlite"
    # a version-1 file written by hand, as the first release wrote it (rollback journal)
    conn = sqlite3.connect(db)
    conn.executescript("""
        CREATE TABLE poleprint_schema (version INTEGER NOT NULL, applied_at TEXT NOT NULL);
        INSERT INTO poleprint_schema VALUES (1, '2025-01-01T00:00:00+00:00');
        CREATE TABLE tests (
            id INTEGER PRIMARY KEY, rig TEXT NOT NULL, test_time TEXT NOT NULL,
            source TEXT NOT NULL, sha256 TEXT NOT NULL UNIQUE, job TEXT NOT NULL,
            poles_json TEXT NOT NULL, settings_json TEXT NOT NULL, tool_version TEXT NOT NULL);
    """)
    pole = pole_with_delta_intervals(pole_from_frequency_damping(8.0, 0.025), np.diag([0.01, 0.04]), 0.95)
    for i in range(5):
        conn.execute("INSERT INTO tests (rig, test_time, source, sha256, job, poles_json, settings_json, "
                     "tool_version) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                     ("old rig", f"2025-0{i + 1}-01T00:00:00+00:00", f"old{i}.csv", f"{i:064x}", "decay",
                      json.dumps([pole.to_dict()]), json.dumps({"i": i}), "0.0.9"))
    conn.commit()
    conn.close()

    with HistoryStore(db) as store:
        assert store.schema_version == 2
        tests = store.get("old rig")
        assert [t.source for t in tests] == [f"old{i}.csv" for i in range(5)]
        assert tests[0].time_source == "unknown (stored under schema 1)"
        assert tests[0].tags == {} and tests[0].warnings == () and tests[0].settings == {"i": 0}
        assert tests[0].tool_version == "0.0.9"
        assert tests[0].poles[0].damping_ratio == pytest.approx(0.025)
        assert tests[0].poles[0].ci.damping_ratio == pytest.approx(pole.ci.damping_ratio)
        added = store.add_result("old rig", Result(99), job="decay", test_time="2026-01-01",
                                 time_source="given", tags={"config": "B"})
        assert added.added and store.count() == 6
    conn = sqlite3.connect(db)
    assert conn.execute("PRAGMA application_id").fetchone()[0] == APPLICATION_ID
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    conn.close()


def test_foreign_sqlite_file_is_refused_and_unchanged(tmp_path):
    db = tmp_path / "inventory.db"
    conn = sqlite3.connect(db)
    conn.executescript("CREATE TABLE parts (id INTEGER PRIMARY KEY, name TEXT);"
                       "INSERT INTO parts (name) VALUES ('bolt');")
    conn.commit()
    conn.close()
    before = digest(db)
    with pytest.raises(HistoryError, match="another program") as info:
        HistoryStore(db)
    assert str(db) in str(info.value)
    assert digest(db) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["inventory.db"]


def test_non_sqlite_file_is_refused_and_unchanged(tmp_path):
    db = tmp_path / "notes.csv"
    db.write_text("time,accel\n0,1\n")
    before = digest(db)
    with pytest.raises(HistoryError, match="not SQLite"):
        HistoryStore(db)
    assert digest(db) == before


def test_corrupted_file_is_refused_and_unchanged(tmp_path):
    db = filled_db(tmp_path / "h.sqlite")
    data = bytearray(db.read_bytes())
    page = sqlite3.connect(db).execute("PRAGMA page_size").fetchone()[0]
    assert len(data) >= 3 * page
    rng = np.random.default_rng(7)
    data[page:3 * page] = rng.integers(0, 256, 2 * page, dtype=np.uint8).tobytes()  # pages 2-3 garbled
    db.write_bytes(bytes(data))
    before = digest(db)
    with pytest.raises(HistoryError, match="damaged") as info:
        HistoryStore(db)
    assert "left unchanged" in str(info.value) and str(db) in str(info.value)
    assert digest(db) == before


def test_truncated_file_is_refused_and_unchanged(tmp_path):
    db = filled_db(tmp_path / "h.sqlite", n=200)
    data = db.read_bytes()
    db.write_bytes(data[: len(data) // 2])
    before = digest(db)
    with pytest.raises(HistoryError, match="damaged"):
        HistoryStore(db)
    assert digest(db) == before


def test_newer_schema_is_refused(tmp_path):
    db = filled_db(tmp_path / "h.sqlite", n=2)
    conn = sqlite3.connect(db)
    conn.execute("INSERT INTO poleprint_schema VALUES (7, '2030-01-01')")
    conn.commit()
    conn.close()
    before = digest(db)
    with pytest.raises(HistoryError, match="schema version 7, newer"):
        HistoryStore(db)
    assert digest(db) == before


def test_folder_as_database_path(tmp_path):
    with pytest.raises(HistoryError, match="folder"):
        HistoryStore(tmp_path)
    assert os.listdir(tmp_path) == []
