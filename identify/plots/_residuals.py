"""Residuals against time, and their autocorrelation with its confidence band."""
from __future__ import annotations

import numpy as np

from ._style import PALETTE, new_figure, styled, unit_label

__all__ = ["plot_residuals", "residual_autocorrelation"]


def residual_autocorrelation(residual, lags: int):
    """Sample autocorrelation ``r_k``, k = 0..lags (biased estimator, ``r_0 = 1``).

    Notes
    -----
    ``r_k = Σ_{t} (e_t - ē)(e_{t+k} - ē) / Σ_t (e_t - ē)²`` (Box & Jenkins; the same
    estimator as ``statsmodels.tsa.stattools.acf`` with its defaults).
    """
    e = np.asarray(residual, dtype=float)
    e = e - e.mean()
    n = e.size
    denom = float(e @ e)
    if denom == 0.0:
        return np.r_[1.0, np.zeros(lags)]
    nfft = 1 << int(np.ceil(np.log2(2 * n - 1)))
    spec = np.fft.rfft(e, nfft)
    acov = np.fft.irfft(spec * np.conj(spec), nfft)[: lags + 1]
    return acov / denom


@styled
def plot_residuals(response, *, lags=None, confidence: float = 0.95, title=None):
    """Plot the residuals ``measured - model`` and their autocorrelation.

    Parameters
    ----------
    response : identify._response.ModelResponse
    lags : int, optional
        Autocorrelation lags shown; default ``min(40, N // 4)``.
    confidence : float, default=0.95
        Level of the band ``±z/√N`` within which a white sequence's autocorrelation
        lies (large-sample approximation, Box & Jenkins).

    Returns
    -------
    matplotlib.figure.Figure
        Two axes: residual (unit) against time (s); autocorrelation against lag
        (samples) with the band shaded.
    """
    from ..poles import normal_quantile

    unit = getattr(response, "unit", "") or ""
    t = np.asarray(response.time_s, dtype=float)
    e = np.asarray(response.measured, dtype=float) - np.asarray(response.model, dtype=float)
    n = e.size
    lags = max(1, min(40, n // 4)) if lags is None else int(lags)
    lags = min(lags, max(n - 1, 1))
    r = residual_autocorrelation(e, lags)
    band = normal_quantile(confidence) / np.sqrt(n)

    fig, axes = new_figure(2, 1, height_in=2.4)
    ax = axes[0, 0]
    ax.plot(t, e, color=PALETTE["measured"], linewidth=0.8, label="residual")
    ax.axhline(0.0, color=PALETTE["ink"], linewidth=0.7)
    ax.set_xlabel("time (s)")
    ax.set_ylabel(unit_label("residual", unit))
    ax.set_title(title or "Residuals (measured minus model)")

    ax = axes[1, 0]
    k = np.arange(lags + 1)
    ax.fill_between([0, lags], -band, band, color=PALETTE["band"], alpha=0.9,
                    label=f"{confidence:.0%} band for white noise")
    ax.vlines(k[1:], 0.0, r[1:], color=PALETTE["model"], linewidth=1.4)
    ax.plot(k[1:], r[1:], linestyle="none", marker="o", markersize=3.5,
            color=PALETTE["model"], label="autocorrelation")
    ax.axhline(0.0, color=PALETTE["ink"], linewidth=0.7)
    ax.set_xlim(0, lags + 0.5)
    top = max(1.6 * band, 1.15 * float(np.max(np.abs(r[1:]))) if lags else 0.0)
    ax.set_ylim(-top, top)
    ax.set_xlabel("lag (samples)")
    ax.set_ylabel("autocorrelation (-)")
    ax.legend(loc="upper right")
    return fig
