"""read_record: every dialect convention of issue 2 item 2 and every error path.

Expected numbers are the ones written into the files (derived); messages must name the
problem and, where there is one, the line and column.
"""
from __future__ import annotations

import hashlib

import numpy as np
import pytest

from identify import ParameterTypeError, ParameterValueError, PoleprintError, RecordError
from identify._csv import read_record


def write(tmp_path, text, name="rec.csv", encoding="utf-8"):
    path = tmp_path / name
    data = text.encode(encoding) if isinstance(text, str) else text
    path.write_bytes(data)
    return path


def error_of(path, **kwargs) -> RecordError:
    with pytest.raises(RecordError) as info:
        read_record(path, **kwargs)
    err = info.value
    assert err.source == str(path)
    assert "\n" not in str(err)
    return err


# -- dialects -----------------------------------------------------------------------
def test_comma_with_time_column(tmp_path):
    path = write(tmp_path, "time,x,y\n0,1,10\n0.5,2,20\n1.0,3,30\n")
    rec = read_record(path)
    assert rec.samples == 3
    assert rec.sample_time_s == pytest.approx(0.5)
    assert rec.start_s == 0.0
    assert rec.names == ("x", "y")
    np.testing.assert_array_equal(rec.channel("y").values, [10, 20, 30])
    assert rec.source == str(path)
    assert rec.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_semicolon_decimal_comma(tmp_path):
    path = write(tmp_path, "t;x\n0,000;1,5\n0,001;-2,25\n0,002;3,125\n")
    rec = read_record(path)
    assert rec.sample_rate_hz == pytest.approx(1000.0)
    np.testing.assert_array_equal(rec.channel("x").values, [1.5, -2.25, 3.125])


def test_tab_and_space_runs(tmp_path):
    tab = read_record(write(tmp_path, "t\tx\n0\t1.5\n0.1\t2.5\n0.2\t3.5\n", "tab.csv"))
    spaces = read_record(write(tmp_path, "   t      x\n  0.0    1.5\n  0.1    2.5\n  0.2  3.5\n",
                               "spaces.txt"))
    for rec in (tab, spaces):
        assert rec.names == ("x",)
        np.testing.assert_array_equal(rec.channel("x").values, [1.5, 2.5, 3.5])
        assert rec.sample_time_s == pytest.approx(0.1)


def test_quoted_numbers_and_header(tmp_path):
    path = write(tmp_path, '"time","x"\n"0","1.25"\n"1","2.5"\n"2","-3"\n')
    rec = read_record(path)
    np.testing.assert_array_equal(rec.channel("x").values, [1.25, 2.5, -3])


def test_quoted_decimal_comma_with_comma_separator(tmp_path):
    path = write(tmp_path, 'time,x\n"0,5","1,25"\n"1,0","2,5"\n"1,5","3,75"\n')
    rec = read_record(path)
    assert rec.start_s == 0.5
    np.testing.assert_array_equal(rec.channel("x").values, [1.25, 2.5, 3.75])


def test_utf8_bom_with_and_without_preamble(tmp_path):
    plain = read_record(write(tmp_path, b"\xef\xbb\xbftime,x\n0,1\n1,2\n", "bom.csv"))
    pre = read_record(write(tmp_path, b"\xef\xbb\xbfLogger: A\ntime,x\n0,1\n1,2\n", "bom2.csv"))
    assert plain.names == pre.names == ("x",)
    assert pre.metadata == {"logger": "A"}


def test_latin1_micro_sign_is_read_with_a_note(tmp_path):
    path = write(tmp_path, "t [\u00b5s],x\n0,1\n10,2\n20,3\n", encoding="latin-1")
    rec = read_record(path)
    assert rec.sample_time_s == pytest.approx(10e-6)
    assert any("latin-1" in n.lower() for n in rec.notes)


def test_comments_and_preamble(tmp_path):
    text = ("# exported by a bench logger\n"
            "Device: Bay 3 bracket\n"
            "Operator,  J. Doe \n"
            "Sample Rate (Hz);200\n"
            "\n"
            "time,accel\n"
            "0,1\n"
            "# marker: impact\n"
            "0.005,2\n"
            "\n"
            "0.010,3\n")
    rec = read_record(write(tmp_path, text))
    assert rec.metadata == {"device": "Bay 3 bracket", "operator": "J. Doe",
                            "sample rate (hz)": "200"}
    np.testing.assert_array_equal(rec.channel("accel").values, [1, 2, 3])
    assert rec.sample_rate_hz == pytest.approx(200.0)


