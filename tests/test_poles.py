"""The pole vocabulary against closed forms (sources beside each check)."""
import math

import numpy as np
import pytest

from identify import (Interval, ParameterTypeError, ParameterValueError, Pole, PoleprintError,
                      continuous_to_discrete, discrete_to_continuous, hz_to_rad_per_s,
                      rad_per_s_to_hz)
from identify.poles import (DECAYING, GROWING, NOT_SHOWN_TO_DECAY, SUSTAINED, normal_quantile,
                            pole_from_frequency_damping, pole_with_delta_intervals,
                            pole_with_sample_intervals, verdict_for)


def test_derived_quantities_of_a_complex_pole():
    # ωn = |s|, ζ = -Re(s)/|s|, ωd = Im(s), Q = 1/(2ζ)  [practice; REFERENCES.md "Poles"]
    s = complex(-3.0, 4.0)
    p = Pole(s.real, s.imag)
    assert p.natural_frequency_rad_per_s == pytest.approx(5.0, rel=1e-15)
    assert p.natural_frequency_hz == pytest.approx(5.0 / (2 * math.pi), rel=1e-15)
    assert p.damping_ratio == pytest.approx(0.6, rel=1e-15)
    assert p.decay_rate_per_s == 3.0
    assert p.damped_frequency_hz == pytest.approx(4.0 / (2 * math.pi), rel=1e-15)
    assert p.quality_factor == pytest.approx(1 / 1.2, rel=1e-15)
    assert p.time_constant_s is None
    assert p.verdict == DECAYING


def test_conjugate_is_folded_to_upper_half_plane():
    assert Pole(-1.0, -2.0).imag == 2.0


def test_real_pole_time_constant():
    # τ = -1/s for a real pole  [practice; REFERENCES.md "Poles"]
    p = Pole(-0.25, 0.0)
    assert p.is_real and p.time_constant_s == pytest.approx(4.0)
    assert p.damping_ratio == pytest.approx(1.0)
    assert p.to_dict()["time_constant_s"] == pytest.approx(4.0)


def test_thomson_example_2_7_1_pole():
    # Thomson, Theory of Vibration with Applications, Example 2.7-1 (REFERENCES.md):
    # W = 10 lb, k = 30 lb/in, c = 0.12 lb·s/in  ->  ωn = 34.0 rad/s, ζ = 0.0681.
    g = 386.0  # in/s², as in the example
    m, k, c = 10.0 / g, 30.0, 0.12
    s = (-c + np.sqrt(complex(c * c - 4 * m * k))) / (2 * m)
    p = Pole(s.real, s.imag)
    assert p.natural_frequency_rad_per_s == pytest.approx(34.0, abs=0.05)
    assert p.damping_ratio == pytest.approx(0.0681, abs=5e-5)


def test_hz_rad_conversion():
    # ω = 2πf  [practice]
    assert hz_to_rad_per_s(1.0) == pytest.approx(2 * math.pi)
    assert rad_per_s_to_hz(2 * math.pi) == pytest.approx(1.0)
    np.testing.assert_allclose(rad_per_s_to_hz(hz_to_rad_per_s(np.array([0.5, 3.0]))), [0.5, 3.0])


def test_discrete_pole_check_value_from_references():
    # ωn = 2π rad/s, ζ = 0.1, Ts = 0.05 s  ->  z² + a1 z + a2 with a1 = -1.844226, a2 = 0.939101
    # [derived; REFERENCES.md "ARX least squares"]
    s = pole_from_frequency_damping(1.0, 0.1)
    z = continuous_to_discrete(s, 0.05)
    assert -2 * z.real == pytest.approx(-1.844226, abs=5e-7)
    assert abs(z) ** 2 == pytest.approx(0.939101, abs=5e-7)
    back = Pole(*(lambda q: (q.real, q.imag))(discrete_to_continuous(z, 0.05)))
    assert back.natural_frequency_hz == pytest.approx(1.0, rel=1e-12)
    assert back.damping_ratio == pytest.approx(0.1, rel=1e-12)


def test_discrete_continuous_round_trip_arrays():
    # s = ln z / Ts and z = exp(s Ts) are inverse on the principal strip  [derived]
    s = np.array([-1 + 2j, -0.5 - 30j, -4 + 0j])
    z = continuous_to_discrete(s, 0.01)
    np.testing.assert_allclose(discrete_to_continuous(z, 0.01), s, rtol=1e-12)


def test_zero_discrete_pole_is_rejected():
    with pytest.raises(ParameterValueError, match="z = 0"):
        discrete_to_continuous(0.0, 0.1)


def test_pole_from_frequency_damping_overdamped_gives_slow_real_pole():
    # ζ = 1.25, ωn = 1: roots -ωn(ζ ± √(ζ²-1)) = -0.5, -2  [derived]
    s = pole_from_frequency_damping(1 / (2 * math.pi), 1.25)
    assert s == pytest.approx(complex(-0.5, 0.0))


def test_normal_quantile():
    # 1.959964 for 95 %  [common practice; standard normal table]
    assert normal_quantile(0.95) == pytest.approx(1.959964, abs=1e-6)


