"""Matrix pencil (Hua & Sarkar 1990): exact data, order selection, decimation, spurious poles."""
import math

import numpy as np
import pytest

from _decay_synth import make_decay
from identify import IdentificationError, ParameterTypeError, ParameterValueError
from identify.decay import matrix_pencil
from identify.decay._pencil import block_decimate, block_gain, choose_decimation


def _rel(a, b):
    return abs(a - b) / abs(b)


@pytest.mark.parametrize("modes, fs, n", [
    ([(10.0, 0.02, 1.0, 0.4)], 200.0, 400),
    ([(3.0, 0.001, 1.0, 0.0), (7.5, 0.05, 0.4, 2.0)], 100.0, 600),
    ([(12.0, 0.01, 1.0, 0.3), (12.6, 0.01, 0.7, 1.0), (40.0, 0.2, 0.5, 2.5), (55.0, 0.003, 0.2, 1.0)], 500.0, 1500),
    ([(5.0, 0.05, 1.0, 0.2)], 5000.0, 4000),  # 1000 samples per period: decimated first
])
def test_exact_data_gives_sigma_and_omega_to_1e_8(modes, fs, n):
    # Noise-free sum of damped sinusoids plus an offset: the pencil is exact up to rounding
    # (Hua & Sarkar 1990, noiseless case); σ = ζωn, ω = ωn√(1−ζ²) [derived].
    t, y, poles, _ = make_decay(modes, fs=fs, n=n, offset=0.25)
    est = matrix_pencil(t, y)
    assert est.method == "pencil"
    assert len(est.poles) == len(modes)
    for p, s in zip(est.poles, sorted(poles, key=abs)):
        assert _rel(p.real, s.real) < 1e-8
        assert _rel(p.imag, s.imag) < 1e-8
    for p, (fn, zeta, amp, _) in zip(est.poles, sorted(modes)):
        assert p.amplitude == pytest.approx(amp, rel=1e-6)
    # the offset is a real term near s = 0, reported apart from the modes
    assert any(abs(r["amplitude"] - 0.25) < 1e-6 for r in est.details["real_terms"])


def test_heavy_oversampling_is_decimated_and_poles_preserved():
    t, y, poles, _ = make_decay([(5.0, 0.05, 1.0, 0.2)], fs=5000.0, n=4000)
    est = matrix_pencil(t, y)
    q = est.details["decimation_factor"]
    # 1000 samples per period → at most about 67 (15 per period) after decimation; the
    # abrupt start's broad spectrum keeps it lower (common practice, no source)
    assert 5 <= q <= 67
    assert est.details["sample_time_s"] == pytest.approx(q / 5000.0)


def test_block_decimation_gain_is_exact_on_a_damped_exponential():
    # the mean of q samples of e^(st) centred at t_c is G(s)·e^(s t_c) with
    # G(s) = (1/q) Σ exp(s (j − (q−1)/2) Ts) [derived]
    ts, q = 0.001, 7
    s = complex(-3.0, 2 * math.pi * 20)
    t = np.arange(700) * ts
    y = np.exp(s * t)
    td, yd = block_decimate(t, y.real, q)
    expect = (block_gain(s, q, ts) * np.exp(s * td)).real
    assert np.max(np.abs(yd - expect)) < 1e-12
    assert td.size == 100 and td[0] == pytest.approx(3 * ts)


def test_choose_decimation_keeps_fifteen_samples_per_period():
    t, y, _, _ = make_decay([(10.0, 0.01, 1.0, 0.0)], fs=3000.0, n=6000, noise_std=1e-3)
    q, fastest = choose_decimation(y, 1 / 3000.0)
    assert 10.0 <= fastest <= 40.0  # the mode, or the 99 % power frequency just above it
    assert 3000.0 / q / fastest >= 15.0


def _prominent_peak_by_full_scans(lp, height, prominence, max_checks=200):
    # the definition written plainly: each side scanned whole for the first higher sample
    inner = lp[1:-1]
    cand = np.flatnonzero((inner > lp[:-2]) & (inner >= lp[2:]) & (inner > height)) + 1
    for k in cand[::-1][:max_checks]:
        right = [j for j in range(k + 1, lp.size) if lp[j] > lp[k]]
        left = [j for j in range(k) if lp[j] > lp[k]]
        right_end = right[0] if right else lp.size
        left_start = left[-1] if left else 0
        right_base = lp[k:right_end + 1].min() if right_end > k else lp[k]
        if lp[k] - max(lp[left_start:k + 1].min(), right_base) >= prominence:
            return int(k)
    return None


