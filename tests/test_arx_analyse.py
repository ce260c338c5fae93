"""The ARX job on records: accuracy, decimation, validation, JSON, every warning and error."""
from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.signal import lfilter

from identify import IdentificationError, ParameterValueError, RecordError
from identify._jsonable import dumps_line
from identify.arx import ArxResult, analyse_arx
from identify.records import Record
from identify.validation import fit_percent

from _arx_synth import plant, record_signals, relative_errors

TS = 1.0 / 15.0


def _io_record(y, u, ts=TS, **kw):
    return Record.from_arrays(sample_time_s=ts, y=y, u=u, units={"y": "mm", "u": "V"}, **kw)


@pytest.fixture(scope="module")
def io_result():
    # synthetic: 1 Hz mode (ζ = 0.05) + real pole at -8 rad/s, equation error 10 %
    y, u, poles, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 3000, noise=0.1, kind="equation", seed=5)
    return analyse_arx(_io_record(y, u), output="y", input="u"), poles


def _keys(result):
    return [w.split(":", 1)[0] for w in result.warnings]


def test_auto_orders_delay_and_poles(io_result):
    result, poles = io_result
    assert isinstance(result, ArxResult)
    assert (result.model.na, result.model.nb, result.model.delay_samples) == (3, 3, 1)
    for fn_err, zeta_err in relative_errors(result.poles, poles):
        assert fn_err < 0.02 and zeta_err < 0.10
    assert result.order_search[0]["selected"]
    assert result.settings["decimation_factor"] == 1  # 15 samples per period: left alone
    assert result.warnings == ()
    assert result.validation["fit_percent"] > 80


def test_validation_is_simulation_on_the_final_part(io_result):
    result, _ = io_result
    v = result.validation
    r = result.response
    assert v["method"] == "simulation"
    assert v["holdout_fraction"] == 0.3
    assert v["holdout_samples"] == 900 and v["estimation_samples"] == 2100
    assert r.holdout_start_s == pytest.approx(2100 * TS)
    hold = r.time_s >= r.holdout_start_s - 1e-9
    assert v["fit_percent"] == pytest.approx(fit_percent(r.measured[hold], r.model[hold]))
    assert r.input is not None and r.input.size == r.time_s.size == 3000
    assert r.unit == "mm"


def test_json_contract(io_result):
    result, _ = io_result
    d = json.loads(dumps_line(result))
    for key in ("poles", "model", "order_search", "validation", "warnings", "settings"):
        assert key in d
    for key in ("na", "nb", "delay_samples", "a", "b", "sample_time_s", "dc_gain"):
        assert key in d["model"]
    assert d["model"]["a"][0] == 1.0 and len(d["model"]["a"]) == 4
    assert d["model"]["b"][0] == 0.0 and len(d["model"]["b"]) == 4  # one delay sample, then b1..b3
    assert d["poles"][0].keys() == result.poles[0].to_dict().keys()
    assert d["poles"][1]["ci"]["level"] == 0.95
    assert d["model"]["dc_gain"] == pytest.approx(2.0, rel=0.05)  # derived: two unit-gain terms
    assert d["validation"]["fit_percent"] == pytest.approx(result.validation["fit_percent"])
    assert len(d["order_search"]) <= 25 and d["order_search_candidates"] == len(result.order_search)
    assert d["settings"]["criterion"] == "bic"
    assert "caution" in d and "not clearances" in d["caution"]
    assert isinstance(d["order_scan"], list) and d["order_scan"][0]["order"] == 1


def test_text_summary_has_units_intervals_and_caution(io_result):
    result, _ = io_result
    text = result.summary()
    assert "fn (Hz)" in text and "95 % CI" in text and "DC gain" in text and "mm/V" in text
    assert "caution: estimates, not clearances" in text
    for word in ("safe", "cleared", "stable"):
        assert word not in text.lower().replace("stability", "")


def test_output_only_autoregression():
    # ambient response: the mode driven by white noise, no input recorded
    rng = np.random.default_rng(7)
    _, a, poles = plant([(1.0, 0.05)], [], TS)
    y = lfilter([1.0], a, rng.normal(size=20000))
    result = analyse_arx(Record.from_arrays(sample_time_s=TS, acc=y), output="acc", criterion="bic")
    assert result.model.na == 2 and result.model.nb == 0
    for fn_err, zeta_err in relative_errors(result.poles, poles):
        assert fn_err < 0.02 and zeta_err < 0.10
    assert result.validation["method"] == "one-step prediction"
    assert result.response.input is None