def test_header_written_as_comment(tmp_path):
    rec = read_record(write(tmp_path, "# time,x,y\n0,1,2\n1,3,4\n2,5,6\n"))
    assert rec.names == ("x", "y")


@pytest.mark.parametrize("header, name, unit", [
    ("x [V]", "x", "V"),
    ("Force (kN)", "Force", "kN"),
    ("accel_mps2", "accel", "mps2"),
    ("disp [\u00b5m]", "disp", "\u00b5m"),
    ("strain_ue", "strain", "ue"),
    ("motor_speed", "motor_speed", ""),
    ("plain", "plain", ""),
])
def test_units_in_headers(tmp_path, header, name, unit):
    rec = read_record(write(tmp_path, f"time,{header}\n0,1\n1,2\n2,3\n"))
    assert (rec.channels[0].name, rec.channels[0].unit) == (name, unit)


@pytest.mark.parametrize("header, step, seconds", [
    ("t [s]", "0.5", 0.5),
    ("Time (ms)", "2", 2e-3),
    ("t [us]", "5", 5e-6),
    ("t [\u00b5s]", "5", 5e-6),
    ("t [\u03bcs]", "5", 5e-6),
    ("time_ns", "250", 250e-9),
    ("Time (min)", "0.5", 30.0),
    ("time [h]", "1", 3600.0),
])
def test_time_units_converted_to_seconds(tmp_path, header, step, seconds):
    step_value = float(step)
    rows = "".join(f"{k * step_value!r},{k}\n" for k in range(-2, 5))
    rec = read_record(write(tmp_path, f"{header},x\n{rows}"))
    assert rec.sample_time_s == pytest.approx(seconds, rel=1e-12)
    assert rec.start_s == pytest.approx(-2 * seconds, rel=1e-12)  # negative pre-trigger kept
    assert rec.samples == 7


@pytest.mark.parametrize("name", ["time", "t", "Timestamp", "seconds", "Elapsed time"])
def test_time_column_found_by_name_anywhere(tmp_path, name):
    rec = read_record(write(tmp_path, f"x,{name},y\n5,0,1\n4,1,2\n3,2,3\n"))
    assert rec.names == ("x", "y")
    assert rec.sample_time_s == 1.0


def test_time_column_as_monotonic_first_column(tmp_path):
    rec = read_record(write(tmp_path, "-1.0,7\n-0.9,8\n-0.8,9\n"))
    assert rec.start_s == pytest.approx(-1.0)
    assert rec.sample_time_s == pytest.approx(0.1)
    assert rec.names == ("column_2",)
    assert any("first column" in n for n in rec.notes)


def test_explicit_time_column_and_none(tmp_path):
    path = write(tmp_path, "a,b\n0,5\n1,4\n2,3\n")
    assert read_record(path, time_column="A").names == ("b",)
    assert read_record(path, time_column=0).names == ("b",)
    rec = read_record(path, time_column=False, sample_rate_hz=50)
    assert rec.names == ("a", "b") and rec.sample_rate_hz == 50


def test_iso8601_timestamps(tmp_path):
    text = ("timestamp,x\n2026-03-01T10:00:00.000,1\n2026-03-01T10:00:00.250,2\n"
            "2026-03-01T10:00:00.500,3\n2026-03-01T10:00:00.750,4\n")
    rec = read_record(write(tmp_path, text))
    assert rec.start_s == 0.0
    assert rec.sample_time_s == pytest.approx(0.25)
    zoned = ("t;x\n2026-03-01 23:59:59,5+01:00;1\n2026-03-02 00:00:00,0+01:00;2\n"
             "2026-03-02 00:00:00,5+01:00;3\n")
    assert read_record(write(tmp_path, zoned, "z.csv")).sample_time_s == pytest.approx(0.5)


def test_sample_counter_column_is_dropped(tmp_path):
    rec = read_record(write(tmp_path, "Sample,x\n0,1.5\n1,2.5\n2,3.5\n"), sample_rate_hz=10)
    assert rec.names == ("x",)
    assert any("sample counter" in n for n in rec.notes)


@pytest.mark.parametrize("line, ts", [
    ("Sample rate: 1 kHz", 1e-3),
    ("sampling frequency = 250", 4e-3),
    ("Sample rate (Hz),50", 0.02),
    ("Sample interval: 2 ms", 2e-3),
    ("dt [s];0,01", 0.01),
    ("# fs: 100 Hz", 0.01),
])
def test_no_time_column_rate_from_preamble(tmp_path, line, ts):
    rec = read_record(write(tmp_path, f"{line}\nx,y\n1,2\n3,4\n5,6\n"))
    assert rec.sample_time_s == pytest.approx(ts)
    assert rec.start_s == 0.0
    assert any("preamble" in n for n in rec.notes)