@pytest.mark.parametrize("bad", [95, 0.0, 1.0, -0.2, float("nan")])
def test_confidence_validation_names_parameter_and_value(bad):
    with pytest.raises(ParameterValueError, match="confidence") as info:
        normal_quantile(bad)
    assert repr(bad) in str(info.value) or "nan" in str(info.value)


def test_confidence_type_error():
    with pytest.raises(ParameterTypeError, match="confidence"):
        normal_quantile("0.95")
    with pytest.raises(TypeError):  # also a built-in TypeError
        normal_quantile(None)


def test_delta_intervals_match_finite_difference_propagation():
    # delta method: var(g) = ∇gᵀ C ∇g with ∂ζ/∂(Re, Im) = (-Im², Re·Im)/ωn³
    # [pub: Kay 1993 ch. 3; gradient in REFERENCES.md "Cramér–Rao"]; checked by numerical gradient.
    s = complex(-0.8, 12.0)
    cov = np.array([[0.04, 0.01], [0.01, 0.09]])
    p = pole_with_delta_intervals(s, cov, 0.9)
    z = normal_quantile(0.9)

    def zeta(re, im):
        return -re / math.hypot(re, im)

    h = 1e-6
    g = np.array([(zeta(s.real + h, s.imag) - zeta(s.real - h, s.imag)) / (2 * h),
                  (zeta(s.real, s.imag + h) - zeta(s.real, s.imag - h)) / (2 * h)])
    sd = math.sqrt(g @ cov @ g)
    lo, hi = p.ci.damping_ratio
    assert (hi - lo) / 2 == pytest.approx(z * sd, rel=1e-6)
    assert p.ci.level == 0.9 and p.ci.method == "delta"
    assert p.ci.real == pytest.approx((s.real - z * 0.2, s.real + z * 0.2))


def test_delta_intervals_cover_in_monte_carlo():
    # Coverage of delta-method intervals when (Re, Im) really are Gaussian with the given
    # covariance: close to nominal for small relative errors  [common practice, no source]
    rng = np.random.default_rng(7)
    truth = complex(-0.5, 20.0)
    cov = np.array([[0.01, 0.002], [0.002, 0.02]])
    ptrue = Pole(truth.real, truth.imag)
    draws = rng.multivariate_normal([truth.real, truth.imag], cov, size=2000)
    hit_fn = hit_zeta = 0
    for re, im in draws:
        p = pole_with_delta_intervals(complex(re, im), cov, 0.95)
        hit_fn += p.ci.natural_frequency_hz[0] <= ptrue.natural_frequency_hz <= p.ci.natural_frequency_hz[1]
        hit_zeta += p.ci.damping_ratio[0] <= ptrue.damping_ratio <= p.ci.damping_ratio[1]
    assert 0.93 <= hit_fn / 2000 <= 0.97
    assert 0.93 <= hit_zeta / 2000 <= 0.97


def test_sample_intervals_percentiles():
    rng = np.random.default_rng(3)
    samples = complex(-1, 10) + rng.normal(0, 0.1, 4000) + 1j * rng.normal(0, 0.2, 4000)
    p = pole_with_sample_intervals(complex(-1, 10), samples, 0.95)
    assert p.ci.method == "bootstrap"
    assert p.ci.real[0] == pytest.approx(-1 - 1.96 * 0.1, abs=0.02)
    assert p.ci.real[1] == pytest.approx(-1 + 1.96 * 0.1, abs=0.02)
    with pytest.raises(ParameterValueError, match="at least 20"):
        pole_with_sample_intervals(-1 + 1j, [complex(-1, 1)] * 5)


@pytest.mark.parametrize("real, ci, expected", [
    (-1.0, (-1.5, -0.5), DECAYING),
    (1.0, (0.5, 1.5), GROWING),
    (-0.1, (-0.3, 0.1), NOT_SHOWN_TO_DECAY),
    (-1e-5, (-2e-4, 1.8e-4), SUSTAINED),  # ωn = 1, both limits within |ζ| < 0.001
    (-1.0, None, DECAYING),
    (0.0, None, SUSTAINED),
    (2.0, None, GROWING),
])
def test_verdict_words(real, ci, expected):
    assert verdict_for(real, ci, 1.0) == expected


def test_interval_orders_limits_and_knows_level():
    iv = Interval(2.0, 1.0, 0.9, "regression")
    assert (iv.lower, iv.upper) == (1.0, 2.0) and iv.contains(1.5) and not iv.contains(2.5)
    assert iv.to_dict()["level"] == 0.9
    with pytest.raises(PoleprintError):
        Interval(0, 1, 95, "x")


def test_pole_dict_round_trip():
    p = pole_with_delta_intervals(complex(-0.3, 40.0), np.diag([1e-3, 2e-3]), 0.95, amplitude=2.5)
    q = Pole.from_dict(p.to_dict())
    assert q == p


def test_pole_rejects_non_finite():
    with pytest.raises(ParameterValueError, match="finite"):
        Pole(float("nan"), 1.0)
