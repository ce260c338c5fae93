"""Offset and trend estimation, and the robust noise estimate (identify.conditioning._trend)."""
import math

import numpy as np
import pytest

from identify import ParameterValueError
from identify.conditioning import OffsetTrend, estimate_offset_trend
from identify.conditioning._trend import robust_noise_std


def test_linear_trend_matches_numpy_polyfit():
    rng = np.random.default_rng(11)
    t = np.linspace(-2.0, 7.0, 401)
    y = 0.7 - 0.031 * t + 0.05 * rng.standard_normal(t.size)
    fit = estimate_offset_trend(t, y)
    slope, intercept = np.polyfit(t, y, 1)  # reference library: numpy.polyfit
    assert fit.slope_per_s == pytest.approx(slope, rel=1e-12)
    assert fit.evaluate(0.0) == pytest.approx(intercept, rel=1e-12)
    assert fit.t_ref_s == pytest.approx(np.mean(t))
    resid = y - np.polyval([slope, intercept], t)
    assert fit.residual_std == pytest.approx(math.sqrt(resid @ resid / (t.size - 2)), rel=1e-12)
    assert fit.samples == t.size
    np.testing.assert_allclose(fit.evaluate(t), np.polyval([slope, intercept], t), rtol=1e-12)


def test_offset_only_is_the_mean():
    rng = np.random.default_rng(12)
    t = np.arange(100) * 0.01
    y = 3.0 + 0.2 * t + 0.1 * rng.standard_normal(t.size)
    fit = estimate_offset_trend(t, y, linear=False)
    assert fit.slope_per_s == 0.0
    assert fit.offset == pytest.approx(np.mean(y))  # derived: least squares of a constant
    assert fit.residual_std == pytest.approx(np.std(y, ddof=1))
    assert isinstance(fit, OffsetTrend)


def test_exact_line_and_to_dict():
    t = np.linspace(0.0, 1.0, 11)
    fit = estimate_offset_trend(t, 2.0 + 4.0 * t)  # derived: y = 2 + 4t exactly
    assert fit.slope_per_s == pytest.approx(4.0)
    assert fit.evaluate(0.0) == pytest.approx(2.0)
    assert fit.residual_std == pytest.approx(0.0, abs=1e-12)
    d = fit.to_dict()
    assert set(d) == {"offset", "slope_per_s", "t_ref_s", "residual_std", "samples"}


def test_input_is_not_mutated_and_errors():
    t = np.linspace(0.0, 1.0, 5)
    y = np.array([1.0, 2.0, 3.0, 4.0, 5.0])
    before = y.copy()
    estimate_offset_trend(t, y)
    np.testing.assert_array_equal(y, before)
    with pytest.raises(ParameterValueError, match="same length"):
        estimate_offset_trend(t, y[:4])
    with pytest.raises(ParameterValueError, match="at least 3 samples"):
        estimate_offset_trend(t[:2], y[:2])
    with pytest.raises(ParameterValueError, match="distinct times"):
        estimate_offset_trend(np.zeros(4), y[:4])
    with pytest.raises(ParameterValueError, match="non-finite"):
        estimate_offset_trend(t, [1.0, np.nan, 3.0, 4.0, 5.0])


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_robust_noise_std_on_noise_and_on_a_decay(seed):
    rng = np.random.default_rng(seed)
    s = 0.02
    noise = s * rng.standard_normal(4000)
    assert robust_noise_std(noise) == pytest.approx(s, rel=0.1)
    t = np.arange(4000) / 200.0
    decay = np.exp(-0.5 * t) * np.cos(2 * np.pi * 7.0 * t) + 0.3
    assert robust_noise_std(decay + noise) == pytest.approx(s, rel=0.15)