def test_no_time_column_rate_from_argument(tmp_path):
    rec = read_record(write(tmp_path, "x\n1\n2\n4\n"), sample_rate_hz=20)
    assert rec.sample_time_s == pytest.approx(0.05)


def test_trailing_separator_ignored(tmp_path):
    rec = read_record(write(tmp_path, "time;x;\n0;1;\n1;2;\n2;3;\n"))
    assert rec.names == ("x",)


def test_duplicate_names_renamed(tmp_path):
    rec = read_record(write(tmp_path, "time,x,x\n0,1,2\n1,3,4\n"))
    assert rec.names == ("x", "x_2")


def test_small_jitter_resampled_with_note(tmp_path):
    rng = np.random.default_rng(4)
    t = np.arange(400) * 0.01 + rng.uniform(-1e-4, 1e-4, 400)  # 1 % jitter
    x = 2.0 * t + 1.0
    rows = "".join(f"{a:.7f},{b:.9f}\n" for a, b in zip(t, x))
    rec = read_record(write(tmp_path, "t,x\n" + rows))
    assert any(n.startswith("time base:") and "resampled" in n for n in rec.notes)
    assert rec.sample_time_s == pytest.approx(0.01, rel=1e-4)
    # a straight line is reproduced exactly by linear interpolation (derived)
    np.testing.assert_allclose(rec.channel("x").values, 2.0 * rec.time_s + 1.0, atol=1e-7)


def test_rounded_stamps_are_not_jitter(tmp_path):
    # 3 kHz printed with 4 decimals: up to 15 % of Ts off the grid, all print rounding
    rows = "".join(f"{k / 3000:.4f},{k}\n" for k in range(30))
    rec = read_record(write(tmp_path, "t,x\n" + rows))
    assert rec.sample_rate_hz == pytest.approx(3000, rel=1e-3)
    assert not any("resampled" in n for n in rec.notes)
    np.testing.assert_array_equal(rec.channel("x").values, np.arange(30))


def test_nan_omit_keeps_nan_with_note(tmp_path):
    path = write(tmp_path, "t,x,y\n0,1,\n1,NaN,2\n2,3,4\n")
    rec = read_record(path, nan="omit")
    x, y = rec.channel("x").values, rec.channel("y").values
    assert np.isnan(x[1]) and np.isnan(y[0])
    assert any("line 3" in n and "'x'" in n for n in rec.notes)
    assert any("line 2" in n and "'y'" in n for n in rec.notes)


def test_quality_warnings_on_load(tmp_path):
    t = np.arange(400) * 1e-3
    clipped = np.clip(3.0 * np.sin(2 * np.pi * 10 * t), -2.0, 2.0)
    stepped = np.round(np.sin(2 * np.pi * 3 * t) * 2) / 2
    rows = "".join(f"{a:.3f},{b:.6f},{c:.1f}\n" for a, b, c in zip(t, clipped, stepped))
    rec = read_record(write(tmp_path, "t,acc,pos\n" + rows))
    assert any(w.startswith("clipping:") and "'acc'" in w for w in rec.warnings)
    assert any(w.startswith("coarse quantisation:") and "'pos'" in w for w in rec.warnings)


def test_input_unchanged_and_path_objects(tmp_path):
    path = write(tmp_path, "time,x\n0,1\n1,2\n")
    before = path.read_bytes()
    rec = read_record(path)
    assert path.read_bytes() == before
    assert rec.source == str(path)


# -- error paths --------------------------------------------------------------------
def test_missing_file(tmp_path):
    err = error_of(tmp_path / "nope.csv")
    assert "not found" in err.message


def test_directory(tmp_path):
    assert "directory" in error_of(tmp_path).message


def test_empty_file(tmp_path):
    assert "empty" in error_of(write(tmp_path, "")).message
    assert "empty" in error_of(write(tmp_path, "\n \r\n", "blank.csv")).message


def test_comments_only(tmp_path):
    assert "no data rows" in error_of(write(tmp_path, "# just a comment\n# another\n")).message


