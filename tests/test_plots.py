"""Plots: check what is drawn (lines, markers, boxes, labels with units), not only that a
figure exists."""
import numpy as np
import pytest

from identify._response import ModelResponse
from identify.poles import Pole, pole_with_delta_intervals

from identify import plots


def _response(unit="m/s^2"):
    rng = np.random.default_rng(0)
    t = np.arange(600) * 0.005
    y = np.exp(-1.0 * t) * np.cos(2 * np.pi * 5.0 * t)
    return ModelResponse(t, y + rng.normal(0, 0.01, t.size), y, unit=unit, label="fitted decay")


def _lines_by_label(ax):
    return {ln.get_label(): ln for ln in ax.get_lines()}


def test_record_plot_draws_measured_model_and_segment():
    from matplotlib.figure import Figure

    r = _response()
    fig = plots.plot_record(r, segment={"start_s": 0.5, "end_s": 2.5, "trigger_s": 0.4})
    assert isinstance(fig, Figure)
    ax = fig.axes[0]
    lines = _lines_by_label(ax)
    assert np.array_equal(lines["measured"].get_ydata(), r.measured)
    assert np.array_equal(lines["fitted decay"].get_ydata(), r.model)
    assert "trigger" in lines
    spans = [p for p in ax.patches if p.get_label() == "analysed segment"]
    assert len(spans) == 1
    x0, x1 = spans[0].get_x(), spans[0].get_x() + spans[0].get_width()
    assert (x0, x1) == pytest.approx((0.5, 2.5))
    assert ax.get_xlabel() == "time (s)"
    assert "m/s^2" in ax.get_ylabel()


def test_record_plot_marks_holdout_and_whole_record():
    r = _response()
    r = ModelResponse(r.time_s, r.measured, r.model, unit="V", holdout_start_s=2.0)
    fig = plots.plot_record(r, full_time_s=np.arange(800) * 0.005, full_measured=np.zeros(800))
    lines = _lines_by_label(fig.axes[0])
    assert "hold-out starts" in lines and "whole record" in lines
    assert lines["hold-out starts"].get_xdata()[0] == 2.0


def test_residual_plot_has_autocorrelation_and_band():
    from identify.poles import normal_quantile

    r = _response(unit="mm")
    fig = plots.plot_residuals(r, lags=20, confidence=0.95)
    ax_res, ax_acf = fig.axes
    np.testing.assert_allclose(ax_res.get_lines()[0].get_ydata(), r.measured - r.model)
    assert "mm" in ax_res.get_ylabel() and ax_res.get_xlabel() == "time (s)"
    assert ax_acf.get_xlabel() == "lag (samples)"
    stems = _lines_by_label(ax_acf)["autocorrelation"]
    assert len(stems.get_xdata()) == 20
    band = ax_acf.collections[0]  # fill_between of the white-noise band
    ys = band.get_paths()[0].vertices[:, 1]
    # Box & Jenkins large-sample band for a white sequence: ±z/√N
    assert ys.max() == pytest.approx(normal_quantile(0.95) / np.sqrt(r.time_s.size))


def test_residual_autocorrelation_matches_statsmodels():
    from statsmodels.tsa.stattools import acf  # reference library

    from identify.plots._residuals import residual_autocorrelation

    e = np.random.default_rng(2).normal(size=300)
    np.testing.assert_allclose(residual_autocorrelation(e, 15), acf(e, nlags=15, fft=False), atol=1e-12)


def test_splane_has_one_box_per_pole_damping_lines_and_boundary():
    from identify.plots._splane import BOX_GID, DAMPING_LINE_GID

    poles = [pole_with_delta_intervals(complex(-1.0, 30.0), np.diag([0.04, 0.09])),
             pole_with_delta_intervals(complex(-4.0, 80.0), np.diag([0.25, 0.36])),
             pole_with_delta_intervals(complex(-6.0, 0.0), [[0.1]])]
    fig = plots.plot_splane(poles, damping_ratios=(0.05, 0.1, 0.3))
    ax = fig.axes[0]
    boxes = [p for p in ax.patches if p.get_gid() == BOX_GID]
    assert len(boxes) == len(poles)
    # each box spans the pole's real- and imaginary-part intervals
    b = boxes[1]
    assert b.get_x() == pytest.approx(poles[1].ci.real[0])
    assert b.get_x() + b.get_width() == pytest.approx(poles[1].ci.real[1])
    assert b.get_y() + b.get_height() == pytest.approx(poles[1].ci.imag[1])
    dlines = [ln for ln in ax.get_lines() if ln.get_gid() == DAMPING_LINE_GID]
    assert len(dlines) == 3
    # a constant-damping ray has Re/|s| = -ζ (derived from s = -ζωn + jωn√(1-ζ²))
    x, y = dlines[1].get_xdata()[1], dlines[1].get_ydata()[1]
    assert -x / np.hypot(x, y) == pytest.approx(0.1)
    labels = _lines_by_label(ax)
    boundary = [k for k in labels if k.startswith("Re(s) = 0")]
    assert boundary and labels[boundary[0]].get_xdata()[0] == 0.0
    markers = labels["pole"]
    np.testing.assert_allclose(markers.get_xdata(), [-1.0, -4.0, -6.0])
    assert "rad/s" in ax.get_xlabel() and "rad/s" in ax.get_ylabel()
    texts = [t.get_text() for t in ax.texts]
    assert any("Hz" in t for t in texts) and any("ζ = 0.1" == t for t in texts)


