"""Pole stability across model orders: does a pole stay put as the order grows?"""
from __future__ import annotations

import numpy as np

from ._style import PALETTE, new_figure, styled

__all__ = ["plot_order_stability"]


@styled
def plot_order_stability(order_scan, *, selected=None, max_frequency_hz=None, title=None):
    """Plot the natural frequency of every pole found at each model order.

    Parameters
    ----------
    order_scan : sequence of dict
        ``{"order": n, "poles": [[re, im], ...]}`` (rad/s) per order tried.
    selected : sequence of Pole, optional
        The poles finally reported: drawn as vertical lines.
    max_frequency_hz : float, optional
        Hide poles above this frequency.

    Returns
    -------
    matplotlib.figure.Figure
        Natural frequency (Hz) against model order; marker shape tells lightly damped
        (ζ < 0.2, filled circle) from heavily damped or real poles (hollow square).
    """
    from ..poles import Pole

    freq, order, light = [], [], []
    for entry in order_scan or ():
        n = entry.get("order") if isinstance(entry, dict) else getattr(entry, "order", None)
        plist = entry.get("poles") if isinstance(entry, dict) else getattr(entry, "poles", ())
        for p in plist or ():
            pole = p if isinstance(p, Pole) else (Pole.from_dict(p) if isinstance(p, dict)
                                                 else Pole(float(p[0]), float(p[1])))
            fn = pole.natural_frequency_hz
            if max_frequency_hz is not None and fn > max_frequency_hz:
                continue
            freq.append(fn)
            order.append(float(n))
            light.append(0.0 <= pole.damping_ratio < 0.2)
    freq, order, light = np.array(freq), np.array(order), np.array(light, bool)
    fig, axes = new_figure(1, 1, height_in=3.2)
    ax = axes[0, 0]
    if light.any():
        ax.plot(freq[light], order[light], linestyle="none", marker="o", markersize=4.5,
                color=PALETTE["measured"], label="pole, ζ < 0.2")
    if (~light).any():
        ax.plot(freq[~light], order[~light], linestyle="none", marker="s", markersize=4.5,
                markerfacecolor="none", color=PALETTE["context"], label="pole, ζ ≥ 0.2 or real")
    for i, p in enumerate(selected or ()):
        fn = p.natural_frequency_hz if hasattr(p, "natural_frequency_hz") else Pole.from_dict(p).natural_frequency_hz
        ax.axvline(fn, color=PALETTE["model"], linestyle="--", linewidth=1.0,
                   label="reported pole" if i == 0 else None)
    ax.set_xlabel("natural frequency (Hz)")
    ax.set_ylabel("model order")
    ax.set_title(title or "Pole stability across model orders")
    if order.size:
        lo, hi = float(order.min()), float(order.max())
        ax.set_ylim(lo - 0.5, hi + 0.35 * (hi - lo) + 1.5)  # headroom for the legend
    if freq.size or selected:
        ax.legend(loc="upper right", ncols=3)
    return fig