def test_binary_garbage(tmp_path):
    err = error_of(write(tmp_path, bytes(range(256)) * 4, "garbage.bin"))
    assert "not text" in err.message
    err = error_of(write(tmp_path, b"\x1b[31m\x07\x02" * 50, "ctrl.bin"))
    assert "not text" in err.message and "control byte" in err.message


def test_header_without_numeric_rows(tmp_path):
    err = error_of(write(tmp_path, "time,x\n"))
    assert "no rows of numbers" in err.message and "line 1" in err.message
    err = error_of(write(tmp_path, "time,x\nstart,stop\nfoo,bar\n", "words.csv"))
    assert "no rows of numbers" in err.message


def test_single_data_row(tmp_path):
    err = error_of(write(tmp_path, "# c\ntime,x\n0,1\n"))
    assert "only one data row" in err.message and "line 3" in err.message


def test_no_time_base(tmp_path):
    err = error_of(write(tmp_path, "x\n3\n1\n2\n"))
    assert "no time column and no sample rate" in err.message
    assert "--sample-rate" in err.message


def test_non_monotonic_names_first_bad_line(tmp_path):
    err = error_of(write(tmp_path, "# h\ntime,x\n0,1\n1,2\n# c\n0.5,3\n2,4\n"))
    assert "backwards" in err.message and "line 6" in err.message


