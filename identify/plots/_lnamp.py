"""ln-amplitude of the decay's peaks against time, with the regression line."""
from __future__ import annotations

import numpy as np

from ._style import PALETTE, new_figure, styled, unit_label

__all__ = ["plot_ln_amplitude"]


@styled
def plot_ln_amplitude(peak_times_s, peak_amplitudes, *, used=None, decay_rate_per_s=None,
                      unit: str = "", title=None):
    """Plot ln|peak| against time; a free decay of one mode gives a straight line.

    Parameters
    ----------
    peak_times_s, peak_amplitudes : array_like
        Times (s) and amplitudes (record unit) of the peaks found.
    used : array_like of bool, optional
        Which peaks entered the regression (others, e.g. below the noise floor, are
        drawn hollow).  Default: all.
    decay_rate_per_s : float, optional
        The estimated σ: the line is drawn with slope ``-σ`` through the used peaks'
        weighted centre.  Default: an ordinary least-squares line through the used peaks.
    unit : str
        Unit of the amplitudes.

    Returns
    -------
    matplotlib.figure.Figure
        Time (s) against ln(amplitude / 1 unit); filled markers for used peaks, hollow for
        the rest, and the line.

    Notes
    -----
    For ``x(t) = A e^(-σt) cos(ωd t + φ)`` the peaks satisfy ``ln|x_k| ≈ ln A - σ t_k``
    (Thomson, Theory of Vibration with Applications, §2.7).
    """
    t = np.asarray(peak_times_s, dtype=float)
    a = np.abs(np.asarray(peak_amplitudes, dtype=float))
    keep = np.isfinite(t) & np.isfinite(a) & (a > 0)
    t, a = t[keep], a[keep]
    mask = np.ones(t.size, bool) if used is None else np.asarray(used, bool)[keep]
    y = np.log(a)
    fig, axes = new_figure(1, 1, height_in=3.0)
    ax = axes[0, 0]
    if mask.any():
        ax.plot(t[mask], y[mask], linestyle="none", marker="o", markersize=4.5,
                color=PALETTE["measured"], label="peaks used")
    if (~mask).any():
        ax.plot(t[~mask], y[~mask], linestyle="none", marker="o", markersize=4.5,
                markerfacecolor="none", color=PALETTE["context"], label="peaks not used")
    if mask.sum() >= 2:
        tu, yu = t[mask], y[mask]
        if decay_rate_per_s is not None:
            w = a[mask] ** 2
            slope = -float(decay_rate_per_s)
            intercept = float(np.sum(w * (yu - slope * tu)) / np.sum(w))
            label = f"slope -σ, σ = {float(decay_rate_per_s):.4g} 1/s"
        else:
            slope, intercept = np.polyfit(tu, yu, 1)
            label = f"least-squares line, slope {slope:.4g} 1/s"
        tt = np.array([tu.min(), tu.max()])
        ax.plot(tt, intercept + slope * tt, color=PALETTE["model"], linestyle="--",
                linewidth=1.4, label=label)
    ax.set_xlabel("time (s)")
    ax.set_ylabel(unit_label("ln |peak amplitude|", f"ln {unit}" if unit else ""))
    ax.set_title(title or "Logarithmic decrement: ln-amplitude of peaks")
    ax.legend(loc="upper right")
    return fig
