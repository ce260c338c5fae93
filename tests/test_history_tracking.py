"""Mode tracking across tests: matching by natural frequency and its interval, appear/disappear."""
from __future__ import annotations

import math

import numpy as np
import pytest

from identify.history import StoredTest, track_modes
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals


def pole(fn_hz, zeta=0.02, sd_fn_hz=0.01):
    s = pole_from_frequency_damping(fn_hz, zeta)
    sd_im = sd_fn_hz * 2 * math.pi
    return pole_with_delta_intervals(s, np.diag([(0.1 * sd_im) ** 2, sd_im ** 2]), 0.95)


def test_(i, poles, tags=None):
    return StoredTest(i, "rig", f"2026-{i:02d}-01T00:00:00+00:00", "given", f"t{i}.csv", f"{i:064x}",
                      "decay", tuple(poles), tags=tags or {})


test_.__test__ = False  # a helper, not a test


def test_two_drifting_modes_are_followed():
    # 5 Hz drifts down 0.3 % per test, 12 Hz drifts up: both stay one mode each
    tests = [test_(i, [pole(12.0 * (1 + 0.003 * i)), pole(5.0 * (1 - 0.003 * i))]) for i in range(1, 9)]
    tracking = track_modes(tests)
    assert [m.mode for m in tracking.modes] == ["mode 1", "mode 2"]
    low, high = tracking.modes
    assert [o.test_id for o in low.observations] == list(range(1, 9))
    assert all(o.pole.natural_frequency_hz < 6 for o in low.observations)
    assert all(o.pole.natural_frequency_hz > 11 for o in high.observations)
    assert low.natural_frequency_hz == pytest.approx(5.0 * (1 - 0.003 * 4.5), rel=1e-3)
    assert tracking.events == ()


def test_appearing_missing_and_disappearing_modes_are_reported():
    tests = []
    for i in range(1, 8):
        poles = [pole(8.0)]
        if i >= 3:
            poles.append(pole(20.0))  # appears in test 3
        if i <= 4 and i != 2:
            poles.append(pole(33.0))  # missing in test 2, gone after test 4
        tests.append(test_(i, poles))
    tracking = track_modes(tests)
    by_f = {round(m.natural_frequency_hz): m for m in tracking.modes}
    assert by_f[20].appeared_in == 3 and by_f[20].disappeared_after is None
    assert by_f[33].missing_test_ids == (2,) and by_f[33].disappeared_after == 4
    assert by_f[8].appeared_in is None and by_f[8].missing_test_ids == ()
    text = " | ".join(tracking.events)
    assert "appeared: mode 2 (about 20 Hz) first seen in test #3" in text
    assert "missing: mode 3 (about 33 Hz) not found in test(s) #2" in text
    assert "disappeared: mode 3 (about 33 Hz) last seen in test #4" in text and "3 later test(s)" in text


def test_close_modes_are_not_merged():
    # 10.0 and 10.3 Hz, both well determined: two modes even though they differ by 3 %
    tests = [test_(i, [pole(10.0, sd_fn_hz=0.005), pole(10.3, sd_fn_hz=0.005)]) for i in range(1, 6)]
    tracking = track_modes(tests, frequency_tolerance=0.02)
    assert len(tracking.modes) == 2
    for m in tracking.modes:
        f = [o.pole.natural_frequency_hz for o in m.observations]
        assert max(f) - min(f) < 1e-9


def test_interval_width_decides_the_match():
    # a 4 % jump: with tight intervals it is a new mode, with wide ones the same mode
    tight = [test_(1, [pole(10.0, sd_fn_hz=0.01)]), test_(2, [pole(10.4, sd_fn_hz=0.01)])]
    wide = [test_(1, [pole(10.0, sd_fn_hz=0.15)]), test_(2, [pole(10.4, sd_fn_hz=0.15)])]
    # gate = hw1 + hw2 + 0.02*10.4: tight 0.039 + 0.208 < 0.4; wide 0.588 + 0.208 > 0.4 [derived]
    assert len(track_modes(tight).modes) == 2
    assert len(track_modes(wide).modes) == 1


def test_real_poles_never_join_oscillatory_modes():
    real = pole_with_delta_intervals(complex(-2 * math.pi * 10.0, 0.0), [[0.01]], 0.95)
    tests = [test_(1, [pole(10.0)]), test_(2, [real]), test_(3, [pole(10.0)])]
    tracking = track_modes(tests)
    assert len(tracking.modes) == 2
    osc = [m for m in tracking.modes if m.oscillatory][0]
    assert osc.missing_test_ids == (2,)


def test_tests_are_taken_in_time_order():
    tests = [test_(3, [pole(10.2)]), test_(1, [pole(10.0)]), test_(2, [pole(10.1)])]
    (mode,) = track_modes(tests).modes
    assert [o.test_id for o in mode.observations] == [1, 2, 3]
    assert track_modes(tests).to_dict()["modes"][0]["n_tests"] == 3


def test_matching_agrees_with_scipy_assignment():
    # scipy.optimize.linear_sum_assignment as reference library, on gated random costs
    from scipy.optimize import linear_sum_assignment

    from identify.history._tracking import _min_cost_matching

    rng = np.random.default_rng(12)
    big = 1e6
    for _ in range(200):
        r, c = rng.integers(1, 6, 2)
        cost = rng.uniform(0, 1, (r, c))
        cost[rng.uniform(size=(r, c)) < 0.4] = big
        rows, cols = linear_sum_assignment(cost)
        want = sum(cost[i, j] if cost[i, j] < big else big for i, j in zip(rows, cols)) + big * (r - len(rows))
        pairs = _min_cost_matching(cost, big)
        got = sum(cost[i, j] for i, j in pairs) + big * (r - len(pairs))
        assert got == pytest.approx(want)
        assert len({j for _, j in pairs}) == len(pairs)
