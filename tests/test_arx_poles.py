"""Discrete and continuous poles of ARX models, root-perturbation intervals, DC gain."""
from __future__ import annotations

import math

import numpy as np
import pytest

from identify.arx._poles import continuous_poles, dc_gain, discrete_roots, model_zeros, root_sensitivity
from identify.poles import Pole, continuous_to_discrete, pole_from_frequency_damping

TS = 0.05


def _a_from_poles(s_list, ts=TS):
    z = [continuous_to_discrete(s, ts) for s in s_list]
    return np.real(np.poly(z))


def test_root_sensitivity_matches_finite_differences():
    # derived: ∂z_i/∂a_k = -z_i^(n-k)/A'(z_i) (Guillaume et al. 1989) against central differences
    p = pole_from_frequency_damping(1.0, 0.05)
    a = _a_from_poles([p, p.conjugate(), -8.0])
    z = discrete_roots(a)
    g = root_sensitivity(a, z)
    h = 1e-7
    for k in range(1, a.size):
        up, down = a.copy(), a.copy()
        up[k] += h
        down[k] -= h
        zu, zd = discrete_roots(up), discrete_roots(down)
        for i, zi in enumerate(z):
            ju = np.argmin(np.abs(zu - zi))
            jd = np.argmin(np.abs(zd - zi))
            numeric = (zu[ju] - zd[jd]) / (2 * h)
            assert numeric == pytest.approx(g[i, k - 1], rel=1e-5, abs=1e-6)


def test_continuous_pole_covariance_is_the_mapped_full_covariance():
    # derived: ds = dz/(z·Ts); cov(Re s, Im s) = J Σ Jᵀ with J from finite differences of
    # s(a) = ln(root(a))/Ts; a correlated Σ (correlations matter)
    p = pole_from_frequency_damping(2.0, 0.1)
    a = _a_from_poles([p, p.conjugate()])
    cov = np.array([[4e-6, -3.5e-6], [-3.5e-6, 4e-6]])
    (pole,), (zd,) = continuous_poles(a, cov, TS, 0.95)
    h = 1e-7
    jac = np.zeros((2, 2))
    for k in range(2):
        up, down = a.copy(), a.copy()
        up[k + 1] += h
        down[k + 1] -= h
        su = np.log(max(discrete_roots(up), key=lambda v: v.imag)) / TS
        sd = np.log(max(discrete_roots(down), key=lambda v: v.imag)) / TS
        d = (su - sd) / (2 * h)
        jac[:, k] = [d.real, d.imag]
    cov_s = jac @ cov @ jac.T
    expected = Pole(p.real, p.imag)
    assert pole.natural_frequency_hz == pytest.approx(expected.natural_frequency_hz, rel=1e-9)
    assert pole.damping_ratio == pytest.approx(expected.damping_ratio, rel=1e-9)
    z95 = 1.959963984540054  # two-sided 95 % normal quantile (scipy.stats.norm.ppf(0.975))
    half_re = (pole.ci.real[1] - pole.ci.real[0]) / 2
    half_im = (pole.ci.imag[1] - pole.ci.imag[0]) / 2
    assert half_re == pytest.approx(z95 * math.sqrt(cov_s[0, 0]), rel=1e-4)
    assert half_im == pytest.approx(z95 * math.sqrt(cov_s[1, 1]), rel=1e-4)
    # ignoring the correlation would give a visibly different interval (Re s = ln a2/(2Ts)
    # depends on a2 alone, Im s on both, so the correlation shows in Im s)
    diag_only = jac @ np.diag(np.diag(cov)) @ jac.T
    assert abs(math.sqrt(diag_only[1, 1]) - math.sqrt(cov_s[1, 1])) > 0.1 * math.sqrt(cov_s[1, 1])


def test_pole_vocabulary_round_trip_and_sorting():
    p1 = pole_from_frequency_damping(3.0, 0.02)
    p2 = pole_from_frequency_damping(0.5, 0.2)
    a = _a_from_poles([p1, p1.conjugate(), p2, p2.conjugate(), -4.0])
    poles, discrete = continuous_poles(a, np.zeros((5, 5)), TS)
    assert [round(p.natural_frequency_hz, 9) for p in poles] == sorted(round(p.natural_frequency_hz, 9) for p in poles)
    assert len(poles) == 3 and len(discrete) == 3
    # derived: 0.5 Hz·2π = 3.14 rad/s < 4 rad/s < 6π rad/s, so the real pole is second; τ = 1/4 s
    assert poles[1].is_real and poles[1].time_constant_s == pytest.approx(0.25, rel=1e-9)
    assert poles[2].damping_ratio == pytest.approx(0.02, rel=1e-9)
    for p, z in zip(poles, discrete):
        assert z.imag >= 0
        assert np.exp(p.s * TS) == pytest.approx(z, rel=1e-12)


def test_negative_real_root_maps_to_the_nyquist_frequency():
    a = np.array([1.0, 0.4])  # z = -0.4
    (pole,), (z,) = continuous_poles(a, np.array([[1e-4]]), TS)
    assert z == -0.4
    assert pole.imag == pytest.approx(math.pi / TS)  # derived: ln(-0.4) = ln 0.4 + jπ
    assert pole.real == pytest.approx(math.log(0.4) / TS)


def test_real_pole_interval_and_time_constant():
    # derived: z = exp(-2·0.05); var(a1) = 1e-4 → var(s) = var(z)/(z·Ts)²
    z = math.exp(-2 * TS)
    (pole,), _ = continuous_poles(np.array([1.0, -z]), np.array([[1e-4]]), TS)
    sd = 1e-2 / (z * TS)
    assert pole.real == pytest.approx(-2.0)
    assert pole.ci.real[1] - pole.ci.real[0] == pytest.approx(2 * 1.959963984540054 * sd, rel=1e-6)
    assert pole.time_constant_s == pytest.approx(0.5)
    assert pole.ci.damping_ratio == (1.0, 1.0)


def test_dc_gain_gradient_matches_finite_differences():
    # derived: G = B(1)/A(1); ∂G/∂a_k = -B(1)/A(1)², ∂G/∂b_k = 1/A(1)
    a = np.array([1.0, -1.5, 0.7])
    b = np.array([0.1, 0.05])
    cov = np.diag([1e-4, 2e-4, 3e-4, 4e-4])
    g, ci = dc_gain(a, b, cov)
    assert g == pytest.approx(0.15 / 0.2)
    grad = np.array([-0.15 / 0.04, -0.15 / 0.04, 1 / 0.2, 1 / 0.2])
    sd = math.sqrt(grad @ cov @ grad)
    assert ci.upper - ci.lower == pytest.approx(2 * 1.959963984540054 * sd, rel=1e-9)
    # an integrator (A(1) = 0) has no finite DC gain
    g2, ci2 = dc_gain(np.array([1.0, -1.0]), b, np.eye(3))
    assert math.isnan(g2) and ci2 is None


def test_model_zeros():
    np.testing.assert_allclose(model_zeros([2.0, -1.0]), [0.5])
    assert model_zeros([3.0]).size == 0
    np.testing.assert_allclose(np.sort_complex(model_zeros([1.0, 0.0, 0.25])), np.sort_complex([0.5j, -0.5j]))
