"""``poleprint history``: add, list, show, trend, export; errors as one line naming the file."""
from __future__ import annotations

import argparse
import csv
import hashlib
import json
import math
import os
import sqlite3
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest

from identify.cli import _history
from identify.cli._common import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, CliUsageError, fail_line
from identify._errors import RecordError
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals


def run_cli(argv) -> int:
    """Parse and run like ``identify.cli.main`` does, with only the history subcommand."""
    parser = argparse.ArgumentParser(prog="poleprint")
    sub = parser.add_subparsers(dest="command")
    _history.register(sub, "history", "history")
    args = parser.parse_args(argv)
    try:
        return int(args.func(args))
    except CliUsageError as exc:
        fail_line(str(exc))
        return EXIT_USAGE


class FakeResult:
    def __init__(self, path, zeta):
        self.source = str(path)
        with open(path, "rb") as fh:
            self.sha256 = hashlib.sha256(fh.read()).hexdigest()
        s = pole_from_frequency_damping(12.0, zeta)
        self.poles = (pole_with_delta_intervals(s, np.diag([(0.0008 * abs(s)) ** 2, 0.01]), 0.95),)
        self.warnings = ()
        self.settings = {"fake": True}

    def to_dict(self):
        return {"source": self.source}


@pytest.fixture
def fake_jobs(monkeypatch):
    """Replace the real jobs: ζ is read from the file's second line, 'bad' files fail."""
    seen = []

    def analyser(args):
        seen.append(args)

        def analyse(path):
            with open(path) as fh:
                text = fh.read().splitlines()
            if text[1] == "bad":
                raise RecordError("no numeric data rows")
            return FakeResult(path, float(text[1]))

        return analyse

    monkeypatch.setattr(_history, "_analyser", analyser)
    return seen


def make_files(folder, zetas, start=datetime(2026, 1, 15, tzinfo=timezone.utc)):
    paths = []
    for i, z in enumerate(zetas):
        p = folder / f"bump{i:02d}.csv"
        p.write_text(f"date: {(start + timedelta(days=30.44 * i)).isoformat()}\n{z!r}\n")
        paths.append(str(p))
    return paths


def declining(n=12, seed=3):
    rng = np.random.default_rng(seed)
    return [0.03 - 5e-5 * 30.44 * i + rng.normal(0, 0.0012) for i in range(n)]


