"""``poleprint inspect``: text and JSON per file, error lines and exit status."""
from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from identify.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = sorted((ROOT / "datasets").glob("**/*.csv"))


@pytest.fixture
def files(tmp_path):
    good = tmp_path / "ring.csv"
    good.write_text("Rig: B7\ntime [ms],accel [m/s^2],cmd\n-1,0.5,0\n0,1.5,0\n1,-0.5,1\n2,0.25,1\n")
    norate = tmp_path / "norate.csv"
    norate.write_text("x;y\n3,5;2\n1,5;3\n2,5;4\n")
    gaps = tmp_path / "gaps.csv"
    gaps.write_text("t,x\n0,1\n1,2\n2,3\n\n7,4\n")
    garbage = tmp_path / "garbage.bin"
    garbage.write_bytes(bytes(range(256)) * 8)
    return good, norate, gaps, garbage


def test_text_output(files, capsys):
    good = files[0]
    assert main(["inspect", str(good)]) == 0
    out = capsys.readouterr().out
    for text in (str(good), "samples      4", "duration     0.003 s", "sample rate  1000 Hz",
                 "start time   -0.001 s", "accel", "m/s^2", "-0.5", "1.5", "rig: B7",
                 "converted from ms to seconds"):
        assert text in out


def test_json_one_line_per_file_in_order(files, capsys):
    good, norate, gaps, garbage = files
    status = main(["inspect", "--json", "--sample-rate", "1000", str(norate), str(garbage), str(good)])
    captured = capsys.readouterr()
    lines = captured.out.splitlines()
    assert len(lines) == 3
    first, second, third = map(json.loads, lines)
    assert first["source"] == str(norate) and first["samples"] == 3
    assert first["sample_rate_hz"] == pytest.approx(1000.0)  # agrees with good's time column
    assert first["duration_s"] == pytest.approx(0.002)
    assert first["channels"][0] == {"name": "x", "unit": "", "min": 1.5, "max": 3.5, "missing": 0}
    assert set(first) >= {"source", "samples", "sample_rate_hz", "duration_s", "channels", "warnings"}
    assert second["source"] == str(garbage) and "not text" in second["error"]
    assert third["source"] == str(good)
    assert {c["name"] for c in third["channels"]} == {"accel", "cmd"}
    assert third["warnings"] == []  # 4 samples: too few to judge quantisation
    assert status == 3  # some files gave a result, some did not
    assert captured.err.count("poleprint: error: ") == 1


def test_time_base_errors_reported(files, capsys):
    gaps = files[2]
    assert main(["inspect", str(gaps)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert err[0].startswith(f"poleprint: error: {gaps}: gap in the time base at line 6")


def test_missing_rate_names_the_option(files, capsys):
    assert main(["inspect", str(files[1])]) == 2
    err = capsys.readouterr().err
    assert "no time column and no sample rate" in err and "--sample-rate" in err


def test_nan_omit_option(tmp_path, capsys):
    path = tmp_path / "holes.csv"
    path.write_text("t,x\n0,1\n1,\n2,3\n")
    assert main(["inspect", str(path)]) == 2
    assert "line 3" in capsys.readouterr().err
    assert main(["inspect", "--json", "--nan", "omit", str(path)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["channels"][0]["missing"] == 1
    assert any("nan='omit'" in n for n in data["notes"])


def test_time_column_option(tmp_path, capsys):
    path = tmp_path / "ab.csv"
    path.write_text("a,b\n0,5\n2,4\n4,3\n")
    assert main(["inspect", "--json", "--time-column", "none", "--sample-rate", "10", str(path)]) == 0
    assert [c["name"] for c in json.loads(capsys.readouterr().out)["channels"]] == ["a", "b"]
    assert main(["inspect", "--json", "--time-column", "A", str(path)]) == 0
    assert json.loads(capsys.readouterr().out)["sample_rate_hz"] == pytest.approx(0.5)


def test_garbage_file_exits_2_with_one_stderr_line(files):
    garbage = files[3]
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.run([sys.executable, "-m", "identify", "inspect", str(garbage)],
                          capture_output=True, text=True, env=env, timeout=60)
    assert proc.returncode == 2
    lines = proc.stderr.splitlines()
    assert len(lines) == 1
    assert lines[0].startswith("poleprint: error: ")
    assert str(garbage) in lines[0] and "not text" in lines[0]
    assert proc.stdout == ""


@pytest.mark.parametrize("path", DEMO, ids=[str(p.relative_to(ROOT)) for p in DEMO])
def test_inspect_works_on_every_demo_file(path, capsys):
    assert main(["inspect", "--json", str(path)]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["samples"] > 100 and data["sample_rate_hz"] > 0
