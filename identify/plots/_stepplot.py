"""The step response with its figures (rise, overshoot, peak, settling) annotated."""
from __future__ import annotations

import math

import numpy as np

from ._style import PALETTE, new_figure, styled, unit_label

__all__ = ["plot_step", "step_figures"]

#: metric names looked for, with the words shown on the plot.
_FIGURES = (
    ("rise_time_s", "rise time 10-90 %", "s"),
    ("overshoot_percent", "overshoot", "%"),
    ("peak_time_s", "peak time", "s"),
    ("settling_time_s", "settling time", "s"),
    ("final_value", "final value", None),
    ("dead_time_s", "dead time", "s"),
)


def _finite(value):
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def _flat(obj):
    """Metrics as a flat dict of numbers: accepts objects with to_dict or plain dicts."""
    if obj is None:
        return {}
    data = obj.to_dict() if hasattr(obj, "to_dict") else dict(obj) if isinstance(obj, dict) else vars(obj)
    return {key: value for key, (value, _) in _sourced(data).items()}


def _sourced(data) -> dict:
    """``{name: (value, source)}``: source ``""`` for a plain or measured value, ``"model"``
    when only the model's value is given."""
    out = {}
    for key, value in data.items():
        if hasattr(value, "to_dict"):
            value = value.to_dict()
        if isinstance(value, dict):
            # {"value": x} or {"measured": x, "model": y}: take the measured, else the model
            for inner in ("measured", "value", "model"):
                if _finite(value.get(inner)) is not None:
                    out[key] = (_finite(value[inner]), "model" if inner == "model" else "")
                    break
        elif _finite(value) is not None:
            out[key] = (_finite(value), "")
    return out


def step_figures(metrics) -> dict:
    """The step figures found in ``metrics``: ``{name: (words, value, unit)}``.

    The measured figure is used; when only the model's is given, the words say
    "(model)".
    """
    if metrics is None:
        return {}
    data = metrics.to_dict() if hasattr(metrics, "to_dict") else dict(metrics)
    flat = _sourced(data)
    found = {}
    for key, words, unit in _FIGURES:
        if key in flat:
            value, source = flat[key]
            found[key] = (words + (" (model)" if source else ""), value, unit)
    return found


def _metrics_source(metrics):
    data = metrics.to_dict() if hasattr(metrics, "to_dict") else metrics
    if isinstance(data, dict):
        data = {k: (v.to_dict() if hasattr(v, "to_dict") else v) for k, v in data.items()}
    if isinstance(data, dict) and isinstance(data.get("measured"), dict):
        return data["measured"]
    return data


@styled
def plot_step(response, metrics=None, *, step_time_s=None, settling_band=0.02, title=None):
    """Plot a step response (measured and model) with its figures annotated.

    Parameters
    ----------
    response : identify._response.ModelResponse
        Output and model on the record's time base; ``input`` is drawn below when present.
    metrics : dict or object, optional
        Step figures, e.g. ``rise_time_s``, ``overshoot_percent``, ``peak_time_s``,
        ``settling_time_s``, ``final_value``, ``initial_value``, ``step_time_s``
        (a nested ``{"measured": {...}, "model": {...}}`` uses the measured figures).
    step_time_s : float, optional
        The step instant; default the metric ``step_time_s``, else the first sample.
    settling_band : float, default=0.02
        Half-width of the settling band as a fraction of the change.

    Returns
    -------
    matplotlib.figure.Figure
        Time (s) against the output (unit); the final value, the 10 % / 90 % levels and
        the settling band as lines; the peak as a marker; the figures listed in a box.
    """
    unit = getattr(response, "unit", "") or ""
    t = np.asarray(response.time_s, dtype=float)
    y = np.asarray(response.measured, dtype=float)
    ym = np.asarray(response.model, dtype=float)
    u = getattr(response, "input", None)
    m = _flat(_metrics_source(metrics)) if metrics is not None else {}
    figures = step_figures(_metrics_source(metrics)) if metrics is not None else {}

    nrows = 2 if u is not None else 1
    fig, axes = new_figure(nrows, 1, height_in=2.6 if nrows == 2 else 3.2, sharex=True,
                           height_ratios=[3, 1] if nrows == 2 else None)
    ax = axes[0, 0]
    ax.plot(t, y, color=PALETTE["measured"], linewidth=1.0, label="measured")
    ax.plot(t, ym, color=PALETTE["model"], linestyle="--", linewidth=1.4,
            label=getattr(response, "label", "model") or "model")

    t0 = _finite(step_time_s) if step_time_s is not None else m.get("step_time_s", float(t[0]))
    y0 = m.get("initial_value", float(ym[0]))
    yf = m.get("final_value", float(ym[-1]))
    change = yf - y0
    if change != 0:
        for frac, style in ((0.1, ":"), (0.9, ":")):
            ax.axhline(y0 + frac * change, color=PALETTE["context"], linestyle=style,
                       linewidth=0.8, label="10 % and 90 % levels" if frac == 0.1 else None)
        ax.axhspan(yf - settling_band * abs(change), yf + settling_band * abs(change),
                   color=PALETTE["band"], alpha=0.7, zorder=0,
                   label=f"settling band ±{settling_band:.0%}")
    ax.axhline(yf, color=PALETTE["ink"], linewidth=0.8, label="final value")
    ax.axvline(t0, color=PALETTE["ink"], linestyle="--", linewidth=0.8, label="step")
    if "peak_time_s" in m:
        tp = t0 + m["peak_time_s"]
        k = int(np.argmin(np.abs(t - tp)))
        ax.plot([t[k]], [y[k]], linestyle="none", marker="v", markersize=7,
                color=PALETTE["third"], label="peak")
    if "settling_time_s" in m:
        ax.axvline(t0 + m["settling_time_s"], color=PALETTE["third"], linestyle="-.",
                   linewidth=0.9, label="settled")
    if figures:
        lines = []
        for words, value, fig_unit in figures.values():
            shown_unit = unit if fig_unit is None else fig_unit
            lines.append(f"{words}: {value:.4g} {shown_unit}".rstrip())
        rising = change >= 0
        ax.text(0.99, 0.04 if rising else 0.96, "\n".join(lines), transform=ax.transAxes,
                ha="right", va="bottom" if rising else "top",
                fontsize=7.5, bbox={"facecolor": "white", "edgecolor": PALETTE["grid"]})
    ax.set_ylabel(unit_label("output", unit))
    ax.set_title(title or "Step response")
    ax.legend(loc="best", ncols=2)
    if nrows == 2:
        ax2 = axes[1, 0]
        ax2.plot(t, np.asarray(u, dtype=float), color=PALETTE["third"], linewidth=1.0,
                 label="input")
        ax2.set_ylabel("input")
        ax2.set_xlabel("time (s)")
        ax2.legend(loc="upper left")
    else:
        ax.set_xlabel("time (s)")
    return fig