def test_decimation_factor_and_filter():
    from identify.arx._decimate import choose_factor, decimate_signals

    fs = 1000.0
    t = np.arange(20000) / fs
    rng = np.random.default_rng(10)
    slow = np.sin(2 * np.pi * 2.0 * t + 0.3)
    q, f99 = choose_factor(slow + 0.01 * rng.standard_normal(t.size), 1 / fs)
    assert f99 == pytest.approx(2.0, abs=1.0)  # Welch resolution ~1 Hz at 1024 points
    assert q == int(fs // (15 * f99))  # derived: floor(fs / (15·f99))
    fast = np.sin(2 * np.pi * 40.0 * t)  # above the new Nyquist frequency of 1000/(2·20) = 25 Hz
    (ds, df), first = decimate_signals([slow, fast], 20)
    kept_t = t[first::20][: ds.size]
    np.testing.assert_allclose(ds, np.sin(2 * np.pi * 2.0 * kept_t + 0.3), atol=0.01)  # zero phase
    assert np.std(df) < 0.01  # > 40 dB down


def test_hold_clock_of_the_input():
    from identify.arx._decimate import hold_period, largest_divisor

    u = np.repeat([1.0, -1.0, -1.0, 1.0, -1.0, 1.0], 25)
    assert hold_period(np.concatenate([np.full(7, 1.0), u])) == (25, 7 % 25)
    assert hold_period(np.random.default_rng(0).standard_normal(100)) == (1, 0)
    assert largest_divisor(250, 24) == 10 and largest_divisor(250, 60, 5) == 50 and largest_divisor(7, 5) == 1


def test_oversampled_record_with_a_held_input_is_subsampled_on_its_clock():
    # 1 Hz mode and a real pole at -8 rad/s sampled at 500 Hz (500 samples per period);
    # binary input held 25 samples: subsampling by 25 keeps the zero-order hold exact
    y, u, poles, _, _ = record_signals([(1.0, 0.05)], [-8.0], 0.002, 60000, noise=0.01, kind="output",
                                       seed=9, hold=25)
    result = analyse_arx(_io_record(y, u, ts=0.002), output="y", input="u", orders=(3, 3), refine="iv")
    assert result.settings["decimation_factor"] == 25  # 20 samples per period of the mode
    assert result.settings["decimation_method"] == "subsampled on the input's hold clock"
    assert result.model.sample_time_s == pytest.approx(0.05)
    assert result.model.delay_samples == 1
    for fn_err, zeta_err in relative_errors(result.poles, poles):
        assert fn_err < 0.02 and zeta_err < 0.10
    assert result.warnings == ()
    off = analyse_arx(_io_record(y[:6000], u[:6000], ts=0.002), output="y", input="u", orders=(3, 3),
                      delay=1, decimate="off", refine="iv")
    assert "samples per period" in _one_line_with_key(off, "oversampled")


def test_broadband_input_limits_decimation_and_a_forced_factor_warns():
    # white input at 500 Hz: filtering it to a narrower band would break the relation
    b, a, _ = plant([(1.0, 0.05)], [-8.0], 0.002)
    rng = np.random.default_rng(11)
    u = rng.standard_normal(20000)
    y = lfilter(b, a, u) + rng.normal(0, 0.001, 20000)
    auto = analyse_arx(_io_record(y, u, ts=0.002), output="y", input="u", orders=(3, 3), delay=1)
    assert auto.settings["decimation_factor"] == 1
    forced = analyse_arx(_io_record(y, u, ts=0.002), output="y", input="u", orders=(3, 3), decimate=10)
    assert forced.settings["decimation_method"] == "anti-alias filter"
    assert "above the kept band" in _one_line_with_key(forced, "decimated input")


# -- warnings, one test each ----------------------------------------------------------
def _ar_record(a, n=3000, seed=0, ts=0.1):
    rng = np.random.default_rng(seed)
    y = lfilter([1.0], a, rng.normal(size=n))
    return Record.from_arrays(sample_time_s=ts, y=y)


def _one_line_with_key(result, key):
    matches = [w for w in result.warnings if w.startswith(key + ":")]
    assert len(matches) == 1, result.warnings
    assert "\n" not in matches[0] and matches[0].split(":")[0].islower()
    return matches[0]


def test_warning_residuals_not_white():
    record = _ar_record([1.0, -1.5, 0.7])  # AR(2) data, fitted as AR(1)
    result = analyse_arx(record, output="y", orders=1, decimate="off")
    assert "Ljung-Box" in _one_line_with_key(result, "residuals not white")


def test_warning_input_correlation():
    rng = np.random.default_rng(1)
    u = rng.standard_normal(3000)
    y = lfilter([0, 0, 0, 1.0], [1.0, -0.5], u) + rng.normal(0, 0.05, 3000)  # true delay 3
    result = analyse_arx(_io_record(y, u, ts=0.1), output="y", input="u", orders=(1, 1), delay=0,
                         decimate="off")
    assert "3 samples earlier" in _one_line_with_key(result, "input correlation")


def test_warning_few_samples():
    rng = np.random.default_rng(2)
    u = rng.standard_normal(60)
    y = lfilter([0, 1.0], [1.0, -0.5], u) + rng.normal(0, 0.05, 60)
    result = analyse_arx(_io_record(y, u, ts=0.1), output="y", input="u", orders=(3, 3), delay=1,
                         decimate="off", holdout=0.0)
    assert "7 parameters" in _one_line_with_key(result, "few samples")  # a1..a3, b1..b3 and the constant


def test_warning_growing_pole():
    record = _ar_record([1.0, -1.05], n=300, seed=3)  # y(t) = 1.05 y(t-1) + e(t): z = 1.05
    result = analyse_arx(record, output="y", orders=1, decimate="off")
    _one_line_with_key(result, "growing pole")
    assert result.poles[0].verdict == "growing"


def test_warning_nyquist_pole():
    record = _ar_record([1.0, 0.6])  # z = -0.6
    result = analyse_arx(record, output="y", orders=1, decimate="off")
    _one_line_with_key(result, "nyquist pole")
    assert result.poles[0].imag == pytest.approx(math.pi / 0.1)  # derived: Im s = π/Ts


def test_warning_coarse_sampling():
    r, theta = 0.97, 2 * math.pi / 5  # a pair at 5 samples per period
    record = _ar_record([1.0, -2 * r * math.cos(theta), r * r])
    result = analyse_arx(record, output="y", orders=2, decimate="off")
    assert "5.0 samples per period" in _one_line_with_key(result, "coarse sampling")


def test_warning_order_at_limit():
    record = _ar_record(np.real(np.poly([0.9 * np.exp(0.3j), 0.9 * np.exp(-0.3j),
                                         0.8 * np.exp(1.2j), 0.8 * np.exp(-1.2j)])))
    result = analyse_arx(record, output="y", max_order=2, decimate="off")
    assert "max_order = 2" in _one_line_with_key(result, "order at limit")


def test_warning_delay_at_limit():
    rng = np.random.default_rng(4)
    u = lfilter([1.0], [1.0, -0.9], rng.standard_normal(2000))  # a slow input: nearer lags fit better
    y = lfilter([0, 0, 0, 0, 1.0], [1.0, -0.5], u) + rng.normal(0, 0.05, 2000)  # delay 4
    result = analyse_arx(_io_record(y, u, ts=0.1), output="y", input="u", orders=(1, 1), max_delay=2,
                         decimate="off")
    assert "max_delay = 2" in _one_line_with_key(result, "delay at limit")


def test_warning_poor_validation():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 2000, noise=2.0, kind="output", seed=6)
    result = analyse_arx(_io_record(y, u), output="y", input="u", orders=(3, 3), delay=1, refine="iv")
    assert "below 50 %" in _one_line_with_key(result, "poor validation")