def test_splane_pole_without_interval_has_no_box():
    from identify.plots._splane import BOX_GID

    fig = plots.plot_splane([Pole(-1.0, 10.0), Pole(-2.0, 20.0).to_dict()])
    ax = fig.axes[0]
    assert not [p for p in ax.patches if p.get_gid() == BOX_GID]
    assert len(_lines_by_label(ax)["pole"].get_xdata()) == 2


def test_ln_amplitude_plot_line_slope_is_minus_sigma():
    sigma = 0.8
    tk = np.arange(12) * 0.2
    ak = 3.0 * np.exp(-sigma * tk)
    used = np.r_[np.ones(9, bool), np.zeros(3, bool)]
    fig = plots.plot_ln_amplitude(tk, ak, used=used, decay_rate_per_s=sigma, unit="mm")
    ax = fig.axes[0]
    lines = _lines_by_label(ax)
    assert len(lines["peaks used"].get_xdata()) == 9
    assert len(lines["peaks not used"].get_xdata()) == 3
    np.testing.assert_allclose(lines["peaks used"].get_ydata(), np.log(ak[:9]))
    fit = [ln for k, ln in lines.items() if k.startswith("slope")][0]
    x, y = fit.get_xdata(), fit.get_ydata()
    assert (y[1] - y[0]) / (x[1] - x[0]) == pytest.approx(-sigma)
    # exact peaks: the line passes through them (ln a = ln 3 - σ t, Thomson §2.7)
    assert y[0] == pytest.approx(np.log(3.0))
    assert ax.get_xlabel() == "time (s)" and "mm" in ax.get_ylabel()


def test_ln_amplitude_without_sigma_uses_least_squares():
    tk = np.arange(6.0)
    fig = plots.plot_ln_amplitude(tk, np.exp(-0.5 * tk))
    fit = [ln for k, ln in _lines_by_label(fig.axes[0]).items() if k.startswith("least-squares")][0]
    x, y = fit.get_xdata(), fit.get_ydata()
    assert (y[1] - y[0]) / (x[1] - x[0]) == pytest.approx(-0.5)


def test_step_plot_annotates_figures_with_units():
    t = np.arange(0, 10, 0.01)
    y = np.where(t >= 1, 1 - np.exp(-(t - 1)), 0.0) * 2.0
    u = (t >= 1).astype(float)
    r = ModelResponse(t, y, y, input=u, unit="degC")
    metrics = {"measured": {"rise_time_s": 2.197, "overshoot_percent": 0.0, "settling_time_s": 3.912,
                            "final_value": 2.0, "initial_value": 0.0, "step_time_s": 1.0,
                            "peak_time_s": 8.5},
               "model": {"rise_time_s": 2.2}}
    fig = plots.plot_step(r, metrics)
    ax, ax_in = fig.axes
    text = "\n".join(t.get_text() for t in ax.texts)
    assert "rise time 10-90 %: 2.197 s" in text
    assert "settling time: 3.912 s" in text
    assert "final value: 2 degC" in text
    lines = _lines_by_label(ax)
    # first order: 10 % and 90 % of the change (derived: levels 0.2 and 1.8 for a change of 2)
    levels = sorted(ln.get_ydata()[0] for ln in ax.get_lines() if ln.get_linestyle() == ":")
    assert levels == pytest.approx([0.2, 1.8])
    assert lines["settled"].get_xdata()[0] == pytest.approx(1.0 + 3.912)
    assert lines["step"].get_xdata()[0] == pytest.approx(1.0)
    assert "peak" in lines
    assert "degC" in ax.get_ylabel() and ax_in.get_xlabel() == "time (s)"
    np.testing.assert_allclose(_lines_by_label(ax_in)["input"].get_ydata(), u)


def test_order_stability_plots_every_pole_of_every_order():
    scan = [{"order": n, "poles": [[-0.5, 2 * np.pi * 3.0], [-30.0, 10.0 * n]]} for n in (2, 4, 6)]
    fig = plots.plot_order_stability(scan, selected=[Pole(-0.5, 2 * np.pi * 3.0)])
    ax = fig.axes[0]
    lines = _lines_by_label(ax)
    light = lines["pole, ζ < 0.2"]
    heavy = lines["pole, ζ ≥ 0.2 or real"]
    assert len(light.get_xdata()) + len(heavy.get_xdata()) == 6
    np.testing.assert_allclose(light.get_xdata(), Pole(-0.5, 2 * np.pi * 3.0).natural_frequency_hz)
    np.testing.assert_allclose(sorted(light.get_ydata()), [2, 4, 6])
    assert lines["reported pole"].get_xdata()[0] == pytest.approx(Pole(-0.5, 2 * np.pi * 3.0).natural_frequency_hz)
    assert ax.get_xlabel() == "natural frequency (Hz)" and ax.get_ylabel() == "model order"


def test_figures_render_to_png_without_a_display():
    from identify.plots import figure_to_png

    png = figure_to_png(plots.plot_record(_response()))
    assert png[:8] == b"\x89PNG\r\n\x1a\n"


def test_palette_is_our_own_and_distinct():
    from identify.plots import PALETTE

    assert len({PALETTE["measured"], PALETTE["model"], PALETTE["third"]}) == 3


def test_step_figures_say_when_only_the_model_gives_one():
    from identify.plots._stepplot import step_figures

    found = step_figures({"settling_time_s": {"measured": None, "model": 33.9, "unit": "s"},
                          "rise_time_s": {"measured": 16.6, "model": 17.0}, "final_value": 2.0})
    assert found["settling_time_s"] == ("settling time (model)", 33.9, "s")
    assert found["rise_time_s"] == ("rise time 10-90 %", 16.6, "s")
    assert found["final_value"] == ("final value", 2.0, None)
