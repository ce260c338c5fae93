"""The damping-trend plot draws the measured points, the trend line, its band, the threshold
and the projected crossing, with labels that carry units."""
from __future__ import annotations

import importlib
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest

from identify.history import StoredTest, analyse_trend
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals

plot_module = importlib.import_module("identify.plots._trend")  # works with or without plots/__init__

ORIGIN = datetime(2026, 1, 15, tzinfo=timezone.utc)


def series(rng, slope=-5e-5, step=None, n=12):
    tests = []
    for i in range(n):
        day = i * 30.44
        zeta = 0.03 + slope * day + (step[1] if step and i >= step[0] else 0) + rng.normal(0, 0.0012)
        s = pole_from_frequency_damping(12.0, zeta)
        p = pole_with_delta_intervals(s, np.diag([(0.0008 * abs(s)) ** 2, 0.01]), 0.95)
        tests.append(StoredTest(i + 1, "demo rig", (ORIGIN + timedelta(days=day)).isoformat(), "given",
                                f"b{i}.csv", f"{i:064x}", "decay", (p,)))
    return tests


def dates_to_num(values):
    import matplotlib.dates as mdates

    return mdates.date2num(values)


def test_declining_trend_plot_shows_points_line_band_threshold_and_crossing():
    from matplotlib.collections import PolyCollection
    from matplotlib.figure import Figure

    trend = analyse_trend(series(np.random.default_rng(2026)), rig="demo rig", threshold_damping=0.01)
    (mode,) = trend.modes
    fig = plot_module.plot_damping_trend(trend)
    assert isinstance(fig, Figure)
    (ax,) = fig.axes
    assert ax.get_ylabel() == "damping ratio ζ (–)"
    assert ax.get_xlabel() == "test date (UTC)"
    assert "demo rig" in ax.get_title() and "Hz" in ax.get_title() and mode.level in ax.get_title()

    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any(l.startswith("measured ζ, 95 % interval") for l in labels)
    assert any(l.startswith("weighted trend") and "per year" in l for l in labels)
    assert "95 % interval of the trend line" in labels
    assert "threshold ζ = 0.01" in labels
    crossing_label = [l for l in labels if l.startswith("projected crossing")]
    assert crossing_label and "indicative" in crossing_label[0]
    assert mode.threshold_crossing["date"] in crossing_label[0]

    # measured points: 12 markers at the stored ζ, with error bars spanning each interval
    points = [l for l in ax.lines if l.get_marker() == "o"]
    assert len(points) == 1
    np.testing.assert_allclose(points[0].get_ydata(), mode.damping_ratio)
    bars = [c for c in ax.collections if type(c).__name__ == "LineCollection"]
    segs = [s for c in bars for s in c.get_segments()]
    assert len(segs) == 12
    for seg, ci in zip(segs, mode.damping_ratio_ci):
        assert sorted(seg[:, 1]) == pytest.approx(sorted(ci))

    # trend line: follows the fitted line and runs past the last test to the crossing interval
    (line,) = [l for l in ax.lines if l.get_label().startswith("weighted trend")]
    x = np.asarray(dates_to_num(line.get_xdata()), dtype=float)
    days = x - dates_to_num(ORIGIN)
    np.testing.assert_allclose(line.get_ydata(), mode.damping_fit.intercept + mode.damping_fit.slope_per_day * days,
                               rtol=1e-9, atol=1e-12)
    assert days[-1] == pytest.approx(mode.threshold_crossing["days_ci"][1], rel=1e-6)

    # band: a filled polygon around the line, containing it
    bands = [c for c in ax.collections if isinstance(c, PolyCollection)
             and c.get_label() == "95 % interval of the trend line"]
    assert len(bands) == 1
    verts = bands[0].get_paths()[0].vertices
    assert verts[:, 1].min() < min(line.get_ydata()) and verts[:, 1].max() > max(line.get_ydata())

    # threshold: horizontal line at 0.01
    (thr,) = [l for l in ax.lines if l.get_label() == "threshold ζ = 0.01"]
    assert set(np.asarray(thr.get_ydata(), dtype=float)) == {0.01}

    # crossing interval: a shaded span between the interval dates
    spans = [p for p in ax.patches if p.get_label().startswith("projected crossing")]
    assert len(spans) == 1
    bbox = spans[0].get_bbox()  # x in data units (days as matplotlib date numbers)
    xs = [bbox.x0, bbox.x1]
    lo, hi = (dates_to_num(ORIGIN + timedelta(days=d)) for d in mode.threshold_crossing["days_ci"])
    assert min(xs) == pytest.approx(lo) and max(xs) == pytest.approx(hi)
    assert "extrapolation indicative only" in ax.get_title()


def test_step_change_is_drawn_and_steady_trend_has_no_crossing():
    trend = analyse_trend(series(np.random.default_rng(701), slope=0.0, step=(6, -0.012)), rig="r")
    (mode,) = trend.modes
    assert mode.step_change["detected"]
    fig = plot_module.plot_damping_trend(trend)
    (ax,) = fig.axes
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    step_labels = [l for l in labels if l.startswith("step change")]
    assert step_labels and "p = " in step_labels[0]
    (vline,) = [l for l in ax.lines if l.get_label().startswith("step change")]
    x = dates_to_num(vline.get_xdata()[0])
    t5, t6 = (dates_to_num(datetime.fromisoformat(mode.test_times[i])) for i in (5, 6))
    assert x == pytest.approx(0.5 * (t5 + t6))

    steady = analyse_trend(series(np.random.default_rng(5), slope=0.0), rig="r")
    assert steady.modes[0].threshold_crossing is None
    (ax,) = plot_module.plot_damping_trend(steady).axes
    assert not [p for p in ax.patches if p.get_label().startswith("projected crossing")]


def test_one_panel_per_mode_and_an_empty_trend():
    tests = series(np.random.default_rng(3))
    two = [StoredTest(t.id, t.rig, t.test_time, t.time_source, t.source, t.sha256, t.job,
                      t.poles + (pole_with_delta_intervals(pole_from_frequency_damping(30.0, 0.02),
                                                           np.diag([0.01, 0.01]), 0.95),))
           for t in tests]
    fig = plot_module.plot_damping_trend(analyse_trend(two, rig="r"))
    assert len(fig.axes) == 2
    assert [ax.get_title().split(",")[0] for ax in fig.axes] == ["r: mode 1", "r: mode 2"]
    empty = plot_module.plot_damping_trend(analyse_trend(tests, tags={"x": "y"}))
    assert empty.axes[0].texts[0].get_text() == "no oscillatory mode to plot"
    assert empty.axes[0].get_ylabel() == "damping ratio ζ (–)"
