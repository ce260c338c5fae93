"""The history store: what is stored per test, duplicates, test time, filtering, CSV export."""
from __future__ import annotations

import csv
import hashlib
import json
import os
import sqlite3
from dataclasses import dataclass, field
from datetime import datetime, timezone

import numpy as np
import pytest

import identify
from identify._errors import HistoryError, ParameterValueError, RecordError
from identify.history import HistoryStore, parse_time, resolve_test_time
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals


@dataclass(frozen=True)
class FakeResult:
    """Stands in for a job result (same fields the store reads)."""

    source: str
    sha256: str
    poles: tuple
    warnings: tuple = ()
    settings: dict = field(default_factory=dict)

    def to_dict(self):
        return {"source": self.source, "poles": [p.to_dict() for p in self.poles]}


def make_pole(fn_hz, zeta, sd_re=0.02, sd_im=0.05):
    return pole_with_delta_intervals(pole_from_frequency_damping(fn_hz, zeta),
                                     np.diag([sd_re ** 2, sd_im ** 2]), 0.95)


def fake_analyse(poles=None, warnings=("few cycles: only 4.0 cycles above the noise floor (5 or more advised)",)):
    calls = []

    def analyse(path):
        calls.append(path)
        data = open(path, "rb").read()
        return FakeResult(str(path), hashlib.sha256(data).hexdigest(),
                          tuple(poles) if poles is not None else (make_pole(12.0, 0.03), make_pole(31.0, 0.012)),
                          warnings, {"method": "fake", "confidence": 0.95, "start_s": None})

    analyse.calls = calls
    return analyse


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return str(path)


def test_add_stores_everything_asked_for(tmp_path):
    db = tmp_path / "h.sqlite"
    f = write(tmp_path, "bump1.csv", "t,x\n0,1\n0.1,0.5\n")
    analyse = fake_analyse()
    with HistoryStore(db) as store:
        out = store.add("Rig A", f, analyse=analyse, job="decay", when="2026-03-01T09:30:00Z",
                        tags={"temperature": "20C", "amplitude": "low"})
        assert out.added and out.note is None
        (t,) = store.get("Rig A")
    assert t.rig == "Rig A" and t.job == "decay" and t.source == f
    assert t.sha256 == hashlib.sha256(open(f, "rb").read()).hexdigest()
    assert t.test_time == "2026-03-01T09:30:00+00:00" and t.time_source == "given (--when)"
    assert t.tags == {"temperature": "20C", "amplitude": "low"}
    assert t.tool_version == identify.__version__
    assert t.settings == {"method": "fake", "confidence": 0.95, "start_s": None}
    assert t.warnings[0].startswith("few cycles:")
    # poles round-trip with their intervals (public poles JSON shape)
    expected = analyse(f).poles
    assert len(t.poles) == 2
    for got, want in zip(t.poles, expected):
        assert got.real == pytest.approx(want.real) and got.imag == pytest.approx(want.imag)
        assert got.ci.damping_ratio == pytest.approx(want.ci.damping_ratio)
        assert got.ci.natural_frequency_hz == pytest.approx(want.ci.natural_frequency_hz)
        assert got.ci.level == 0.95
    assert json.loads(json.dumps(out.to_dict()))["test"]["poles"][0]["ci"]["level"] == 0.95


def test_database_is_in_wal_mode_with_version_table(tmp_path):
    db = tmp_path / "h.sqlite"
    HistoryStore(db).close()
    conn = sqlite3.connect(db)
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert conn.execute("SELECT MAX(version) FROM poleprint_schema").fetchone()[0] == 2
    conn.close()


def test_readding_a_file_is_a_noop_with_a_note(tmp_path):
    db = tmp_path / "h.sqlite"
    f = write(tmp_path, "bump1.csv", "t,x\n0,1\n")
    copy = write(tmp_path, "copy-of-bump1.csv", "t,x\n0,1\n")  # same bytes, other name
    analyse = fake_analyse()
    with HistoryStore(db) as store:
        first = store.add("rig", f, analyse=analyse, when="2026-01-01")
        again = store.add("rig", f, analyse=analyse, when="2026-02-01")
        other = store.add("other rig", copy, analyse=analyse, when="2026-02-01")
        assert store.count() == 1
    assert first.added and not again.added and not other.added
    assert "already stored" in again.note and f"#{first.test.id}" in again.note
    assert "'rig'" in other.note  # says which rig holds it
    assert analyse.calls == [f]  # a known file is not analysed again
    assert again.test.test_time == first.test.test_time  # nothing overwritten


def test_add_result_duplicate_inside_transaction(tmp_path):
    res = FakeResult("a.csv", "ab" * 32, (make_pole(5.0, 0.02),))
    with HistoryStore(tmp_path / "h.sqlite") as store:
        a = store.add_result("rig", res, job="decay", test_time="2026-01-01", time_source="given")
        b = store.add_result("rig", res, job="decay", test_time="2026-02-01", time_source="given")
        assert a.added and not b.added and store.count() == 1


