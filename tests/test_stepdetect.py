"""Step detection on an input channel (issue 2 item 3)."""
import numpy as np
import pytest

from identify import IdentificationError
from identify.conditioning import StepEvent, detect_step


def _record(n, onset, size, snr_db, rng, ts=0.01, base=3.0, ramp=0):
    t = -0.5 + ts * np.arange(n)
    u = np.full(n, base)
    if ramp:
        u[onset:onset + ramp] = base + size * (np.arange(1, ramp + 1) / ramp)
        u[onset + ramp:] = base + size
    else:
        u[onset:] = base + size
    sigma = abs(size) / 10 ** (snr_db / 20.0)  # SNR = step size / noise std, in dB (common practice)
    return t, u + rng.normal(0.0, sigma, n)


def test_finds_step_within_two_samples_at_30_db():
    # issue 2 acceptance: onset within 2 samples at 30 dB SNR; seeded, onsets and signs varied
    rng = np.random.default_rng(20261201)
    misses = []
    for trial in range(60):
        n = int(rng.integers(200, 1200))
        onset = int(rng.integers(20, n - 40))
        size = float(rng.choice([-1, 1]) * rng.uniform(0.5, 20))
        t, u = _record(n, onset, size, 30.0, rng, ts=float(rng.choice([0.001, 0.01, 0.5])))
        ev = detect_step(t, u)
        if abs(ev.index - onset) > 2:
            misses.append((trial, ev.index, onset))
        assert ev.size == pytest.approx(size, rel=0.03)
        assert ev.clean
        assert ev.time_s == pytest.approx(t[ev.index])
    assert not misses


def test_levels_and_window():
    rng = np.random.default_rng(1)
    t, u = _record(400, 150, -4.0, 40.0, rng, base=50.0)
    ev = detect_step(t, u)
    assert isinstance(ev, StepEvent)
    assert ev.before_level == pytest.approx(50.0, abs=0.05)
    assert ev.after_level == pytest.approx(46.0, abs=0.05)
    assert ev.pre_window[0] == t[0] and ev.pre_window[1] < t[150]
    assert ev.stationary
    assert "150" in ev.explanation
    d = ev.to_dict()
    assert d["index"] == ev.index and d["clean"] is True


def test_ramp_is_not_a_clean_step():
    rng = np.random.default_rng(2)
    t, u = _record(500, 100, 5.0, 40.0, rng, ramp=20)
    ev = detect_step(t, u)
    assert not ev.clean
    # 10-90 % of a 20-sample linear ramp lasts 16 sample intervals (derived)
    assert ev.rise_duration_s == pytest.approx(16 * 0.01, abs=2 * 0.01)


def test_drifting_pre_window_is_not_stationary():
    rng = np.random.default_rng(3)
    t, u = _record(400, 200, 5.0, 40.0, rng)
    u = u + np.where(np.arange(400) < 200, 0.02 * np.arange(400), 4.0)  # drift before the step
    ev = detect_step(t, u)
    assert not ev.stationary
    assert ev.stationarity_statistic > 2.0


def test_step_time_override():
    t = np.arange(300) * 0.1
    u = np.where(t >= 12.0, 1.0, 0.0)
    ev = detect_step(t, u, step_time_s=12.0)
    assert ev.index == 120 and ev.time_s == pytest.approx(12.0)


@pytest.mark.parametrize("case, message", [
    ("constant", "no step in the input"),
    ("noise", "no step in the input"),
    ("end", "very end"),
    ("start", "very start"),
])
def test_bad_inputs_raise(case, message):
    rng = np.random.default_rng(4)
    t = np.arange(500) * 0.01
    if case == "constant":
        u = np.full(500, 2.0)
    elif case == "noise":
        u = rng.normal(0, 1, 500)
    elif case == "end":
        u = np.where(np.arange(500) >= 495, 1.0, 0.0)
    else:
        u = np.where(np.arange(500) >= 2, 1.0, 0.0)
    with pytest.raises(IdentificationError, match=message):
        detect_step(t, u)


def test_does_not_mutate_input():
    t = np.arange(100) * 0.1
    u = np.where(t >= 5, 1.0, 0.0)
    before = u.copy()
    detect_step(t, u)
    assert np.array_equal(u, before)


def test_settled_tail():
    from identify.conditioning._stepdetect import settled_tail

    t = np.arange(400) * 0.1
    rising = 1 - np.exp(-t / 5.0)   # at 40 s: 8 time constants, settled (derived)
    assert settled_tail(t, rising, change=1.0)[0]
    slow = 1 - np.exp(-t / 30.0)    # still rising at 40 s
    ok, drift = settled_tail(t, slow, change=1.0)
    assert not ok and drift > 0.02
