"""Time-base checks and resampling (identify._timebase).

Rules under test: gap when an interval exceeds 1.5x the median (common practice, no
source); jitter up to 2 % of Ts resampled, above it an error (our documented choice).
"""
from __future__ import annotations

import numpy as np
import pytest

from identify import RecordError
from identify._timebase import GAP_FACTOR, JITTER_LIMIT, TimeBase, check_time_base, resample


def lines(row):  # pretend each data row sits 10 lines further down the file
    return row + 11


def test_uniform_stamps_kept():
    t = -0.25 + 0.005 * np.arange(500)
    base = check_time_base(t)
    assert not base.resampled and base.note() is None
    assert base.start_s == -0.25
    assert base.sample_time_s == pytest.approx(0.005, rel=1e-12)
    assert base.samples == 500


def test_print_rounding_is_not_jitter():
    t = np.round(np.arange(300) / 3000.0, 4)  # 3 kHz, 4 decimals (derived: <= 0.15 Ts off)
    base = check_time_base(t, resolution_s=1e-4)
    assert not base.resampled
    assert base.sample_time_s == pytest.approx(1 / 3000.0, rel=1e-4)
    with pytest.raises(RecordError, match="irregular"):
        check_time_base(t)  # without the resolution the same offsets are real jitter


def test_small_jitter_resampled_and_accurate():
    rng = np.random.default_rng(11)
    ts, f = 1e-3, 7.0
    t = ts * np.arange(2000) + rng.uniform(-0.01, 0.01, 2000) * ts  # 1 % jitter
    y = np.sin(2 * np.pi * f * t)
    base = check_time_base(t)
    assert base.resampled
    assert base.jitter_fraction <= 0.0105  # 1 % off the true grid, a little more off the fitted one
    assert "resampled" in base.note() and base.note().startswith("time base:")
    grid = base.grid_s
    assert grid[0] == t[0] and grid[-1] <= t[-1]
    yr = resample(t, y, base)
    # linear interpolation error <= h^2/8 * max|y''| with h <= 1.02 Ts (derived)
    bound = (1.02 * ts) ** 2 / 8 * (2 * np.pi * f) ** 2
    assert np.max(np.abs(yr - np.sin(2 * np.pi * f * grid))) <= bound


@pytest.mark.parametrize("offset, ok", [(0.019, True), (0.021, False)])
def test_jitter_limit_is_two_percent(offset, ok):
    t = np.arange(1000, dtype=float)
    t[500] += offset
    if ok:
        assert check_time_base(t).resampled
    else:
        with pytest.raises(RecordError, match=r"line 511 is 2\.\d+ % .*2 %"):
            check_time_base(t, line_of=lines)
    assert JITTER_LIMIT == 0.02


def test_gap_names_line_and_is_not_interpolated():
    t = np.r_[np.arange(10.0), np.arange(10.0) + 11.6]  # one interval of 2.6 Ts
    with pytest.raises(RecordError) as info:
        check_time_base(t, line_of=lines)
    message = info.value.message
    assert "gap" in message and "line 21" in message and "2.6 times" in message
    assert GAP_FACTOR == 1.5


def test_interval_below_gap_factor_is_irregular_not_gap():
    t = np.r_[np.arange(10.0), np.arange(10.0) + 10.4]  # 1.4 Ts: no gap, but off the grid
    with pytest.raises(RecordError) as info:
        check_time_base(t)
    assert "irregular" in info.value.message and "gap" not in info.value.message


def test_duplicate_and_backwards_name_lines():
    with pytest.raises(RecordError, match=r"duplicate time stamp 2 s at line 14 \(same as line 13\)"):
        check_time_base([0.0, 1.0, 2.0, 2.0, 3.0], line_of=lines)
    with pytest.raises(RecordError, match=r"backwards at line 13 \(1.5 s after 2 s on line 12\)"):
        check_time_base([0.0, 2.0, 1.5, 3.0], line_of=lines)


def test_non_finite_and_too_short():
    with pytest.raises(RecordError, match="non-finite stamp at line 12"):
        check_time_base([0.0, np.nan, 2.0], line_of=lines)
    with pytest.raises(RecordError, match="at least 2 samples"):
        check_time_base([1.0])


def test_source_attached():
    with pytest.raises(RecordError) as info:
        check_time_base([0.0, 0.0], source="a.csv")
    assert info.value.source == "a.csv"


def test_resample_straight_line_exact_and_input_untouched():
    t = np.array([0.0, 0.101, 0.199, 0.3, 0.4005, 0.5])
    y = 3.0 * t - 1.0
    t_copy, y_copy = t.copy(), y.copy()
    base = check_time_base(t)
    assert isinstance(base, TimeBase) and base.resampled
    out = resample(t, y, base)
    np.testing.assert_allclose(out, 3.0 * base.grid_s - 1.0, atol=1e-12)  # derived: linear
    np.testing.assert_array_equal(t, t_copy)
    np.testing.assert_array_equal(y, y_copy)


@pytest.mark.parametrize("n", [70_000, 200_003])
def test_block_wise_checks_equal_the_whole_array_formulas(n, monkeypatch):
    # derived: the checks run over blocks (here of 65,536 stamps, so that these records
    # span several); the least-squares grid, the jitter and the stamp that is worst must be
    # those of whole-array formulas, and the first bad stamp anywhere (here in a later
    # block) must be the one reported
    import identify._timebase as timebase

    monkeypatch.setattr(timebase, "BLOCK", 1 << 16)
    rng = np.random.default_rng(n)
    k = np.arange(n, dtype=float)
    t = 2.0 + 0.001 * k + 0.001 * 0.01 * rng.uniform(-1, 1, n)  # 1 % jitter: resampled
    worst_expected = n - 5
    t[worst_expected] = 2.0 + 0.001 * (worst_expected + 0.015)  # the largest deviation, last block
    slope, intercept = np.polyfit(k, t - t[0], 1)
    dev = np.abs(t - t[0] - (slope * k + intercept))
    base = check_time_base(t)
    assert base.resampled
    assert base.sample_time_s == pytest.approx(slope, rel=1e-11)
    assert base.jitter_fraction == pytest.approx(dev.max() / slope, rel=1e-6)
    assert int(np.argmax(dev)) == worst_expected
    t[worst_expected] += 0.001 * 0.01  # now beyond 2 %: the message names that stamp's line
    with pytest.raises(RecordError, match=f"line {lines(worst_expected)}"):
        check_time_base(t, line_of=lines)
    t[worst_expected] -= 0.001 * 0.01
    bad = t.copy()
    bad[n - 3] = bad[n - 4]  # a duplicate in the last block
    with pytest.raises(RecordError, match=f"duplicate time stamp .* line {lines(n - 3)}"):
        check_time_base(bad, line_of=lines)
    bad = t.copy()
    bad[66_000] = np.nan
    with pytest.raises(RecordError, match=f"non-finite stamp at line {lines(66_000)}"):
        check_time_base(bad, line_of=lines)
