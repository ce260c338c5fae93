"""Least-squares ARX fit: closed forms, a reference library, synthetic plants, bad input."""
from __future__ import annotations

import numpy as np
import pytest

from identify import IdentificationError, ParameterValueError, PoleprintError
from identify.arx import fit_arx, simulate
from identify.poles import continuous_to_discrete, pole_from_frequency_damping

from _arx_synth import plant, record_signals, relative_errors

TS = 0.05


def test_derived_coefficients_of_a_second_order_mode():
    # derived (REFERENCES.md, ARX least squares): ωn = 2π rad/s, ζ = 0.1, Ts = 0.05 s
    # → z = exp(s·Ts), A(z) = z² - 2|z|cos(ωd Ts) z + |z|² → a1 = -1.844226, a2 = 0.939101
    s = pole_from_frequency_damping(1.0, 0.1)
    z = continuous_to_discrete(s, TS)
    a = np.real(np.poly([z, z.conjugate()]))
    assert a[1] == pytest.approx(-1.844226, abs=1e-6)
    assert a[2] == pytest.approx(0.939101, abs=1e-6)
    # and the fit recovers them from noise-free data, with the pole back in fn and ζ
    rng = np.random.default_rng(5)
    u = rng.standard_normal(400)
    from scipy.signal import lfilter
    y = lfilter([0.0, 0.1], a, u)
    fit = fit_arx(y, u, 2, 1, 1, TS)
    assert fit.a[1] == pytest.approx(-1.844226, abs=1e-6)
    assert fit.a[2] == pytest.approx(0.939101, abs=1e-6)
    (pole,) = fit.poles
    assert pole.natural_frequency_hz == pytest.approx(1.0, rel=1e-6)
    assert pole.damping_ratio == pytest.approx(0.1, rel=1e-6)


def test_same_coefficients_and_standard_errors_as_statsmodels_ols():
    # reference library: statsmodels OLS on the same regressors (s² = RSS/(N-p))
    import statsmodels.api as sm

    from identify.arx._regressors import regressors

    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 1500, noise=0.2, kind="equation", seed=11)
    y = 1e3 * (y - y.mean())  # different scales of input and output on purpose
    u = 1e-3 * (u - u.mean())
    fit = fit_arx(y, u, 3, 3, 1, TS)
    phi, target = regressors(y, u, 3, 3, 1)
    ols = sm.OLS(target, phi).fit()
    np.testing.assert_allclose(fit.theta, ols.params, rtol=1e-8)
    np.testing.assert_allclose(fit.standard_errors, ols.bse, rtol=1e-8)
    np.testing.assert_allclose(fit.cov, ols.cov_params(), rtol=1e-7, atol=1e-12 * np.abs(ols.cov_params()).max())


@pytest.mark.parametrize("modes", [
    [(1.0, 0.05)],
    [(1.0, 0.05), (1.8, 0.06)],
    [(1.0, 0.05), (1.6, 0.06), (2.5, 0.08)],
], ids=["one mode", "two modes", "three modes"])
def test_equation_error_plants_give_poles_within_tolerance(modes):
    # synthetic: modes plus a real pole at -8 rad/s, ZOH-sampled at ~12 samples per
    # period of the fastest mode, random binary input, equation-error noise 10 %
    ts = 1.0 / (12.0 * max(fn for fn, _ in modes))
    y, u, poles, b, a = record_signals(modes, [-8.0], ts, 4000, noise=0.1, kind="equation", seed=3)
    n = a.size - 1
    fit = fit_arx(y - y.mean(), u - u.mean(), n, n, 1, ts)
    for fn_err, zeta_err in relative_errors(fit.poles, poles):
        assert fn_err < 0.02
        assert zeta_err < 0.10


def test_dc_gain_and_zeros_of_a_noise_free_plant():
    b, a, _ = plant([(1.0, 0.05)], [-8.0], TS)
    rng = np.random.default_rng(2)
    u = rng.standard_normal(600)
    from scipy.signal import lfilter
    y = lfilter(b, a, u)
    fit = fit_arx(y, u, 3, 3, 1, TS)
    # derived: two unit-DC-gain terms in parallel, and a zero-order hold keeps DC gain → 2
    assert fit.dc_gain == pytest.approx(2.0, rel=1e-8)
    np.testing.assert_allclose(np.sort_complex(fit.zeros), np.sort_complex(np.roots(b[1:])), rtol=1e-6, atol=1e-8)


