"""Trend of damping over a rig's history: slope intervals, step changes, projected crossing."""
from __future__ import annotations

import json
import math
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest

from identify.history import CAUTIONS, StoredTest, analyse_trend, fit_line, step_change_test
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals

ORIGIN = datetime(2026, 1, 15, tzinfo=timezone.utc)
MONTH_DAYS = 30.44
FN_HZ = 12.0


def pole(fn_hz, zeta, sd_zeta, sd_fn_hz=0.02):
    """A pole whose ζ interval has standard error ``sd_zeta`` (Re s carries it; derived:
    ζ = -Re s/|s|, so sd(ζ) ≈ sd(Re s)/ωn for light damping)."""
    s = pole_from_frequency_damping(fn_hz, zeta)
    wn = abs(s)
    return pole_with_delta_intervals(s, np.diag([(sd_zeta * wn) ** 2, (sd_fn_hz * 2 * math.pi) ** 2]), 0.95)


def rig_series(rng, *, slope_per_day=-5e-5, zeta0=0.030, n=12, step=None, between_sd=0.001,
               tags=None, jitter_days=3.0):
    """Monthly bump tests of one mode (12 Hz): ζ(t) = ζ0 + slope·t (+ a step), each test's
    estimate scattered by its own standard error (0.0006–0.0012, as a decay fit gives) and by
    between-test scatter (temperature, amplitude: ``between_sd``)."""
    tests = []
    for i in range(n):
        day = i * MONTH_DAYS + rng.uniform(-jitter_days, jitter_days) * (i > 0)
        true = zeta0 + slope_per_day * day + (step[1] if step and i >= step[0] else 0.0)
        se = rng.uniform(0.0006, 0.0012)
        zeta = true + rng.normal(0.0, se) + rng.normal(0.0, between_sd)
        f = FN_HZ + rng.normal(0.0, 0.02)
        when = (ORIGIN + timedelta(days=day)).isoformat(timespec="seconds")
        tests.append(StoredTest(i + 1, "demo rig", when, "given (--when)", f"bump{i:02d}.csv",
                                f"{i:064x}", "decay", (pole(f, zeta, se),),
                                tags=dict(tags or {})))
    return tests


def is_flagged(mode):
    warning_levels = {"growing", "at or below the threshold", "approaching the threshold", "declining"}
    return mode.level in warning_levels or mode.step_change["detected"]


def test_declining_rig_slope_and_crossing_contain_the_truth():
    slope, zeta0, threshold = -5e-5, 0.030, 0.01
    trend = analyse_trend(rig_series(np.random.default_rng(2026), slope_per_day=slope, zeta0=zeta0),
                          rig="demo rig", threshold_damping=threshold)
    (mode,) = trend.modes
    assert mode.natural_frequency_hz == pytest.approx(FN_HZ, abs=0.02)
    lo, hi = mode.damping_fit.slope_ci
    assert lo <= slope <= hi and hi < 0
    # true crossing: ζ0 + b·t = 0.01 → t = (0.030 - 0.01)/5e-5 = 400 days after the origin [derived]
    true_days = (zeta0 - threshold) / -slope
    crossing = mode.threshold_crossing
    assert crossing["label"] == "indicative"
    assert crossing["days_ci"][0] <= true_days <= crossing["days_ci"][1]
    true_date = (ORIGIN + timedelta(days=true_days)).date().isoformat()
    assert crossing["ci"][0] <= true_date <= crossing["ci"][1]
    assert crossing["days_ci"][0] < crossing["days"] < crossing["days_ci"][1]
    # the last test is near day 335: the crossing is within a year, so "approaching"
    assert mode.level == "approaching the threshold"
    assert not mode.step_change["detected"]
    # σ = ζ·ωn declines too; fn has no trend
    s_lo, s_hi = mode.decay_rate_fit.slope_ci
    assert s_lo <= slope * 2 * math.pi * FN_HZ <= s_hi
    f_lo, f_hi = mode.frequency_fit.slope_ci
    assert f_lo <= 0.0 <= f_hi