@pytest.mark.parametrize("seed", range(6))
def test_prominent_peak_search_in_growing_windows_equals_whole_scans(seed):
    # derived: the windowed search for the nearest higher sample must pick the same peak
    # as scanning each side whole (spectra of decays with sidelobes, and plain noise)
    from identify.decay._pencil import _fastest_prominent_peak

    rng = np.random.default_rng(seed)
    if seed % 2:
        lp = rng.standard_normal(3000)
    else:
        t, y, _, _ = make_decay([(30.0 + 10 * seed, 0.002, 1.0, 0.0), (200.0, 0.01, 0.3, 1.0)], fs=2000.0, n=6000,
                                snr_db=40.0, seed=seed)
        lp = np.log10(np.abs(np.fft.rfft(y)) ** 2 + 1e-300)
    for height in (np.median(lp), np.median(lp) + 1.0):
        for prominence in (0.5, 1.5, 3.0):
            assert _fastest_prominent_peak(lp, height, prominence) == \
                _prominent_peak_by_full_scans(lp, height, prominence)


def test_order_scan_and_details_for_a_stability_plot():
    t, y, _, _ = make_decay([(10.0, 0.02, 1.0, 0.4), (23.0, 0.01, 0.5, 0.0)], fs=200.0, n=800,
                            snr_db=40, seed=2)
    est = matrix_pencil(t, y)
    scan = est.details["order_scan"]
    orders = [e["order"] for e in scan]
    assert orders == sorted(orders) and est.details["order"] in orders
    for entry in scan:
        assert all(len(p) == 2 and p[1] >= 0 for p in entry["poles"])
    # both modes reappear at every order from the chosen one up (stable poles)
    assert all(k == est.details["orders_scanned_from_chosen"] for k in est.details["stable_orders"])
    assert est.poles[0].ci.method == "delta"


@pytest.mark.parametrize("seed", range(5))
def test_noisy_single_mode_gives_one_pole_and_no_spurious_ones(seed):
    t, y, poles, s = make_decay([(8.0, 0.03, 1.0, 1.0)], fs=100.0, n=1000, snr_db=20, seed=seed)
    est = matrix_pencil(t, y)
    assert len(est.poles) == 1
    p = est.poles[0]
    assert _rel(p.natural_frequency_hz, 8.0) < 0.005
    assert _rel(p.damping_ratio, 0.03) < 0.15


def test_close_modes_ratio_1_05_resolved():
    modes = [(20.0, 0.005, 1.0, 0.0), (21.0, 0.005, 0.8, 1.0)]  # ratio 1.05, beating
    t, y, _, _ = make_decay(modes, fs=300.0, n=3000, snr_db=40, seed=4)
    est = matrix_pencil(t, y)
    assert [round(p.natural_frequency_hz, 1) for p in est.poles] == [20.0, 21.0]


def test_given_order_is_used():
    t, y, _, _ = make_decay([(10.0, 0.02, 1.0, 0.4)], fs=200.0, n=600, snr_db=40)
    est = matrix_pencil(t, y, order=2)
    assert est.details["order"] == 2 and est.details["order_rule"] == "given"
    assert len(est.poles) == 1


def test_pure_noise_is_an_error_not_a_made_up_mode():
    rng = np.random.default_rng(7)
    t = np.arange(1000) / 100.0
    with pytest.raises(IdentificationError, match="no oscillation"):
        matrix_pencil(t, rng.standard_normal(1000))


def test_real_exponential_alone_is_no_oscillation():
    t = np.arange(500) / 100.0
    with pytest.raises(IdentificationError, match="no oscillation"):
        matrix_pencil(t, 2.0 * np.exp(-1.5 * t))


def test_bad_arguments_name_the_parameter():
    t = np.arange(100) / 10.0
    y = np.cos(t)
    with pytest.raises(ParameterValueError, match="must have the same length"):
        matrix_pencil(t, y[:-1])
    with pytest.raises(ParameterValueError, match="confidence"):
        matrix_pencil(t, y, confidence=95)
    with pytest.raises(ParameterTypeError, match="order"):
        matrix_pencil(t, y, order="many")
    y_nan = y.copy()
    y_nan[5] = np.nan
    with pytest.raises(ParameterValueError, match="non-finite"):
        matrix_pencil(t, y_nan)


def test_input_is_not_mutated():
    t, y, _, _ = make_decay([(10.0, 0.02, 1.0, 0.4)], fs=200.0, n=600, snr_db=30)
    y_copy = y.copy()
    matrix_pencil(t, y)
    assert np.array_equal(y, y_copy)


def test_growing_oscillation_is_said_not_made_into_a_decay():
    t = np.arange(800) / 100.0
    y = np.exp(0.3 * t) * np.cos(2 * np.pi * 4.0 * t) + 1e-3 * np.random.default_rng(3).standard_normal(800)
    with pytest.raises(IdentificationError, match="grows at 4 Hz"):
        matrix_pencil(t, y)
