"""``poleprint decay``: text table, JSON lines, options, errors and exit status."""
import json

import numpy as np
import pytest

from _decay_synth import make_decay
from identify.cli import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, main


def _write(path, modes, *, time_column=True, **kw):
    t, y, _, _ = make_decay(modes, **kw)
    if time_column:
        data = np.column_stack([t, y])
        header = "time (s),accel (m/s^2)"
    else:
        data = y[:, None]
        header = "accel (m/s^2)"
    np.savetxt(path, data, delimiter=",", header=header, comments="", fmt="%.10g")
    return str(path)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("decay")
    one = _write(d / "one.csv", [(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, seed=1)
    two = _write(d / "two.csv", [(6.0, 0.01, 1.0, 0.0), (17.0, 0.02, 0.5, 1.0)], fs=200.0, n=3000,
                 snr_db=40, seed=2)
    flat = d / "flat.csv"
    np.savetxt(flat, np.column_stack([np.arange(300) / 100.0, np.full(300, 1.0)]), delimiter=",",
               header="time (s),accel (m/s^2)", comments="")
    bare = _write(d / "bare.csv", [(10.0, 0.02, 1.0, 0.3)], time_column=False, fs=200.0, n=2000,
                  snr_db=40, seed=3)
    return {"one": one, "two": two, "flat": str(flat), "bare": bare}


def test_text_table_with_units_intervals_and_caution(files, capsys):
    assert main(["decay", files["one"]]) == EXIT_OK
    out, err = capsys.readouterr()
    assert "fn [Hz]" in out and "zeta 95 % CI" in out and "amplitude [m/s^2]" in out
    assert "cross-checks:" in out and "logdec" in out
    caution = [line for line in out.splitlines() if line.startswith("caution:")]
    assert len(caution) == 1 and "not a clearance" in caution[0]
    for word in ("safe", "cleared", "stable"):
        assert word not in out.lower().replace("unstable", "")
    row = next(line for line in out.splitlines() if line.startswith("1 "))
    assert float(row.split()[1]) == pytest.approx(10.0, rel=0.005)


def test_json_lines_in_order_with_error_line_and_partial_status(files, capsys):
    status = main(["decay", files["two"], files["flat"], files["one"], "--json"])
    out, err = capsys.readouterr()
    lines = [json.loads(x) for x in out.splitlines()]
    assert [x["source"] for x in lines] == [files["two"], files["flat"], files["one"]]
    assert len(lines[0]["poles"]) == 2 and lines[0]["method"] == "fit"
    assert "no oscillation" in lines[1]["error"] or "no response" in lines[1]["error"]
    assert f"poleprint: error: {files['flat']}: " in err
    assert status == EXIT_PARTIAL


def test_options_reach_the_analysis(files, capsys):
    status = main(["decay", files["two"], "--json", "--method", "pencil", "--modes", "1",
                   "--confidence", "0.9", "--start", "0.5", "--end", "12"])
    assert status == EXIT_OK
    d = json.loads(capsys.readouterr().out)
    assert d["method"] == "pencil" and len(d["poles"]) == 1
    assert d["poles"][0]["ci"]["level"] == 0.9
    assert d["segment"]["start_s"] == pytest.approx(0.5)
    assert d["settings"]["modes"] == 1 and d["settings"]["confidence"] == 0.9


def test_sample_rate_for_a_file_without_time_column(files, capsys):
    assert main(["decay", files["bare"], "--sample-rate", "200", "--json"]) == EXIT_OK
    d = json.loads(capsys.readouterr().out)
    assert d["poles"][0]["natural_frequency_hz"] == pytest.approx(10.0, rel=0.005)


@pytest.mark.parametrize("argv, message", [
    (["--modes", "many"], "--modes"),
    (["--confidence", "95"], "0.95, not 95"),
    (["--start", "3", "--end", "1"], "--end must be later"),
])
def test_bad_usage_is_one_line_and_status_2(files, capsys, argv, message):
    assert main(["decay", files["one"], *argv]) == EXIT_USAGE
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and message in err and "Traceback" not in err


def test_unknown_method_is_rejected_by_the_parser(files, capsys):
    with pytest.raises(SystemExit) as info:
        main(["decay", files["one"], "--method", "prony"])
    assert info.value.code == 2