def test_slope_and_crossing_intervals_cover_at_nominal_level():
    # seeded Monte Carlo of the weighted line alone (the same fit analyse_trend uses)
    rng = np.random.default_rng(11)
    days = np.arange(12) * MONTH_DAYS
    slope, zeta0, threshold = -5e-5, 0.030, 0.01
    true_days = (zeta0 - threshold) / -slope
    n, hits, crossing_hits, crossings = 600, 0, 0, 0
    for _ in range(n):
        se = rng.uniform(0.0006, 0.0012, days.size)
        y = zeta0 + slope * days + rng.normal(0, se) + rng.normal(0, 0.001, days.size)
        fit = fit_line(days, y, se, confidence=0.95)
        lo, hi = fit.slope_ci
        hits += lo <= slope <= hi
        found = fit.crossing(threshold)
        if found is not None:
            crossings += 1
            crossing_hits += found[1][0] <= true_days <= found[1][1]
    assert 0.92 <= hits / n <= 0.98
    assert crossings == n  # the decline is clear in every draw
    assert 0.92 <= crossing_hits / crossings <= 0.98


def test_steady_rig_is_not_flagged_in_95_percent_of_trials():
    flagged = 0
    for k in range(100):
        trend = analyse_trend(rig_series(np.random.default_rng(5000 + k), slope_per_day=0.0),
                              rig="steady rig", seed=k)
        (mode,) = trend.modes
        flagged += is_flagged(mode)
    assert flagged <= 5


def test_one_step_change_is_flagged():
    # damping drops by 0.012 (0.030 -> 0.018, e.g. a loosened joint) between tests 7 and 8,
    # no slow trend; about 9 times the test-to-test scatter.  Measured power of the sup-F test
    # at this scatter: 72 % for a 0.008 drop, 92 % for 0.010, 100 % for 0.012 (50 seeds each).
    detected = 0
    for k in range(20):
        trend = analyse_trend(rig_series(np.random.default_rng(700 + k), slope_per_day=0.0,
                                         step=(7, -0.012)), seed=k)
        (mode,) = trend.modes
        step = mode.step_change
        assert step["tested"] and step["index"] == 7  # the largest F is at the true split
        assert step["between"] == [mode.test_times[6][:10], mode.test_times[7][:10]]
        assert step["size_ci"][0] <= -0.012 <= step["size_ci"][1]
        detected += step["detected"]
        assert step["detected"] == (step["p_value"] < 0.01)
        assert is_flagged(mode)  # flagged either as a step or as a decline
    assert detected >= 18


def test_step_test_is_seeded_and_needs_enough_tests():
    days = np.arange(12) * 30.0
    y = np.r_[np.full(6, 0.03), np.full(6, 0.029)] + np.random.default_rng(3).normal(0, 0.001, 12)
    w = np.full(12, 1e6)
    a = step_change_test(days, y, w, seed=4)
    b = step_change_test(days, y, w, seed=4)
    assert a == b and a["tested"]
    short = step_change_test(days[:5], y[:5], w[:5])
    assert not short["tested"] and "needs at least 6 tests" in short["reason"]


def test_fit_line_matches_ordinary_least_squares_when_errors_are_equal_and_small():
    # with equal s_i and Q > n-2 the Paule–Mandel weights are equal: the line is the
    # ordinary least-squares line (numpy.polyfit as reference library)
    rng = np.random.default_rng(8)
    days = np.arange(10) * 20.0
    y = 0.02 - 1e-5 * days + rng.normal(0, 0.001, 10)
    fit = fit_line(days, y, np.full(10, 1e-6))
    slope, intercept = np.polyfit(days, y, 1)
    assert fit.slope_per_day == pytest.approx(slope, rel=1e-8)
    assert fit.intercept == pytest.approx(intercept, rel=1e-8)
    # the slope's standard error is then the OLS one: s/sqrt(Sxx) [derived]
    resid = y - (intercept + slope * days)
    se = math.sqrt(resid @ resid / 8 / np.sum((days - days.mean()) ** 2))
    assert math.sqrt(fit.covariance[1][1]) == pytest.approx(se, rel=1e-4)
    assert fit.between_test_sd == pytest.approx(math.sqrt(resid @ resid / 8), rel=1e-4)


