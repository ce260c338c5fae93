"""Step-test process models: closed forms and the simulator against scipy.signal."""
import math

import numpy as np
import pytest
from scipy import signal

from identify.step import step_response, unit_response
from identify.step._models import poles_of, simulate

CASES = [
    ("first-order", (2.0,), ([1.0], [2.0, 1.0])),
    ("two-lag", (2.0, 0.5), ([1.0], np.polymul([2.0, 1.0], [0.5, 1.0]))),
    ("two-lag", (1.0, 1.0), ([1.0], np.polymul([1.0, 1.0], [1.0, 1.0]))),
    ("underdamped", (3.0, 0.3), ([9.0], [1.0, 1.8, 9.0])),
    ("integrating", (), ([1.0], [1.0, 0.0])),
]


@pytest.mark.parametrize("structure, shape, tf", CASES)
def test_step_response_matches_scipy_step(structure, shape, tf):
    # reference: scipy.signal.step of the same transfer function
    t = np.linspace(0.0, 12.0, 601)
    _, ref = signal.step(tf, T=t)
    assert np.allclose(step_response(structure, shape, t), ref, atol=1e-9)


@pytest.mark.parametrize("structure, shape, tf", CASES)
@pytest.mark.parametrize("theta", [0.0, 0.37, 1.0, 2.55])
def test_unit_response_equals_lsim_of_delayed_held_input(structure, shape, tf, theta):
    # reference: scipy.signal.lsim with interp=False (zero-order hold) on a grid 20x finer,
    # input delayed by theta (theta is a whole number of fine samples)
    rng = np.random.default_rng(7)
    ts, n, up = 0.1, 200, 20
    u = np.zeros(n)
    u[30:] = 1.0
    u[120:] = -0.4
    u = u + rng.normal(0.0, 0.01, n)  # a noisy input exercises the convolution path
    y = unit_response(structure, shape, theta, u, ts)
    tf_grid = np.arange(n * up) * ts / up
    idx = np.floor((tf_grid - theta) / ts + 1e-9).astype(int)
    u_delayed = np.where(idx >= 0, u[np.clip(idx, 0, n - 1)], 0.0)
    _, ref, _ = signal.lsim(tf, u_delayed, tf_grid, interp=False)
    assert np.max(np.abs(ref[::up] - y)) < 1e-6 * max(1.0, np.max(np.abs(ref)))


def test_clean_step_path_equals_convolution_path():
    ts, n = 0.05, 300
    u = np.where(np.arange(n) >= 40, 2.0, 0.0)
    clean = unit_response("two-lag", (1.0, 0.3), 0.42, u, ts)
    noisy = unit_response("two-lag", (1.0, 0.3), 0.42, u + 1e-12 * np.arange(n), ts)
    assert np.allclose(clean, noisy, atol=1e-9)


def test_fopdt_closed_form_with_dead_time():
    # y = K (1 - exp(-(t - t0 - theta)/tau)) after t0 + theta (derived, first order)
    ts, n = 0.1, 200
    u = np.where(np.arange(n) >= 20, 1.0, 0.0)
    y = simulate("first-order", {"offset": 3.0, "gain": -2.0, "dead_time_s": 0.73, "time_constant_s": 1.5},
                 u, ts)
    t = np.arange(n) * ts
    expect = 3.0 - 2.0 * np.where(t > 2.0 + 0.73, 1 - np.exp(-(t - 2.73) / 1.5), 0.0)
    assert np.allclose(y, expect, atol=1e-12)


def test_poles():
    assert poles_of("first-order", {"time_constant_s": 4.0}) == [complex(-0.25, 0)]
    p = poles_of("underdamped", {"natural_frequency_rad_per_s": 5.0, "damping_ratio": 0.6})[0]
    # s = -zeta wn + j wn sqrt(1 - zeta^2) = -3 + 4j (derived)
    assert p.real == pytest.approx(-3.0) and p.imag == pytest.approx(4.0)
    assert poles_of("two-lag", {"time_constant_1_s": 2.0, "time_constant_2_s": 0.5}) == [-0.5, -2.0]
    assert poles_of("integrating", {}) == [0j]
    assert math.isclose(abs(p), 5.0)
