"""Clipping and coarse-quantisation warnings (identify._quality).

Thresholds are common practice, no source: flat runs of >= 3 samples at an extreme with a
pile-up there; <= 32 distinct levels with >= 4 samples per level.
"""
from __future__ import annotations

import numpy as np

from identify import Channel
from identify._quality import (MAX_LEVELS, MIN_RUN, channel_warnings, clipping_warning, quality_warnings,
                               quantisation_warning)

T = np.arange(2000) * 1e-3


def noisy_sine(seed=0, amplitude=3.0):
    rng = np.random.default_rng(seed)
    return amplitude * np.sin(2 * np.pi * 5 * T) + 0.05 * rng.standard_normal(T.size)


def test_clipped_sine_warns_both_rails():
    y = np.clip(noisy_sine(), -2.0, 2.5)
    text = clipping_warning(y, "acc")
    assert text.startswith("clipping: channel 'acc'")
    assert "maximum 2.5" in text and "minimum -2" in text and "saturated" in text


def test_one_sided_clipping():
    y = np.minimum(noisy_sine(1), 2.0)
    text = clipping_warning(y, "acc")
    assert "maximum 2" in text and "minimum" not in text


def test_clean_signals_do_not_warn():
    y = noisy_sine(2)
    assert clipping_warning(y, "acc") is None
    assert quantisation_warning(y, "acc") is None
    assert clipping_warning(np.sin(2 * np.pi * 5 * T), "s") is None


def test_quantised_plateau_is_not_clipping():
    # settled step response logged with a 0.01 resolution: noise spreads over neighbours
    rng = np.random.default_rng(3)
    y = 1.0 - np.exp(-T / 0.05) + 0.02 * rng.standard_normal(T.size)
    y = np.round(y, 2)
    assert clipping_warning(y, "pos") is None


def test_switched_input_is_quantised_not_clipped():
    u = np.where(T < 0.5, 35.0, 45.0)  # a step command held for most of the record
    assert clipping_warning(u, "cmd") is None
    text = quantisation_warning(u, "cmd")
    assert text.startswith("coarse quantisation: channel 'cmd' takes only 2 distinct values")
    assert "step 10 over a range of 10" in text and "switched input" in text


def test_coarse_print_resolution_warns():
    y = np.round(np.sin(2 * np.pi * 5 * T), 1)  # 21 levels from -1.0 to 1.0
    text = quantisation_warning(y, "v")
    assert "21 distinct values" in text and "step 0.1" in text
    assert quantisation_warning(np.round(np.sin(2 * np.pi * 5 * T), 4), "v") is None


def test_constant_channel():
    text = quantisation_warning(np.full(50, 2.5), "c")
    assert text.startswith("coarse quantisation:") and "constant value 2.5" in text
    assert clipping_warning(np.full(50, 2.5), "c") is None


def test_short_and_nan_inputs():
    assert quantisation_warning([1.0, 2.0, 1.0], "x") is None   # too short to judge
    assert clipping_warning([1.0, 1.0, 1.0, 0.0], "x") is None
    y = np.clip(noisy_sine(4), -2.0, 2.0)
    y[::10] = np.nan
    assert clipping_warning(y, "x") is not None


def test_levels_threshold_edges():
    levels = np.repeat(np.arange(MAX_LEVELS, dtype=float), 4)
    assert quantisation_warning(levels, "x") is not None
    more = np.repeat(np.arange(MAX_LEVELS + 1, dtype=float), 4)
    assert quantisation_warning(more, "x") is None
    assert MIN_RUN == 3


def test_large_channel_probe_is_quick_and_quiet():
    rng = np.random.default_rng(5)
    y = rng.standard_normal(1_000_000)
    assert quantisation_warning(y, "x") is None and clipping_warning(y, "x") is None


def test_inputs_not_mutated_and_record_helper():
    y = np.clip(noisy_sine(6), -2.0, 2.0)
    copy = y.copy()
    out = quality_warnings([Channel("a", "V", y), Channel("b", "", np.where(T < 1, 0.0, 1.0))])
    np.testing.assert_array_equal(y, copy)
    assert [w.split(":")[0] for w in out] == ["clipping", "coarse quantisation"]


def test_a_channel_is_checked_once(monkeypatch):
    # the record's checks at reading and a job's checks on the same channel share one pass
    # (the values are read-only); the answer is the same either way.  Common practice, no source.
    import identify._quality as quality

    ch = Channel("a", "V", np.clip(noisy_sine(7), -2.0, 2.0))
    calls = []
    real = quality.clipping_warning

    def counting(values, name="signal"):
        calls.append(name)
        return real(values, name)

    counting.__name__ = "clipping_warning"
    monkeypatch.setattr(quality, "clipping_warning", counting)
    first = quality_warnings([ch])
    again = channel_warnings(outputs=(ch,))
    as_input = channel_warnings(inputs=(ch,))
    assert first == again and as_input == first[:1] and first[0].startswith("clipping")
    assert calls == ["a"]
    other = Channel("a", "V", ch.values)  # a new channel is checked anew
    assert channel_warnings(outputs=(other,)) == first and calls == ["a", "a"]


def test_held_staircase_is_not_clipping_but_clean_clipped_sine_is():
    stairs = np.repeat([35.0, 40.0, 45.0, 50.0], [100, 100, 100, 1700])
    assert clipping_warning(stairs, "cmd") is None
    # noiseless periodic signal: only 25 distinct values, still clipped (derived)
    t = np.arange(400) * 1e-3
    clipped = np.clip(3.0 * np.sin(2 * np.pi * 10 * t), -2.0, 2.0)
    assert clipping_warning(clipped, "acc").startswith("clipping: channel 'acc'")