def test_no_between_test_scatter_when_intervals_explain_the_spread():
    rng = np.random.default_rng(9)
    days = np.arange(12) * 30.0
    se = np.full(12, 0.002)
    y = 0.02 + rng.normal(0, 0.0005, 12)  # spread well inside the stated errors
    fit = fit_line(days, y, se)
    assert fit.between_test_sd == 0.0
    # unscaled weighted covariance: var(slope) = 1/Σw(t - t̄)² with w = 1/s² [derived]
    assert fit.covariance[1][1] == pytest.approx(1.0 / np.sum((days - days.mean()) ** 2 / 0.002 ** 2))


def test_levels_in_plain_words():
    rng = np.random.default_rng(1)
    below = rig_series(rng, slope_per_day=-8e-5, zeta0=0.030)  # ends near ζ = 0.003
    (m,) = analyse_trend(below, threshold_damping=0.01).modes
    assert m.level == "at or below the threshold" and m.threshold_crossing is None

    slow = rig_series(np.random.default_rng(2), slope_per_day=-2e-5, zeta0=0.05, between_sd=0.0003)
    (m,) = analyse_trend(slow, threshold_damping=0.01).modes
    assert m.level == "declining"  # crossing projected ~2000 days out: beyond the 1-year horizon
    assert m.threshold_crossing["days_after_last_test"] > 365

    rising = rig_series(np.random.default_rng(3), slope_per_day=+4e-5, zeta0=0.02)
    (m,) = analyse_trend(rising).modes
    assert m.level == "increasing" and m.threshold_crossing is None

    few = rig_series(np.random.default_rng(4), n=2)
    (m,) = analyse_trend(few).modes
    assert m.level == "too few tests" and m.damping_fit is None

    growing = list(rig_series(np.random.default_rng(5), n=4))
    s = complex(+0.5, 2 * math.pi * FN_HZ)  # Re s > 0 with a tight interval
    last = growing[-1]
    growing[-1] = StoredTest(last.id, last.rig, last.test_time, last.time_source, last.source,
                             last.sha256, last.job, (pole_with_delta_intervals(s, np.diag([0.01, 0.01]), 0.95),))
    (m,) = analyse_trend(growing).modes
    assert m.level == "growing" and m.latest_verdict == "growing"


def test_json_shape_cautions_and_wording():
    trend = analyse_trend(rig_series(np.random.default_rng(2026)), rig="demo rig")
    data = json.loads(json.dumps(trend.to_dict(), allow_nan=False))
    (mode,) = data["modes"]
    assert mode["natural_frequency_hz"] == pytest.approx(FN_HZ, abs=0.02)
    slope = mode["damping_ratio_slope_per_day"]
    assert slope["ci"][0] <= slope["value"] <= slope["ci"][1] and slope["level"] == 0.95
    assert mode["level"] in ("steady", "declining", "approaching the threshold",
                             "at or below the threshold", "growing", "increasing", "too few tests")
    assert set(mode["threshold_crossing"]) >= {"date", "ci", "label"}
    assert len(mode["points"]) == 12
    assert data["cautions"] == list(CAUTIONS)
    text = json.dumps(data).lower()
    assert "indicative" in text and "compare like with like" in text
    for word in ("safe", "cleared", "stable"):
        assert word not in text
    steady = analyse_trend(rig_series(np.random.default_rng(5001), slope_per_day=0.0)).to_dict()
    assert steady["modes"][0]["threshold_crossing"] is None


def test_tag_filter_and_mixed_tag_warning():
    warm = rig_series(np.random.default_rng(6), tags={"temperature": "20C"})
    cold = [StoredTest(t.id + 100, t.rig, t.test_time, t.time_source, t.source, f"{t.id + 100:064x}",
                       t.job, (pole(FN_HZ, t.poles[0].damping_ratio + 0.01, 0.001),),
                       tags={"temperature": "5C"}) for t in warm]
    mixed = analyse_trend(warm + cold)
    assert any(w.startswith("mixed tags: tests differ in temperature (20C, 5C)") for w in mixed.warnings)
    only_warm = analyse_trend(warm + cold, tags={"temperature": "20C"})
    assert only_warm.n_tests == 12 and not any(w.startswith("mixed tags") for w in only_warm.warnings)
    assert only_warm.modes[0].test_ids == tuple(t.id for t in warm)
    none = analyse_trend(warm, tags={"temperature": "40C"})
    assert none.modes == () and none.warnings[0].startswith("no tests:")