def test_duplicate_stamp_names_line(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n1,2\n2,3\n2,4\n3,5\n"))
    assert "duplicate time stamp" in err.message and "line 5" in err.message


def test_gap_is_an_error_never_interpolated(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n1,2\n2,3\n3,4\n5,5\n6,6\n"))
    assert "gap" in err.message and "line 6" in err.message


def test_large_jitter_is_an_error(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n1.1,2\n1.95,3\n3.1,4\n3.95,5\n5,6\n"))
    assert "irregular time base" in err.message and "line" in err.message
    assert "2 %" in err.message


def test_missing_cell_names_line_and_column(tmp_path):
    err = error_of(write(tmp_path, "# pre\ntime,x,y\n0,1,2\n1,,4\n2,5,6\n"))
    assert "missing value" in err.message
    assert "line 4" in err.message and "'x'" in err.message and "column 2" in err.message
    assert "--nan omit" in err.message


def test_nan_text_names_line_and_column(tmp_path):
    err = error_of(write(tmp_path, "time;a;b\n0;1;2\n1;3;4\n2;5;nan\n"))
    assert "line 4" in err.message and "'b'" in err.message


def test_short_row_is_missing_values(tmp_path):
    err = error_of(write(tmp_path, "time,x,y\n0,1,2\n1,3,4\n2,5\n"))
    assert "line 4" in err.message and "'y'" in err.message


def test_long_row_names_line(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n1,2\n2,3\n3,4,5\n"))
    assert "line 5" in err.message and "3 fields" in err.message


def test_text_cell_names_line_and_column(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n1,2\n2,3\n3,oops\n"))
    assert "not a number" in err.message and "line 5" in err.message and "'oops'" in err.message


def test_infinite_value_names_line(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n1,inf\n2,3\n"))
    assert "infinite" in err.message and "line 3" in err.message


def test_missing_time_stamp_is_an_error_even_with_omit(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n,2\n2,3\n"), nan="omit")
    assert "time column" in err.message and "line 3" in err.message


def test_time_column_with_a_non_time_unit(tmp_path):
    err = error_of(write(tmp_path, "time [V],x\n0,1\n1,2\n"))
    assert "not a time unit" in err.message


def test_bad_iso_stamp_names_line(tmp_path):
    text = "timestamp,x\n2026-03-01T10:00:00,1\n2026-03-01T10:00:01,2\n2026-03-01T10:00:02,3\n2026-13-01T99:00:03,4\n"
    err = error_of(write(tmp_path, text))
    assert "line 5" in err.message


def test_only_a_time_column(tmp_path):
    assert "no data channel" in error_of(write(tmp_path, "time\n0\n1\n2\n")).message


def test_rate_disagrees_with_time_column(tmp_path):
    err = error_of(write(tmp_path, "time,x\n0,1\n0.01,2\n0.02,3\n"), sample_rate_hz=50)
    assert "100 Hz" in err.message and "50 Hz" in err.message


def test_bad_preamble_rate(tmp_path):
    err = error_of(write(tmp_path, "Sample rate: fast\nx\n1\n2\n"))
    assert "sample rate" in err.message and "'fast'" in err.message


def test_unknown_time_column_lists_columns(tmp_path):
    err = error_of(write(tmp_path, "a,b\n0,1\n1,2\n"), time_column="zeit")
    assert "'zeit'" in err.message and "a, b" in err.message


def test_bad_options_are_parameter_errors(tmp_path):
    path = write(tmp_path, "time,x\n0,1\n1,2\n")
    with pytest.raises(ParameterValueError, match="nan must be one of"):
        read_record(path, nan="drop")
    with pytest.raises(ParameterValueError, match="sample_rate_hz"):
        read_record(path, sample_rate_hz=-5.0)
    with pytest.raises(ParameterTypeError, match="time_column"):
        read_record(path, time_column=1.5)
    assert issubclass(RecordError, PoleprintError)


def test_two_million_rows_read_in_pandas_time(tmp_path):
    import time

    import pandas as pd

    n = 2_000_000
    levels = [f"{np.sin(k / 159.15):.4f}" for k in range(1000)]
    path = tmp_path / "big.csv"
    path.write_text("t [ms],x\n" + "\n".join(f"{k},{levels[k % 1000]}" for k in range(n)) + "\n")
    start = time.perf_counter()
    pd.read_csv(path)
    reference = time.perf_counter() - start
    start = time.perf_counter()
    rec = read_record(path)
    ours = time.perf_counter() - start
    assert rec.samples == n and rec.sample_time_s == pytest.approx(1e-3)
    assert ours < 3.0 * reference + 0.5, (ours, reference)


def test_single_space_header_with_units_and_spaces_after_commas(tmp_path):
    rec = read_record(write(tmp_path, "t [ms] x [V]\n0 1\n1 2\n2 3\n"))
    assert [(c.name, c.unit) for c in rec.channels] == [("x", "V")]
    rec = read_record(write(tmp_path, "time, x, y\n0, 1.5, 2\n1, 2.5, 3\n", "sp.csv"))
    np.testing.assert_array_equal(rec.channel("x").values, [1.5, 2.5])


def test_old_mac_line_ends(tmp_path):
    rec = read_record(write(tmp_path, "time,x\r0,1\r1,2\r2,3\r"))
    np.testing.assert_array_equal(rec.channel("x").values, [1, 2, 3])


def test_lone_number_in_preamble_is_not_data(tmp_path):
    rec = read_record(write(tmp_path, "Run\n42\ntime,x\n0,1\n1,2\n2,3\n"))
    assert rec.names == ("x",) and rec.samples == 3


def test_utf16_with_bom(tmp_path):
    path = write(tmp_path, "time\tx [\u00b5m]\n0\t1\n1\t2\n".encode("utf-16"))
    rec = read_record(path)
    assert [(c.name, c.unit) for c in rec.channels] == [("x", "\u00b5m")]
    assert rec.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert any("UTF-16" in n for n in rec.notes)


def test_path_must_be_a_path():
    with pytest.raises(ParameterTypeError, match="path"):
        read_record(12.5)


def test_clock_time_stamps_in_any_column(tmp_path):
    text = "x;clock\n1,5;23:59:59,75\n2,5;23:59:59,80\n3,5;23:59:59,85\n"
    rec = read_record(write(tmp_path, text))
    assert rec.names == ("x",)
    assert rec.sample_time_s == pytest.approx(0.05)
    assert any("clock-time" in n for n in rec.notes)
    err = error_of(write(tmp_path, "x,when\n1,10:00:00\n2,10:00:01\n3,10:61:02\n", "bad.csv"))
    assert "line 4" in err.message and "'when'" in err.message


def test_bad_preamble_rate_ignored_when_a_time_column_exists(tmp_path):
    rec = read_record(write(tmp_path, "Interval: weekly\nSample rate: 50 Hz\ntime,x\n0,1\n0.01,2\n"))
    assert rec.sample_rate_hz == pytest.approx(100.0)
    assert any("preamble" in n and "50 Hz" in n and "time column is used" in n for n in rec.notes)


def test_preamble_rate_and_interval_must_agree(tmp_path):
    err = error_of(write(tmp_path, "Sample rate: 100 Hz\nSample interval: 5 ms\nx\n1\n2\n3\n"))
    assert "disagrees" in err.message and "0.01 s" in err.message and "0.005 s" in err.message
    rec = read_record(write(tmp_path, "Sample rate: 200 Hz\nSample interval: 5 ms\nx\n1\n2\n", "ok.csv"))
    assert rec.sample_rate_hz == pytest.approx(200.0)


def test_units_on_a_second_header_row(tmp_path):
    rec = read_record(write(tmp_path, "Time;Force;Accel\ns;kN;m/s^2\n0;1;2\n0,5;3;4\n1;5;6\n"))
    assert rec.sample_time_s == pytest.approx(0.5)
    assert [(c.name, c.unit) for c in rec.channels] == [("Force", "kN"), ("Accel", "m/s^2")]
    rec = read_record(write(tmp_path, "t,x\n[ms],[V]\n0,1\n2,2\n4,3\n", "b.csv"))
    assert rec.sample_time_s == pytest.approx(2e-3) and rec.channels[0].unit == "V"


# -- pandas reads the rows from the file itself (faster), only when that is certain ----
def _rows(n, start=0.0):
    t = start + np.arange(n) * 0.001
    return "".join(f"{a:.3f},{np.sin(a * 40):.6f}\n" for a in t)


@pytest.mark.parametrize("head", ["time (s),x (V)\n", "# rig: bench\n\ntime (s),x (V)\n",
                                  "time (s),x (V)\r\n", "# rig: bench\r\ntime (s),x (V)\r\n"])
def test_file_route_gives_the_numbers_of_the_bytes(tmp_path, head, monkeypatch):
    # derived: the frame parsed from the path and the one parsed from the bytes in memory
    # are the same numbers, whatever the preamble's line ends
    import identify._csv as csv

    path = write(tmp_path, head + _rows(3000))
    via_file = read_record(path)
    monkeypatch.setattr(csv, "_parse_file", lambda *args, **kwargs: None)
    via_bytes = read_record(path)
    np.testing.assert_array_equal(via_file.channels[0].values, via_bytes.channels[0].values)
    assert via_file.sha256 == via_bytes.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert (via_file.start_s, via_file.sample_time_s) == (via_bytes.start_s, via_bytes.sample_time_s)


def test_file_route_is_taken_and_declined_as_documented(tmp_path, monkeypatch):
    import identify._csv as csv

    taken = []
    real = csv._parse_file

    def spy(*args, **kwargs):
        frame = real(*args, **kwargs)
        taken.append(frame is not None)
        return frame

    monkeypatch.setattr(csv, "_parse_file", spy)
    read_record(write(tmp_path, "time (s),x (V)\n" + _rows(500), "plain.csv"))
    read_record(write(tmp_path, "time (s),x (V)\r" + _rows(500).replace("\n", "\r"), "cr.csv"))
    read_record(write(tmp_path, "\ufefftime (s),x (V)\n" + _rows(500), "bom.csv"))
    assert taken == [True, False, False]  # bare \r line ends and a BOM go through the bytes


def test_file_changed_after_hashing_falls_back_to_the_hashed_bytes(tmp_path, monkeypatch):
    # the numbers must be those of the bytes whose SHA-256 the record carries: a file
    # rewritten between the read and pandas' parse is parsed from the bytes instead
    import pandas as pd

    import identify._csv as csv

    path = write(tmp_path, "time (s),x (V)\n" + _rows(500))
    original = path.read_bytes()
    real_read_csv = pd.read_csv

    def rewrite_then_parse(source, *args, **kwargs):
        if isinstance(source, str):  # the file route: someone rewrites the file first
            path.write_bytes(original.replace(b"0.000,", b"0.000,9", 1) + b"0.500,1\n")
        return real_read_csv(source, *args, **kwargs)

    monkeypatch.setattr(pd, "read_csv", rewrite_then_parse)
    calls = []
    real = csv._parse_file
    monkeypatch.setattr(csv, "_parse_file", lambda *a, **k: calls.append(real(*a, **k)) or calls[-1])
    rec = read_record(path)
    assert calls == [None]
    assert rec.samples == 500
    assert rec.sha256 == hashlib.sha256(original).hexdigest()
    assert rec.channels[0].values[0] == pytest.approx(0.0)


def test_file_route_reads_the_file_that_was_opened(tmp_path, monkeypatch):
    # a relative path that starts with "~" is a local directory for open(); pandas would
    # expand it to the home directory: the file route must parse the very file hashed
    here, home = tmp_path / "work", tmp_path / "home"
    (here / "~").mkdir(parents=True)
    home.mkdir()
    write(here / "~", "time (s),x (V)\n" + _rows(400))
    write(home, "time (s),x (V)\n" + _rows(400, start=5.0))
    monkeypatch.chdir(here)
    monkeypatch.setenv("HOME", str(home))
    rec = read_record("~/rec.csv")
    assert rec.start_s == 0.0
    assert rec.sha256 == hashlib.sha256((here / "~" / "rec.csv").read_bytes()).hexdigest()