def test_dc_gain_interval_covers_the_true_gain():
    y, u, _, _, _ = record_signals([(1.0, 0.1)], [-8.0], TS, 3000, noise=0.1, kind="equation", seed=8)
    fit = fit_arx(y - y.mean(), u - u.mean(), 3, 3, 1, TS)
    assert fit.dc_gain_ci.contains(2.0)  # derived: two unit-gain terms in parallel
    assert fit.dc_gain_ci.level == 0.95


def test_constant_is_fitted_when_asked():
    rng = np.random.default_rng(4)
    e = rng.normal(0, 0.1, 2000)
    from scipy.signal import lfilter
    # y(t) = 0.6 y(t-1) + 2 + e  → mean 2/(1-0.6) = 5 (derived)
    y = lfilter([1.0], [1.0, -0.6], e + 2.0, zi=[5.0 * 0.6])[0]
    fit = fit_arx(y, None, 1, 0, 0, 1.0, constant=True)
    assert fit.a[1] == pytest.approx(-0.6, abs=4 * fit.standard_errors[0])
    assert fit.constant == pytest.approx(2.0, abs=4 * fit.standard_errors[1])
    assert fit.dc_gain != fit.dc_gain  # no input: NaN gain


def test_inputs_are_not_modified():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], TS, 500, noise=0.1, kind="equation", seed=1)
    y0, u0 = y.copy(), u.copy()
    fit_arx(y, u, 3, 3, 1, TS)
    np.testing.assert_array_equal(y, y0)
    np.testing.assert_array_equal(u, u0)


def test_simulation_continues_exactly_from_measured_history():
    b, a, _ = plant([(1.0, 0.05)], [-8.0], TS)
    rng = np.random.default_rng(9)
    u = rng.standard_normal(300)
    from scipy.signal import lfilter
    y = lfilter(b, a, u)
    sim = simulate(a, b[1:], 1, u, y[:40])
    np.testing.assert_allclose(sim, y, atol=1e-10)
    # from rest it is lfilter itself
    np.testing.assert_allclose(simulate(a, b[1:], 1, u), y, atol=1e-12)


# -- bad input ----------------------------------------------------------------------
def test_input_and_output_of_different_lengths():
    with pytest.raises(ParameterValueError, match="input and output differ in length: 99 and 100"):
        fit_arx(np.arange(100.0) % 7, np.arange(99.0) % 3, 2, 2, 1)


def test_constant_input():
    y = np.sin(np.arange(200.0))
    with pytest.raises(IdentificationError, match="the input is constant"):
        fit_arx(y, np.full(200, 3.0), 2, 2, 1)


def test_constant_output():
    with pytest.raises(IdentificationError, match="the output is constant"):
        fit_arx(np.zeros(50), np.sin(np.arange(50.0)), 2, 2, 1)


def test_more_parameters_than_samples():
    rng = np.random.default_rng(0)
    y, u = rng.standard_normal(12), rng.standard_normal(12)
    with pytest.raises(IdentificationError, match="the model has 10 parameters but only 7 usable samples"):
        fit_arx(y, u, 5, 5, 1)


def test_nb_without_input_and_bad_orders():
    y = np.sin(np.arange(100.0) * 0.3) + np.cos(np.arange(100.0))
    with pytest.raises(ParameterValueError, match="without an input the model is an autoregression: nb must be 0; got 2"):
        fit_arx(y, None, 2, 2, 1)
    with pytest.raises(ParameterValueError, match="na must be >= 0; got -1"):
        fit_arx(y, None, -1, 0, 1)
    with pytest.raises(ParameterValueError, match="confidence must lie strictly between 0 and 1"):
        fit_arx(y, None, 2, 0, 0, 1.0, confidence=95)


def test_errors_are_one_line_and_from_the_project():
    with pytest.raises(PoleprintError) as info:
        fit_arx(np.ones(30) + np.arange(30), np.full(30, 1.0), 2, 2, 1)
    assert "\n" not in str(info.value)