def test_file_dates_are_warned_about():
    tests = rig_series(np.random.default_rng(7), n=4)
    t = tests[0]
    tests[0] = StoredTest(t.id, t.rig, t.test_time, "file modification time", t.source, t.sha256,
                          t.job, t.poles)
    trend = analyse_trend(tests)
    assert any(w.startswith("file dates: 1 test time(s)") for w in trend.warnings)


def test_tests_on_one_date_give_no_trend_and_say_why():
    tests = rig_series(np.random.default_rng(10), n=5)
    same = [StoredTest(t.id, t.rig, tests[0].test_time, "file modification time", t.source, t.sha256,
                       t.job, t.poles) for t in tests]
    trend = analyse_trend(same)
    (mode,) = trend.modes
    assert mode.level == "too few tests" and mode.damping_fit is None
    assert any(w.startswith("same dates: mode 1 has 5 tests on only 1 distinct date(s)") for w in trend.warnings)


def test_real_poles_are_trended_by_decay_rate_only():
    rng = np.random.default_rng(13)
    tests = []
    for i in range(5):
        sigma = 0.5 - 0.004 * i + rng.normal(0, 0.0005)  # a first-order lag slowly slowing down
        p = pole_with_delta_intervals(complex(-sigma, 0.0), [[0.0005 ** 2]], 0.95)
        tests.append(StoredTest(i + 1, "loop", (ORIGIN + timedelta(days=30 * i)).isoformat(), "given",
                                f"s{i}.csv", f"{i:064x}", "step", (p,)))
    (mode,) = analyse_trend(tests).modes
    assert not mode.oscillatory and mode.level == "real pole" and mode.damping_fit is None
    lo, hi = mode.decay_rate_fit.slope_ci
    assert lo <= -0.004 / 30 <= hi < 0
    assert mode.to_dict()["threshold_crossing"] is None


def test_sporadic_modes_are_kept_but_not_principal():
    rng = np.random.default_rng(14)
    tests = list(rig_series(rng))
    for k in (3, 8):  # a spurious 40 Hz pole in two tests only
        t = tests[k]
        tests[k] = StoredTest(t.id, t.rig, t.test_time, t.time_source, t.source, t.sha256, t.job,
                              t.poles + (pole(40.0, 0.08, 0.01),))
    trend = analyse_trend(tests)
    assert [m.mode for m in trend.modes] == ["mode 1", "mode 2"]
    assert [m.mode for m in trend.principal_modes] == ["mode 1"]
    data = trend.to_dict()
    assert [m["principal"] for m in data["modes"]] == [True, False]
    assert any(e.startswith("appeared: mode 2 (about 40 Hz)") for e in trend.events)


def test_demo_rig_truth_values_give_the_true_slope_and_crossing():
    # the demo rig's written damping ratios and dates (datasets/truth.json, written by
    # datasets/make_datasets.py); per-test standard error 1e-4, about what the decay job
    # reports on these records.  Truth: slope -3.6e-5 per day, crossing 2026-07-24 [derived
    # there from the generating line].
    import pathlib

    truth_file = pathlib.Path(__file__).resolve().parents[1] / "datasets" / "truth.json"
    truth = json.loads(truth_file.read_text())["history"]["fulmar"]
    tests = []
    for i, t in enumerate(truth["tests"]):
        poles = (pole(t["natural_frequency_hz"], t["damping_ratio"], 1e-4),
                 pole(t["mode2_natural_frequency_hz"], t["mode2_damping_ratio"], 1e-4, 0.05))
        tests.append(StoredTest(i + 1, "fulmar", t["date"] + "+00:00", "record metadata 'date'",
                                t["file"], f"{i:064x}", "decay", poles))
    trend = analyse_trend(tests, rig="fulmar", threshold_damping=truth["threshold_damping"])
    tracked, steady = trend.modes
    want = truth["tracked_mode"]
    lo, hi = tracked.damping_fit.slope_ci
    assert lo <= want["damping_ratio_slope_per_day"] <= hi < 0
    crossing = tracked.threshold_crossing
    assert crossing["ci"][0] <= want["threshold_crossing"]["date"] <= crossing["ci"][1]
    assert tracked.level == "approaching the threshold"
    assert steady.level == "steady" and not steady.step_change["detected"]
    assert steady.natural_frequency_hz == pytest.approx(truth["steady_mode"]["nominal_natural_frequency_hz"], abs=0.5)