def test_warning_missing_values_with_omit_policy():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 3000, noise=0.1, kind="equation", seed=5)
    y = y.copy()
    y[500] = np.nan
    record = _io_record(y, u)
    with pytest.raises(RecordError, match=r"channel 'y' holds a missing value at t = 33.3333 s \(sample 500\)"):
        analyse_arx(record, output="y", input="u")
    result = analyse_arx(record, output="y", input="u", nan="omit", orders=(3, 3), delay=1)
    assert "2499 of 3000 samples" in _one_line_with_key(result, "missing values")
    assert result.response.time_s[0] == pytest.approx(501 * TS)


def test_channel_quality_warnings_are_carried():
    # a saturated output sensor (flat runs at the maximum) is reported; a two-level input is
    # not called coarsely quantised (a switched input has few levels by design)
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 2000, noise=0.1, kind="equation", seed=5)
    y = np.minimum(y, np.quantile(y, 0.97))
    base = _io_record(y, u)
    record = Record(base.start_s, base.sample_time_s, base.channels, "rig.csv", base.sha256)
    result = analyse_arx(record, output="y", input="u", orders=(3, 3), delay=1)
    assert result.warnings[0].startswith("clipping:")
    assert not any(w.startswith("coarse quantisation") for w in result.warnings)
    assert result.source == "rig.csv"


