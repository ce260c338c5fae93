"""Seeded Monte-Carlo check of the pole intervals' coverage (root perturbation, delta method)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import lfilter

from identify.arx import fit_arx

from _arx_synth import binary_input, plant

TRIALS = 400  # binomial sd of a 95 % coverage estimate: √(0.95·0.05/400) = 1.1 %


@pytest.mark.slow
def test_pole_intervals_cover_the_true_fn_and_damping_95_percent_of_the_time():
    # synthetic: one mode fn = 1 Hz, ζ = 0.1, ZOH-sampled at Ts = 0.05 s (na = nb = 2,
    # delay 1), random binary input, white equation error; 600 samples per trial
    ts = 0.05
    b, a, (true,) = plant([(1.0, 0.1)], [], ts)
    rng = np.random.default_rng(20261201)
    hits_fn = hits_zeta = 0
    for _ in range(TRIALS):
        u = binary_input(600, rng)
        e = rng.normal(0.0, 0.05, 600)
        y = lfilter(b, a, u) + lfilter([1.0], a, e)
        (pole,) = fit_arx(y, u, 2, 2, 1, ts, confidence=0.95).poles
        lo, hi = pole.ci.natural_frequency_hz
        hits_fn += lo <= true.natural_frequency_hz <= hi
        lo, hi = pole.ci.damping_ratio
        hits_zeta += lo <= true.damping_ratio <= hi
    coverage_fn = hits_fn / TRIALS
    coverage_zeta = hits_zeta / TRIALS
    assert 0.92 <= coverage_fn <= 0.98, coverage_fn
    assert 0.92 <= coverage_zeta <= 0.98, coverage_zeta
