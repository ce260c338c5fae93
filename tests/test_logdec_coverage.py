"""Seeded Monte-Carlo coverage of the logarithmic-decrement intervals (issue 3 acceptance)."""
import math

import numpy as np
import pytest

from identify.decay._logdec import log_decrement

TRIALS = 300


@pytest.mark.slow
def test_95_percent_intervals_cover_fn_and_zeta():
    # single mode, fn = 5 Hz, ζ = 0.02, 20 samples per period, 30 dB, DC offset, random
    # phase, record of 6 time constants; the truth is known, so count the covers
    rng = np.random.default_rng(20261202)
    fn, zeta, fs = 5.0, 0.02, 100.0
    wn = 2 * math.pi * fn
    sigma, wd = zeta * wn, wn * math.sqrt(1 - zeta ** 2)
    t = np.arange(int(6.0 / sigma * fs)) / fs
    s = 1.0 / math.sqrt(2.0) / 10 ** (30.0 / 20.0)
    cover_fn = cover_zeta = 0
    for _ in range(TRIALS):
        phase = rng.uniform(0.0, 2 * math.pi)
        x = 0.3 + np.exp(-sigma * t) * np.cos(wd * t + phase) + s * rng.standard_normal(t.size)
        ci = log_decrement(t, x, confidence=0.95).poles[0].ci
        cover_fn += ci.natural_frequency_hz[0] <= fn <= ci.natural_frequency_hz[1]
        cover_zeta += ci.damping_ratio[0] <= zeta <= ci.damping_ratio[1]
    assert 0.92 <= cover_fn / TRIALS <= 0.98, cover_fn / TRIALS
    assert 0.92 <= cover_zeta / TRIALS <= 0.98, cover_zeta / TRIALS
