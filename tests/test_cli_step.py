"""``poleprint step`` on CSV files."""
import json

import numpy as np
import pytest

from identify.cli import main
from identify.step import unit_response


def _write(path, *, gain=2.0, tau=8.0, theta=3.0, seed=0, with_input=True, n=300, ts=0.5, pre=50):
    rng = np.random.default_rng(seed)
    u = np.full(n, 20.0)
    u[pre:] = 25.0
    y = 40.0 + gain * unit_response("first-order", (tau,), theta, u - 20.0, ts) + rng.normal(0, 0.1, n)
    t = ts * np.arange(n)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("t [s],valve [%],level [mm]\n" if with_input else "t [s],level [mm]\n")
        for i in range(n):
            fh.write(f"{t[i]:.4f},{u[i]:.4f},{y[i]:.6f}\n" if with_input else f"{t[i]:.4f},{y[i]:.6f}\n")
    return path


def test_text_output(tmp_path, capsys):
    f = _write(tmp_path / "valve.csv")
    assert main(["step", str(f), "--input", "valve", "--output", "level", "--model", "first-order"]) == 0
    out = capsys.readouterr().out
    assert "first-order" in out and "dead time" in out and "95 % interval" in out
    assert "rise_time_s" in out and "IEEE Std 181" in out
    assert "starting point to review before use on a live plant" in out
    assert "site's approval" in out
    assert "mm/%" in out


def test_json_lines_one_per_file_and_errors(tmp_path, capsys):
    good = _write(tmp_path / "a.csv")
    flat = tmp_path / "flat.csv"
    flat.write_text("t [s],valve [%],level [mm]\n" + "".join(f"{i * 0.5},20,{40 + 0.01 * (i % 3)}\n" for i in range(100)))
    code = main(["step", str(good), str(flat), "--input", "valve", "--output", "level", "--json",
                 "--model", "first-order", "--confidence", "0.9", "--tau-c", "4"])
    assert code == 3  # some files gave a result and some did not
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) == 2
    first, second = json.loads(lines[0]), json.loads(lines[1])
    assert first["model"]["structure"] == "first-order"
    assert first["model"]["gain"] == pytest.approx(2.0, rel=0.03)
    assert first["model"]["ci"]["level"] == 0.9
    assert first["tuning"]["closed_loop_time_constant_s"] == 4.0
    assert "no step in the input" in second["error"]


def test_step_time_and_size_without_input(tmp_path, capsys):
    f = _write(tmp_path / "noinput.csv", with_input=False)
    assert main(["step", str(f), "--output", "level", "--step-time", "25", "--step-size", "5",
                 "--json", "--model", "first-order"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["model"]["gain"] == pytest.approx(2.0, rel=0.03)


def test_usage_error_without_input_or_step(tmp_path, capsys):
    f = _write(tmp_path / "x.csv")
    assert main(["step", str(f), "--output", "level"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("poleprint: error:") and "--step-time" in err and len(err.strip().splitlines()) == 1


def test_wrong_column_is_one_line(tmp_path, capsys):
    f = _write(tmp_path / "y.csv")
    assert main(["step", str(f), "--input", "valve", "--output", "nope"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "available" in err[0]


@pytest.mark.parametrize("name, inp, out", [("valve_step.csv", "valve_cmd", "flow"),
                                            ("actuator_step.csv", "command", "position")])
def test_demo_records_against_their_truth(name, inp, out, capsys):
    # the bundled demo records carry their true parameters in datasets/truth.json
    from pathlib import Path

    root = Path(__file__).resolve().parents[1] / "datasets"
    truth = json.loads((root / "truth.json").read_text())["files"][name]
    assert main(["step", str(root / name), "--input", inp, "--output", out, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    m = d["model"]
    assert m["structure"] == truth["structure"]
    assert m["gain"] == pytest.approx(truth["gain"], rel=0.02)
    assert abs(m["dead_time_s"] - truth["dead_time_s"]) <= max(0.05 * max(truth.get("time_constants_s", [0]) or [0]),
                                                              2.0 / truth["sample_rate_hz"])
    for est, true in zip(m["time_constants_s"], truth.get("time_constants_s", [])):
        assert est == pytest.approx(true, rel=0.05)
    if truth["structure"] == "underdamped":
        assert m["natural_frequency_hz"] == pytest.approx(truth["natural_frequency_hz"], rel=0.05)
        assert m["damping_ratio"] == pytest.approx(truth["damping_ratio"], rel=0.05)
