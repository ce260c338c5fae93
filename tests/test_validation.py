"""Validation of a model against its record: fit percent, R², Ljung–Box, hold-out, verdict."""
import json

import numpy as np
import pytest

from identify import ParameterTypeError, ParameterValueError
from identify._response import ModelResponse
from identify.validation import Validation, fit_percent, validate
from identify.validation._validate import EXPLAINS, STRUCTURE_LEFT, default_lags


def _decay(n=1500, ts=0.002):
    t = np.arange(n) * ts
    return t, 2.0 * np.exp(-1.5 * t) * np.cos(2 * np.pi * 12.0 * t + 0.3)


def test_exact_model_fits_100_percent():
    # derived: y - ŷ = 0 gives ‖y - ŷ‖ = 0, so fit = 100 % and R² = 1
    t, y = _decay()
    v = validate(ModelResponse(t, y, y, unit="m"))
    assert v.fit_percent == pytest.approx(100.0, abs=1e-12)
    assert v.r_squared == pytest.approx(1.0, abs=1e-12)
    assert v.residual_rms == 0.0


def test_mean_as_model_fits_0_percent():
    # derived: ŷ = ȳ gives ‖y - ŷ‖ = ‖y - ȳ‖, so fit = 0 % and R² = 0
    t, y = _decay()
    v = validate(ModelResponse(t, y, np.full_like(y, y.mean())))
    assert v.fit_percent == pytest.approx(0.0, abs=1e-9)
    assert v.r_squared == pytest.approx(0.0, abs=1e-9)


def test_fit_percent_half_error_norm():
    # derived: ŷ = ȳ + (y - ȳ)/2 leaves ‖y - ŷ‖ = ‖y - ȳ‖/2, so fit = 50 %, R² = 0.75
    t, y = _decay()
    v = validate(ModelResponse(t, y, y.mean() + 0.5 * (y - y.mean())))
    assert v.fit_percent == pytest.approx(50.0, abs=1e-9)
    assert v.r_squared == pytest.approx(0.75, abs=1e-9)


def test_ljung_box_matches_statsmodels_and_the_formula():
    from statsmodels.stats.diagnostic import acorr_ljungbox  # reference library

    rng = np.random.default_rng(11)
    t, y = _decay(n=400)
    noise = rng.normal(0.0, 0.05, t.size)
    v = validate(ModelResponse(t, y + noise, y), lags=7)
    ref = acorr_ljungbox(noise, lags=[7], return_df=True)
    assert v.ljung_box_lags == 7
    assert v.ljung_box_statistic == pytest.approx(float(ref["lb_stat"].iloc[0]), rel=1e-12)
    assert v.ljung_box_p_value == pytest.approx(float(ref["lb_pvalue"].iloc[0]), rel=1e-12)
    # Ljung & Box (1978), Biometrika 65(2): Q = N(N+2) Σ r_k²/(N-k)
    e = noise - noise.mean()
    n = e.size
    r = np.array([e[:-k] @ e[k:] for k in range(1, 8)]) / (e @ e)
    q = n * (n + 2) * np.sum(r ** 2 / (n - np.arange(1, 8)))
    assert v.ljung_box_statistic == pytest.approx(q, rel=1e-10)


def test_default_lags():
    # common practice, no source: min(10, N // 5), at least 1
    assert default_lags(1000) == 10
    assert default_lags(30) == 6
    assert default_lags(3) == 1


def test_white_residuals_explain_the_record():
    rng = np.random.default_rng(3)
    t, y = _decay()
    v = validate(ModelResponse(t, y + rng.normal(0, 0.02, t.size), y), noise_rms=0.02)
    assert v.verdict == EXPLAINS and v.explains_record
    assert v.residual_to_noise == pytest.approx(1.0, abs=0.1)
    assert v.ljung_box_p_value > 0.05


def test_missed_mode_leaves_structure():
    rng = np.random.default_rng(4)
    t, y = _decay()
    missed = 0.3 * np.exp(-2.0 * t) * np.sin(2 * np.pi * 41.0 * t)
    v = validate(ModelResponse(t, y + missed + rng.normal(0, 0.02, t.size), y), noise_rms=0.02)
    assert v.verdict == STRUCTURE_LEFT
    assert v.ljung_box_p_value < 1e-6
    assert v.residual_to_noise > 1.5
    assert any(r.startswith("residuals are not white") for r in v.reasons)


def test_residual_far_above_noise_estimate_is_flagged_even_if_white():
    rng = np.random.default_rng(5)
    t, y = _decay()
    v = validate(ModelResponse(t, y + rng.normal(0, 0.1, t.size), y), noise_rms=0.02)
    assert v.verdict == STRUCTURE_LEFT
    assert any(r.startswith("residual RMS is") for r in v.reasons)


def test_holdout_fit_is_computed_on_the_holdout_part_only():
    rng = np.random.default_rng(6)
    t, y = _decay()
    meas = y + rng.normal(0, 0.05, t.size)
    start = t[1000]
    v = validate(ModelResponse(t, meas, y, holdout_start_s=start))
    assert v.holdout_start_s == start
    assert v.holdout_samples == t.size - 1000
    assert v.holdout_fit_percent == pytest.approx(fit_percent(meas[1000:], y[1000:]), rel=1e-12)
    # an explicit argument overrides the response's own hold-out
    v2 = validate(ModelResponse(t, meas, y, holdout_start_s=start), holdout_start_s=t[1400])
    assert v2.holdout_samples == 100


def test_to_dict_is_json_safe():
    t, y = _decay(n=50)
    v = validate(ModelResponse(t, y, y, unit="mm"))  # constant residual: no whiteness test
    d = v.to_dict()
    json.dumps(d, allow_nan=False)
    assert d["verdict"] == EXPLAINS and d["unit"] == "mm"
    assert d["ljung_box"]["p_value"] is None
    assert isinstance(v, Validation)


def test_bad_input_raises_project_errors():
    with pytest.raises(ParameterTypeError, match="response must have"):
        validate({"time_s": [1, 2, 3]})
    t, y = _decay(n=10)
    with pytest.raises(ParameterValueError, match="noise_rms"):
        validate(ModelResponse(t, y, y), noise_rms=-1.0)
    with pytest.raises(ParameterValueError, match="at least 3"):
        validate(ModelResponse(t[:2], y[:2], y[:2]))
    with pytest.raises(ParameterValueError, match="confidence"):
        validate(ModelResponse(t, y, y), confidence=95)


def test_fit_percent_and_rms_equal_their_textbook_formulas():
    # NRMSE fit 100(1 - ||y - yh|| / ||y - mean(y)||) and RMS sqrt(mean(v^2)) (Ljung 1999,
    # from memory), computed without record-length temporaries: the same numbers, also
    # for a large offset, a 2-D array and an empty one
    from identify.validation._metrics import rms

    rng = np.random.default_rng(3)
    y = 1e4 + np.sin(np.arange(5000) / 30.0) + 0.01 * rng.standard_normal(5000)
    yh = 1e4 + np.sin(np.arange(5000) / 30.0)
    direct = 100 * (1 - np.sqrt(np.sum((y - yh) ** 2)) / np.sqrt(np.sum((y - y.mean()) ** 2)))
    assert fit_percent(y, yh) == pytest.approx(direct, rel=1e-12)
    assert rms(y - yh) == pytest.approx(np.sqrt(np.mean((y - yh) ** 2)), rel=1e-12)
    assert rms(np.ones((3, 4)) * 2.0) == pytest.approx(2.0, rel=1e-15)
    assert np.isnan(rms(np.array([])))
