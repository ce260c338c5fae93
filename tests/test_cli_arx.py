"""``poleprint arx``: text table, JSON lines, options, errors and exit status."""
from __future__ import annotations

import json

import numpy as np
import pytest

from identify.cli import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, main

from _arx_synth import record_signals

TS = 1.0 / 15.0


def _write(path, y, u=None, *, ts=TS, time_column=True):
    cols, head = [], []
    if time_column:
        cols.append(np.arange(y.size) * ts)
        head.append("time (s)")
    cols.append(y)
    head.append("position (mm)")
    if u is not None:
        cols.append(u)
        head.append("drive (V)")
    np.savetxt(path, np.column_stack(cols), delimiter=",", header=",".join(head), comments="", fmt="%.12g")
    return str(path)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("arx")
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 3000, noise=0.1, kind="equation", seed=5)
    yo, uo, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 3000, noise=0.05, kind="output", seed=1)
    flat = np.column_stack([np.arange(200) * TS, np.sin(np.arange(200.0)), np.full(200, 2.0)])
    flat_path = d / "flat_input.csv"
    np.savetxt(flat_path, flat, delimiter=",", header="time (s),position (mm),drive (V)", comments="")
    return {"io": _write(d / "io.csv", y, u), "sensor": _write(d / "sensor.csv", yo, uo),
            "flat": str(flat_path), "bare": _write(d / "bare.csv", y, u, time_column=False)}


def test_text_table_with_units_intervals_and_caution(files, capsys):
    assert main(["arx", files["io"], "--output", "position", "--input", "drive"]) == EXIT_OK
    out, err = capsys.readouterr()
    assert "na = 3, nb = 3, delay = 1 samples" in out
    assert "fn (Hz)" in out and "zeta 95 % CI" in out and "DC gain" in out and "mm/V" in out
    assert "order search (BIC" in out and "validation: simulation fit" in out
    caution = [line for line in out.splitlines() if line.startswith("caution:")]
    assert len(caution) == 1 and "not clearances" in caution[0]
    for word in ("safe", "cleared", "stable"):
        assert word not in out.lower()
    row = next(line for line in out.splitlines() if line.startswith("1.0") or line.startswith("0.99"))
    assert float(row.split()[0]) == pytest.approx(1.0, rel=0.02)


def test_json_lines_in_order_with_error_line_and_partial_status(files, capsys):
    status = main(["arx", files["io"], files["flat"], "--output", "position", "--input", "drive",
                   "--orders", "3,3", "--delay", "1", "--json"])
    out, err = capsys.readouterr()
    lines = [json.loads(x) for x in out.splitlines()]
    assert [x["source"] for x in lines] == [files["io"], files["flat"]]
    first = lines[0]
    for key in ("poles", "model", "order_search", "validation", "warnings", "settings"):
        assert key in first
    assert first["model"]["na"] == 3 and first["model"]["delay_samples"] == 1
    assert first["validation"]["holdout_fraction"] == 0.3
    assert "the input is constant" in lines[1]["error"]
    assert f"poleprint: error: {files['flat']}: the input is constant" in err
    assert status == EXIT_PARTIAL


def test_refine_iv_and_bias_warning_on_stderr(files, capsys):
    assert main(["arx", files["sensor"], "--output", "position", "--input", "drive", "--orders", "3,3",
                 "--delay", "1"]) == EXIT_OK
    _, err = capsys.readouterr()
    assert "poleprint: warning: " in err and "output noise bias:" in err and "--refine iv" in err
    assert main(["arx", files["sensor"], "--output", "position", "--input", "drive", "--orders", "3,3",
                 "--delay", "1", "--refine", "iv", "--json"]) == EXIT_OK
    out, _ = capsys.readouterr()
    d = json.loads(out)
    assert d["model"]["method"] == "instrumental variables"
    assert not any(w.startswith("output noise bias:") for w in d["warnings"])


def test_output_only_with_sample_rate_and_options(files, capsys):
    assert main(["arx", files["bare"], "--output", "position", "--orders", "2", "--sample-rate", "15",
                 "--holdout", "0.2", "--confidence", "0.9", "--criterion", "bic", "--start", "10",
                 "--end", "150", "--json"]) == EXIT_OK
    d = json.loads(capsys.readouterr()[0])
    assert d["model"]["nb"] == 0 and d["model"]["b"] == []
    assert d["validation"]["method"] == "one-step prediction"
    assert d["validation"]["holdout_fraction"] == 0.2
    assert d["poles"][0]["ci"]["level"] == 0.9
    assert d["settings"]["start_s"] == 10.0 and d["settings"]["sample_time_s"] == pytest.approx(TS)


def test_usage_errors(files, capsys):
    assert main(["arx", files["io"], "--output", "position", "--refine", "iv"]) == EXIT_USAGE
    assert "--refine iv needs --input" in capsys.readouterr()[1]
    assert main(["arx", files["io"], "--output", "position", "--input", "drive", "--confidence", "95"]) == EXIT_USAGE
    assert "give a probability" in capsys.readouterr()[1]
    with pytest.raises(SystemExit) as info:
        main(["arx", files["io"], "--output", "position", "--orders", "two"])
    assert info.value.code == EXIT_USAGE
    assert "expected auto or NA,NB" in capsys.readouterr()[1]


def test_unreadable_and_unknown_column(files, tmp_path, capsys):
    missing = str(tmp_path / "nowhere.csv")
    assert main(["arx", missing, "--output", "position"]) == EXIT_USAGE
    err = capsys.readouterr()[1]
    assert err.startswith(f"poleprint: error: {missing}:") and err.count("\n") == 1
    assert main(["arx", files["io"], "--output", "speed"]) == EXIT_USAGE
    assert "no column named 'speed'" in capsys.readouterr()[1]