def test_test_time_from_metadata_then_file_time(tmp_path):
    f = write(tmp_path, "bump.csv", "t,x\n0,1\n")
    stamp = datetime(2025, 7, 4, 12, 0, tzinfo=timezone.utc).timestamp()
    os.utime(f, (stamp, stamp))
    when, source = resolve_test_time(f, metadata={"test date": "2026-03-01T10:00:00+01:00"})
    assert when == datetime(2026, 3, 1, 9, 0, tzinfo=timezone.utc)
    assert source == "record metadata 'test date'"
    when, source = resolve_test_time(f, metadata={"date": "not a date", "operator": "K"})
    assert source == "file modification time" and when == datetime(2025, 7, 4, 12, 0, tzinfo=timezone.utc)
    when, source = resolve_test_time(f, when="2026-05-05", metadata={"date": "2020-01-01"})
    assert source == "given (--when)" and when == datetime(2026, 5, 5, tzinfo=timezone.utc)

    with HistoryStore(tmp_path / "h.sqlite") as store:
        meta = store.add("rig", f, analyse=fake_analyse(),
                         read_metadata=lambda path, result: {"recorded": "2026-04-02T08:00:00Z"})
        g = write(tmp_path, "bump2.csv", "t,x\n0,2\n")
        os.utime(g, (stamp, stamp))
        mtime = store.add("rig", g, analyse=fake_analyse(), read_metadata=lambda path, result: {})
    assert meta.test.time_source == "record metadata 'recorded'"
    assert meta.test.test_time == "2026-04-02T08:00:00+00:00"
    assert mtime.test.time_source == "file modification time"
    assert mtime.test.test_time == "2025-07-04T12:00:00+00:00"


def test_parse_time_rules():
    assert parse_time("2026-03-01T09:30") == datetime(2026, 3, 1, 9, 30, tzinfo=timezone.utc)  # no zone: UTC
    assert parse_time("2026-03-01T09:30:00Z") == datetime(2026, 3, 1, 9, 30, tzinfo=timezone.utc)
    with pytest.raises(ParameterValueError, match="ISO-8601.*'yesterday'"):
        parse_time("yesterday")


def test_tests_in_time_order_and_tag_filter(tmp_path):
    with HistoryStore(tmp_path / "h.sqlite") as store:
        for i, (day, temp) in enumerate([("2026-03-01", "20C"), ("2026-01-01", "5C"), ("2026-02-01", "20C")]):
            f = write(tmp_path, f"b{i}.csv", f"t,x\n0,{i}\n")
            store.add("rig", f, analyse=fake_analyse(), when=day, tags={"temperature": temp})
        times = [t.test_time[:10] for t in store.get("rig")]
        warm = [t.test_time[:10] for t in store.get("rig", tags={"temperature": "20C"})]
        (summary,) = store.rigs()
    assert times == ["2026-01-01", "2026-02-01", "2026-03-01"]
    assert warm == ["2026-02-01", "2026-03-01"]
    assert (summary.rig, summary.n_tests) == ("rig", 3)
    assert summary.first_test_time.startswith("2026-01-01") and summary.last_test_time.startswith("2026-03-01")


def test_unknown_rig_and_missing_database(tmp_path):
    with HistoryStore(tmp_path / "h.sqlite") as store:
        store.add("known", write(tmp_path, "a.csv", "1"), analyse=fake_analyse(), when="2026-01-01")
        with pytest.raises(HistoryError, match="no tests stored for rig 'other'.*known"):
            store.get("other")
    missing = tmp_path / "none.sqlite"
    with pytest.raises(HistoryError, match="no history database"):
        HistoryStore(missing, create=False)
    assert not missing.exists()


def test_failed_analysis_stores_nothing(tmp_path):
    f = write(tmp_path, "bad.csv", "nonsense")

    def analyse(path):
        raise RecordError("no numeric data rows")

    with HistoryStore(tmp_path / "h.sqlite") as store:
        with pytest.raises(RecordError) as info:
            store.add("rig", f, analyse=analyse)
        assert store.count() == 0
    assert info.value.source == f


def test_export_csv_rows_and_atomic_write(tmp_path, monkeypatch):
    db = tmp_path / "h.sqlite"
    out = tmp_path / "rig.csv"
    with HistoryStore(db) as store:
        for i in range(3):
            store.add("rig", write(tmp_path, f"b{i}.csv", f"x{i}"), analyse=fake_analyse(),
                      when=f"2026-0{i + 1}-01", tags={"config": "A"})
        n = store.export_csv("rig", out)
        assert n == 6  # 3 tests x 2 poles
        rows = list(csv.DictReader(open(out, newline="")))
        assert len(rows) == 6 and rows[0]["pole"] == "1" and rows[1]["pole"] == "2"
        assert float(rows[0]["natural_frequency_hz"]) == pytest.approx(12.0)
        assert float(rows[0]["damping_ratio_lower"]) < float(rows[0]["damping_ratio"]) < float(rows[0]["damping_ratio_upper"])
        assert json.loads(rows[0]["tags"]) == {"config": "A"}
        before = out.read_bytes()

        # a failure while writing leaves the previous file as it was and no temporary file
        import identify.history._store as store_module

        class Exploding:
            def __init__(self, fh):
                self.fh = fh

            def writerow(self, row):
                self.fh.write("partial\n")

            def writerows(self, rows):
                raise OSError(28, "No space left on device")

        monkeypatch.setattr(store_module.csv, "writer", Exploding)
        with pytest.raises(HistoryError, match="cannot write the CSV file"):
            store.export_csv("rig", out)
    assert out.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")) == []


def test_bad_arguments_are_named(tmp_path):
    with HistoryStore(tmp_path / "h.sqlite") as store:
        f = write(tmp_path, "a.csv", "1")
        with pytest.raises(ParameterValueError, match="rig must be a non-empty name"):
            store.add("  ", f, analyse=fake_analyse())
        with pytest.raises(ParameterValueError, match="when must be an ISO-8601"):
            store.add("rig", f, analyse=fake_analyse(), when="03/01/2026")
        assert store.count() == 0
