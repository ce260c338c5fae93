"""Plots, each a function returning a matplotlib Figure (Agg canvas; nothing is shown).

    plot_record            the record, the analysed segment and the model overlaid
    plot_residuals         residuals and their autocorrelation with its confidence band
    plot_splane            s-plane pole map: interval boxes, constant-damping lines, Re(s) = 0
    plot_ln_amplitude      ln-amplitude of a decay's peaks against time, with the line
    plot_step              step response with rise, overshoot, peak and settling annotated
    plot_order_stability   natural frequency of the poles at each model order
    figure_to_png          render a figure to PNG bytes
    PALETTE                the colours used

matplotlib is imported only when a plot is drawn.
"""
from __future__ import annotations

from .._lazy import lazy_exports


_LAZY = {
    "plot_record": "._record",
    "plot_residuals": "._residuals",
    "plot_splane": "._splane",
    "plot_ln_amplitude": "._lnamp",
    "plot_step": "._stepplot",
    "plot_order_stability": "._stability",
    "plot_damping_trend": "._trend",
    "figure_to_png": "._style",
    "PALETTE": "._style",
}

__all__ = list(_LAZY)

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