def test_add_list_show_trend_export(tmp_path, capsys, fake_jobs):
    db = str(tmp_path / "rig.sqlite")
    files = make_files(tmp_path, declining())
    code = run_cli(["history", "add", "--rig", "demo rig", *files, "--tag", "temperature=20C", "--db", db])
    out, err = capsys.readouterr()
    assert code == EXIT_OK and err == ""
    lines = out.splitlines()
    assert len(lines) == 12 and all(l.startswith("added: ") for l in lines)
    assert "rig 'demo rig' test #1" in lines[0] and "(time from file modification time)" in lines[0]

    # re-adding is a no-op with a note, exit 0
    assert run_cli(["history", "add", "--rig", "demo rig", files[0], "--db", db]) == EXIT_OK
    out, _ = capsys.readouterr()
    assert out.startswith("note: already stored:") and "nothing added" in out

    assert run_cli(["history", "--db", db, "list"]) == EXIT_OK  # --db before the action works too
    out, _ = capsys.readouterr()
    assert "demo rig" in out and "12" in out

    assert run_cli(["history", "show", "--rig", "demo rig", "--db", db]) == EXIT_OK
    out, _ = capsys.readouterr()
    assert "rig 'demo rig': 12 test(s)" in out and "temperature=20C" in out and "12 Hz" in out

    assert run_cli(["history", "show", "--rig", "demo rig", "--json", "--db", db]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    assert len(data["tests"]) == 12 and data["tests"][0]["poles"][0]["ci"]["level"] == 0.95


def test_trend_text_and_json(tmp_path, capsys, fake_jobs):
    db = str(tmp_path / "rig.sqlite")
    files = make_files(tmp_path, declining())
    for i, f in enumerate(files):
        when = (datetime(2026, 1, 15, tzinfo=timezone.utc) + timedelta(days=30.44 * i)).isoformat()
        assert run_cli(["history", "add", "--rig", "r1", f, "--when", when, "--db", db]) == EXIT_OK
    capsys.readouterr()
    plot = tmp_path / "trend.png"
    code = run_cli(["history", "trend", "--rig", "r1", "--threshold-damping", "0.01", "--plot", str(plot),
                    "--db", db])
    out, err = capsys.readouterr()
    assert code == EXIT_OK
    assert "mode 1" in out and "projected crossing (indicative)" in out
    assert "cautions:" in out and "indicative only" in out and "compare like with like" in out
    assert "--tag" in out
    for word in ("safe", "cleared", "stable"):
        assert word not in out.lower() and word not in err.lower()
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not [p for p in os.listdir(tmp_path) if p.endswith(".tmp")]

    assert run_cli(["history", "trend", "--rig", "r1", "--json", "--db", db]) == EXIT_OK
    data = json.loads(capsys.readouterr().out)
    (mode,) = data["modes"]
    assert mode["natural_frequency_hz"] == pytest.approx(12.0, abs=0.01)
    slope = mode["damping_ratio_slope_per_day"]
    assert slope["ci"][0] < slope["value"] < slope["ci"][1] < 0
    assert mode["level"] in ("declining", "approaching the threshold")
    crossing = mode["threshold_crossing"]
    assert crossing["ci"][0] <= crossing["date"] <= crossing["ci"][1] and crossing["label"] == "indicative"
    assert data["cautions"] and data["threshold_damping"] == 0.01


def test_tag_filter_and_mixed_tag_warning(tmp_path, capsys, fake_jobs):
    db = str(tmp_path / "rig.sqlite")
    warm = make_files(tmp_path, declining(6, seed=1))
    cold_dir = tmp_path / "cold"
    cold_dir.mkdir()
    cold = make_files(cold_dir, [z + 0.01 for z in declining(6, seed=2)])
    assert run_cli(["history", "add", "--rig", "r", *warm, "--tag", "temperature=20C", "--db", db]) == 0
    assert run_cli(["history", "add", "--rig", "r", *cold, "--tag", "temperature=5C", "--db", db]) == 0
    capsys.readouterr()
    assert run_cli(["history", "trend", "--rig", "r", "--db", db]) == EXIT_OK
    _, err = capsys.readouterr()
    assert "poleprint: warning: r: mixed tags: tests differ in temperature (20C, 5C)" in err
    assert run_cli(["history", "trend", "--rig", "r", "--tag", "temperature=20C", "--json", "--db", db]) == 0
    out, err = capsys.readouterr()
    assert json.loads(out)["n_tests"] == 6 and "mixed tags" not in err


def test_export_csv(tmp_path, capsys, fake_jobs):
    db = str(tmp_path / "rig.sqlite")
    files = make_files(tmp_path, declining(4))
    assert run_cli(["history", "add", "--rig", "r", *files, "--db", db]) == EXIT_OK
    target = tmp_path / "out.csv"
    assert run_cli(["history", "export", "--rig", "r", "--csv", str(target), "--db", db]) == EXIT_OK
    assert "wrote 4 row(s)" in capsys.readouterr().out
    with open(target, newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["test_id"] for r in rows] == ["1", "2", "3", "4"]
    assert float(rows[0]["damping_ratio"]) == pytest.approx(declining(4)[0])


def test_partial_failure_and_error_lines(tmp_path, capsys, fake_jobs):
    db = str(tmp_path / "rig.sqlite")
    good = make_files(tmp_path, [0.02])
    bad = tmp_path / "bad.csv"
    bad.write_text("date: 2026-01-01\nbad\n")
    code = run_cli(["history", "add", "--rig", "r", good[0], str(bad), "--db", db])
    out, err = capsys.readouterr()
    assert code == EXIT_PARTIAL
    assert err.strip() == f"poleprint: error: {bad}: no numeric data rows"
    assert run_cli(["history", "add", "--rig", "r", str(bad), "--json", "--db", db]) == EXIT_USAGE
    out, _ = capsys.readouterr()
    assert json.loads(out) == {"source": str(bad), "error": "no numeric data rows"}
    missing = str(tmp_path / "nope.csv")
    assert run_cli(["history", "add", "--rig", "r", missing, "--db", db]) == EXIT_USAGE
    assert f"poleprint: error: {missing}: cannot read the file" in capsys.readouterr().err


def test_foreign_database_is_refused_unchanged(tmp_path, capsys, fake_jobs):
    db = tmp_path / "other.db"
    conn = sqlite3.connect(db)
    conn.execute("CREATE TABLE accounts (id INTEGER)")
    conn.commit()
    conn.close()
    before = db.read_bytes()
    files = make_files(tmp_path, [0.02])
    assert run_cli(["history", "add", "--rig", "r", *files, "--db", str(db)]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith(f"poleprint: error: {db}: not a history database")
    assert db.read_bytes() == before


def test_usage_errors(tmp_path, capsys, fake_jobs):
    db = str(tmp_path / "h.sqlite")
    files = make_files(tmp_path, [0.02])
    assert run_cli(["history", "add", "--rig", "r", *files, "--tag", "oops", "--db", db]) == EXIT_USAGE
    assert "--tag must be KEY=VALUE" in capsys.readouterr().err
    assert run_cli(["history", "add", "--rig", "r", *files, "--when", "last tuesday", "--db", db]) == EXIT_USAGE
    assert "ISO-8601" in capsys.readouterr().err
    assert run_cli(["history", "list", "--db", db]) == EXIT_USAGE  # nothing created by the failures
    assert "no history database" in capsys.readouterr().err
    assert not os.path.exists(db)
    assert run_cli(["history"]) == EXIT_USAGE
    assert "needs an action" in capsys.readouterr().err
    assert run_cli(["history", "add", "--rig", "r", *files, "--db", db]) == EXIT_OK
    capsys.readouterr()
    assert run_cli(["history", "trend", "--rig", "other", "--db", db]) == EXIT_USAGE
    assert "no tests stored for rig 'other'" in capsys.readouterr().err
    assert run_cli(["history", "trend", "--rig", "r", "--threshold-damping", "-1", "--db", db]) == EXIT_USAGE
    assert "threshold_damping must be a finite number > 0" in capsys.readouterr().err


def test_job_options_are_checked(tmp_path, capsys):
    db = str(tmp_path / "h.sqlite")
    f = make_files(tmp_path, [0.02])[0]
    assert run_cli(["history", "add", "--rig", "r", f, "--job", "step", "--db", db]) == EXIT_USAGE
    assert "--job step needs --output" in capsys.readouterr().err
    assert run_cli(["history", "add", "--rig", "r", f, "--output", "y", "--db", db]) == EXIT_USAGE
    assert "--input/--output belong to --job step" in capsys.readouterr().err


def test_registered_in_the_main_command():
    from identify.cli import SUBCOMMANDS

    assert ("history", "_history") in [(name, module) for name, module, _ in SUBCOMMANDS]


# -- end to end with the real decay job --------------------------------------------------------
def write_decay_csv(path, when, zeta, rng, fn_hz=12.0, fs_hz=200.0, duration_s=2.5):
    t = np.arange(0.0, duration_s, 1.0 / fs_hz)
    wn = 2 * math.pi * fn_hz
    y = np.exp(-zeta * wn * t) * np.cos(wn * math.sqrt(1 - zeta ** 2) * t) + rng.normal(0, 0.01, t.size)
    with open(path, "w") as fh:
        fh.write(f"date: {when}\noperator: synthetic\ntime_s,accel\n")
        fh.writelines(f"{a:.5f},{b:.6f}\n" for a, b in zip(t, y))


def test_end_to_end_with_the_decay_job(tmp_path, capsys):
    rng = np.random.default_rng(42)
    files = []
    start = datetime(2026, 1, 15, 8, 0, tzinfo=timezone.utc)
    # four monthly bump tests (the decay job dominates this test's run time), ζ declining by 0.0025/month
    zetas = [0.030 - 0.0025 * i + rng.normal(0, 0.0008) for i in range(4)]
    for i, z in enumerate(zetas):
        path = tmp_path / f"bump{i}.csv"
        write_decay_csv(path, (start + timedelta(days=30 * i)).isoformat(), z, rng)
        files.append(str(path))
    db = str(tmp_path / "h.sqlite")
    code = run_cli(["history", "add", "--rig", "demo", *files, "--db", db])
    out, err = capsys.readouterr()
    assert code == EXIT_OK, err
    assert out.count("(time from record metadata 'date')") == 4
    assert run_cli(["history", "show", "--rig", "demo", "--json", "--db", db]) == EXIT_OK
    tests = json.loads(capsys.readouterr().out)["tests"]
    assert [t["test_time"][:10] for t in tests] == [(start + timedelta(days=30 * i)).date().isoformat()
                                                    for i in range(4)]
    for t, z in zip(tests, zetas):
        assert t["job"] == "decay" and t["settings"]["column"] == "accel"
        # the job may also report weak extra poles; the 12 Hz mode is the largest one
        p = max(t["poles"], key=lambda q: abs(q["amplitude"] or 0.0))
        assert p["natural_frequency_hz"] == pytest.approx(12.0, rel=1e-3)
        assert p["damping_ratio"] == pytest.approx(z, rel=0.05)
    assert run_cli(["history", "trend", "--rig", "demo", "--json", "--db", db]) == EXIT_OK
    modes = json.loads(capsys.readouterr().out)["modes"]
    (mode,) = [m for m in modes if abs(m["natural_frequency_hz"] - 12.0) < 0.1]
    assert mode["principal"] and mode["n_tests"] == 4
    lo, hi = mode["damping_ratio_slope_per_day"]["ci"]
    assert lo <= -0.0025 / 30 <= hi and hi < 0


def test_jobs_receive_their_options(tmp_path, capsys, monkeypatch):
    import identify.decay
    import identify.step

    calls = []

    def fake_step(path, **kwargs):
        calls.append(("step", kwargs))
        return FakeResult(path, 0.5)

    def fake_decay(path, **kwargs):
        calls.append(("decay", kwargs))
        return FakeResult(path, 0.02)

    monkeypatch.setattr(identify.step, "analyse_step", fake_step, raising=False)
    monkeypatch.setattr(identify.decay, "analyse_decay", fake_decay, raising=False)
    db = str(tmp_path / "h.sqlite")
    a, b = make_files(tmp_path, [0.1, 0.2])
    assert run_cli(["history", "add", "--rig", "loop", a, "--job", "step", "--output", "pv", "--input", "op",
                    "--sample-rate", "10", "--db", db]) == EXIT_OK
    assert run_cli(["history", "add", "--rig", "beam", b, "--column", "accel", "--db", db]) == EXIT_OK
    assert calls == [("step", {"output": "pv", "input": "op", "sample_rate_hz": 10.0}),
                     ("decay", {"column": "accel"})]
    capsys.readouterr()
    assert run_cli(["history", "show", "--rig", "loop", "--json", "--db", db]) == EXIT_OK
    assert json.loads(capsys.readouterr().out)["tests"][0]["job"] == "step"
