"""Instrumental variables remove the bias that output (sensor) noise causes in least squares."""
from __future__ import annotations

import numpy as np
import pytest

from identify import IdentificationError, ParameterValueError
from identify.arx import analyse_arx, fit_arx, refine_iv
from identify.records import Record

from _arx_synth import match, record_signals, relative_errors

TS = 1.0 / 15.0  # 15 samples per period of the 1 Hz mode


@pytest.fixture(scope="module")
def output_noise():
    # synthetic: 1 Hz mode (ζ = 0.05) plus a real pole at -8 rad/s, random binary input,
    # white sensor noise of 5 % of the output's standard deviation
    y, u, poles, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 4000, noise=0.05, kind="output", seed=1)
    return y - y.mean(), u - u.mean(), poles


def test_least_squares_is_biased_and_instrumental_variables_is_not(output_noise):
    y, u, poles = output_noise
    ls = fit_arx(y, u, 3, 3, 1, TS)
    iv = refine_iv(ls, y, u)
    mode_true = poles[1]
    (mode_ls,) = match(ls.poles, [mode_true])
    (mode_iv,) = match(iv.poles, [mode_true])
    # least squares: ζ far off and its own interval excludes the truth (bias, not noise)
    assert abs(mode_ls.damping_ratio - mode_true.damping_ratio) > 0.5 * mode_true.damping_ratio
    lo, hi = mode_ls.ci.damping_ratio
    assert not (lo <= mode_true.damping_ratio <= hi)
    lo, hi = mode_ls.ci.natural_frequency_hz
    assert not (lo <= mode_true.natural_frequency_hz <= hi)
    # instrumental variables: every pole within 2 % in fn and 10 % in ζ, intervals cover
    for fn_err, zeta_err in relative_errors(iv.poles, poles):
        assert fn_err < 0.02
        assert zeta_err < 0.10
    lo, hi = mode_iv.ci.damping_ratio
    assert lo <= mode_true.damping_ratio <= hi
    lo, hi = mode_iv.ci.natural_frequency_hz
    assert lo <= mode_true.natural_frequency_hz <= hi
    assert iv.method == "instrumental variables"


@pytest.mark.parametrize("modes", [[(1.0, 0.05), (1.8, 0.06)],
                                   [(1.0, 0.05), (1.6, 0.06), (2.5, 0.08)]], ids=["two modes", "three modes"])
def test_output_noise_plants_with_several_modes(modes):
    ts = 1.0 / (12.0 * max(fn for fn, _ in modes))
    y, u, poles, _, a = record_signals(modes, [-8.0], ts, 8000, noise=0.05, kind="output", seed=2)
    n = a.size - 1
    iv = refine_iv(fit_arx(y - y.mean(), u - u.mean(), n, n, 1, ts), y - y.mean(), u - u.mean())
    for fn_err, zeta_err in relative_errors(iv.poles, poles):
        assert fn_err < 0.02
        assert zeta_err < 0.10


def _record(y, u):
    return Record.from_arrays(sample_time_s=TS, y=y, u=u, units={"y": "mm", "u": "V"})


def test_job_warns_of_output_noise_bias_and_the_refinement_clears_it(output_noise):
    y, u, poles = output_noise
    plain = analyse_arx(_record(y, u), output="y", input="u", orders=(3, 3), delay=1)
    keys = [w.split(":")[0] for w in plain.warnings]
    assert "output noise bias" in keys
    (text,) = [w for w in plain.warnings if w.startswith("output noise bias:")]
    assert "--refine iv" in text and "\n" not in text
    assert plain.residual_tests["noise_bias"]["p_value"] < 0.01
    refined = analyse_arx(_record(y, u), output="y", input="u", orders=(3, 3), delay=1, refine="iv")
    assert "output noise bias" not in [w.split(":")[0] for w in refined.warnings]
    assert refined.model.method == "instrumental variables"
    assert refined.least_squares is not None and refined.least_squares.method == "least squares"
    for fn_err, zeta_err in relative_errors(refined.poles, poles):
        assert fn_err < 0.02 and zeta_err < 0.10
    # with the bias gone the simulation error is white and the hold-out fit improves
    assert refined.residual_tests["whiteness"]["white"]
    assert refined.validation["fit_percent"] > plain.validation["fit_percent"] + 20


def test_auto_orders_with_refinement_use_the_simulation_error(output_noise):
    y, u, poles = output_noise
    result = analyse_arx(_record(y, u), output="y", input="u", refine="iv", criterion="bic")
    assert (result.model.na, result.model.nb, result.model.delay_samples) == (3, 3, 1)
    assert {r["delay_samples"] for r in result.order_search} >= {1}
    assert result.order_search[0]["estimator"] == "instrumental variables"
    for fn_err, zeta_err in relative_errors(result.poles, poles):
        assert fn_err < 0.02 and zeta_err < 0.10


def test_no_bias_warning_under_equation_error():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 3000, noise=0.1, kind="equation", seed=1)
    result = analyse_arx(_record(y, u), output="y", input="u", orders=(3, 3), delay=1)
    assert not any(w.startswith("output noise bias:") for w in result.warnings)
    assert result.residual_tests["whiteness"]["white"]


def test_refinement_needs_an_input():
    y = np.sin(0.3 * np.arange(500)) + np.random.default_rng(0).normal(0, 0.1, 500)
    ar = fit_arx(y, None, 2, 0, 0, 1.0)
    with pytest.raises(IdentificationError, match="needs an input channel"):
        refine_iv(ar, y, None)
    record = Record.from_arrays(sample_time_s=1.0, y=y)
    with pytest.raises(ParameterValueError, match="refine='iv' needs an input channel"):
        analyse_arx(record, output="y", refine="iv")
    with pytest.raises(ParameterValueError, match="refine must be one of 'iv'; got 'ml'"):
        analyse_arx(record, output="y", refine="ml")
