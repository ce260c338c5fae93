"""The record with the analysed segment marked and the model overlaid."""
from __future__ import annotations

import numpy as np

from ._style import PALETTE, field, new_figure, styled, unit_label

__all__ = ["plot_record"]


@styled
def plot_record(response, *, segment=None, full_time_s=None, full_measured=None,
                title=None):
    """Plot the measured record, the analysed segment and the model on top.

    Parameters
    ----------
    response : identify._response.ModelResponse
        Measured output and the model simulated on the analysed samples.
    segment : object or dict, optional
        Anything with ``start_s`` and ``end_s`` (and optionally ``trigger_s``): shaded as
        the analysed segment, with the trigger as a dashed line.
    full_time_s, full_measured : array_like, optional
        The whole record, drawn in grey behind the analysed part.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
        One axes: time in s against the channel in its unit.
    """
    unit = getattr(response, "unit", "") or ""
    t = np.asarray(response.time_s, dtype=float)
    fig, axes = new_figure(1, 1, height_in=3.0)
    ax = axes[0, 0]
    if full_time_s is not None and full_measured is not None:
        ax.plot(np.asarray(full_time_s, float), np.asarray(full_measured, float),
                color=PALETTE["context"], linewidth=0.8, label="whole record")
    start = field(segment, "start_s")
    end = field(segment, "end_s")
    if start is not None and end is not None:
        ax.axvspan(float(start), float(end), color=PALETTE["segment"], alpha=0.6, zorder=0,
                   label="analysed segment")
    trigger = field(segment, "trigger_s")
    if trigger is not None:
        ax.axvline(float(trigger), color=PALETTE["ink"], linestyle="--", linewidth=0.9,
                   label="trigger")
    ax.plot(t, np.asarray(response.measured, float), color=PALETTE["measured"], linewidth=1.0,
            label="measured")
    ax.plot(t, np.asarray(response.model, float), color=PALETTE["model"], linestyle="--",
            linewidth=1.3, label=getattr(response, "label", "model") or "model")
    hold = getattr(response, "holdout_start_s", None)
    if hold is not None:
        ax.axvline(float(hold), color=PALETTE["third"], linestyle=":", linewidth=1.2,
                   label="hold-out starts")
    ax.set_xlabel("time (s)")
    ax.set_ylabel(unit_label("response", unit))
    ax.set_title(title or "Record and model")
    ax.legend(loc="upper right", ncols=2)
    return fig