# -- errors ----------------------------------------------------------------------------
def test_errors_on_bad_input_and_options():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 500, noise=0.1, kind="equation", seed=5)
    record = _io_record(y, u)
    with pytest.raises(IdentificationError, match="the input is constant"):
        analyse_arx(Record.from_arrays(sample_time_s=TS, y=y, u=np.ones(500)), output="y", input="u")
    with pytest.raises(IdentificationError, match="parameters but only"):
        analyse_arx(record.segment(0, 1.9), output="y", input="u", orders=(15, 15), delay=1)
    with pytest.raises(ParameterValueError, match="output and input are the same channel"):
        analyse_arx(record, output="y", input="Y")
    with pytest.raises(RecordError, match="no column named 'v'"):
        analyse_arx(record, output="v", input="u")
    with pytest.raises(ParameterValueError, match=r"orders must be 'auto' or 'NA,NB'"):
        analyse_arx(record, output="y", input="u", orders="two")
    with pytest.raises(ParameterValueError, match="nb must be 0"):
        analyse_arx(record, output="y", orders=(2, 2))
    with pytest.raises(ParameterValueError, match=r"holdout must lie in \[0, 1\)"):
        analyse_arx(record, output="y", input="u", holdout=1.0)
    with pytest.raises(ParameterValueError, match="criterion must be one of"):
        analyse_arx(record, output="y", input="u", criterion="mdl")
    with pytest.raises(ParameterValueError, match="delay must be 'auto' or a whole number"):
        analyse_arx(record, output="y", input="u", delay="soon")
    with pytest.raises(ParameterValueError, match="confidence must lie strictly between 0 and 1"):
        analyse_arx(record, output="y", input="u", confidence=95)


def test_the_record_is_not_modified_and_results_repeat():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 1500, noise=0.1, kind="equation", seed=5)
    record = _io_record(y, u)
    before = record.channel("y").values.copy()
    first = analyse_arx(record, output="y", input="u", orders=(3, 3), delay=1)
    second = analyse_arx(record, output="y", input="u", orders=(3, 3), delay=1)
    np.testing.assert_array_equal(record.channel("y").values, before)
    assert dumps_line(first) == dumps_line(second)


def test_time_window():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 3000, noise=0.1, kind="equation", seed=5)
    result = analyse_arx(_io_record(y, u), output="y", input="u", orders=(3, 3), delay=1,
                         start_s=20.0, end_s=120.0)
    assert result.response.time_s[0] == pytest.approx(20.0)
    assert result.response.time_s[-1] == pytest.approx(120.0, abs=TS)


def test_demo_motor_stage_record():
    # the bundled demo record (datasets/motor_prbs.csv, truth in datasets/truth.json, both
    # invented): a real pole and a 14 Hz mode driven by a maximum-length binary sequence,
    # sensor noise only, so the refinement is the right call
    from pathlib import Path

    root = Path(__file__).resolve().parents[1] / "datasets"
    truth = json.loads((root / "truth.json").read_text())["files"]["motor_prbs.csv"]
    result = analyse_arx(root / "motor_prbs.csv", output="speed", input="drive", orders=(3, 3),
                         refine="iv")
    assert result.model.delay_samples == truth["discrete_equivalent"]["delay_samples"]
    for p in truth["poles"]:
        est = min(result.poles, key=lambda q: abs(q.natural_frequency_hz - p["natural_frequency_hz"]))
        assert est.natural_frequency_hz == pytest.approx(p["natural_frequency_hz"], rel=0.02)
        assert est.damping_ratio == pytest.approx(p["damping_ratio"], rel=0.10)
    assert result.model.dc_gain == pytest.approx(truth["dc_gain"], rel=0.02)
    assert result.validation["fit_percent"] > 90
