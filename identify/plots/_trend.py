"""Damping-ratio history of each tracked mode, with interval bands and the threshold."""
from __future__ import annotations

from datetime import datetime, timedelta

from ._style import PALETTE, new_figure, styled

__all__ = ["plot_damping_trend"]


def _as_dt(iso: str) -> datetime:
    return datetime.fromisoformat(iso)


@styled
def plot_damping_trend(trend, *, modes=None, width_in: float = 7.0, height_in: float = 3.8):
    """Plot ζ against test date for each tracked mode of a :class:`~identify.history.TrendResult`.

    Each panel shows the measured damping ratios with their intervals (error bars), the
    weighted trend line with the interval band of the line, the threshold, the projected
    crossing date with its interval (shaded, labelled indicative) and a detected step
    change (dashed vertical line).

    Parameters
    ----------
    trend : identify.history.TrendResult
        Result of :func:`identify.history.analyse_trend`.
    modes : sequence of str, optional
        Mode labels to draw (default: the oscillatory modes among
        ``trend.principal_modes``, those found in at least half of the tests).
    width_in, height_in : float
        Figure width and height per panel, in inches.

    Returns
    -------
    matplotlib.figure.Figure
        Drawn on an Agg canvas; nothing is shown.
    """
    import matplotlib.dates as mdates
    import numpy as np

    pool = trend.modes if modes is not None else trend.principal_modes
    chosen = [m for m in pool if m.oscillatory and (modes is None or m.mode in modes)]
    fig, axes = new_figure(max(len(chosen), 1), 1, height_in=height_in, width_in=width_in)
    pct = f"{trend.confidence * 100:g} %"
    if not chosen:
        ax = axes[0, 0]
        ax.text(0.5, 0.5, "no oscillatory mode to plot", ha="center", va="center",
                transform=ax.transAxes)
        ax.set_xlabel("test date (UTC)")
        ax.set_ylabel("damping ratio ζ (–)")
        return fig
    origin = _as_dt(trend.origin_time)
    for ax, m in zip(axes[:, 0], chosen):
        dates = [_as_dt(t) for t in m.test_times]
        zeta = np.array(m.damping_ratio)
        lower = np.array([z - ci[0] if ci is not None else 0.0 for z, ci in zip(zeta, m.damping_ratio_ci)])
        upper = np.array([ci[1] - z if ci is not None else 0.0 for z, ci in zip(zeta, m.damping_ratio_ci)])
        ax.errorbar(dates, zeta, yerr=np.vstack([lower, upper]), fmt="o", ms=4, capsize=2,
                    color=PALETTE["measured"], label=f"measured ζ, {pct} interval")
        last_day = max(m.days)
        crossing = m.threshold_crossing
        if m.damping_fit is not None:
            end_day = last_day
            if crossing is not None:
                end_day = max(end_day, min(crossing["days_ci"][1], last_day + 3 * (last_day - min(m.days) + 1)))
            grid = np.linspace(min(m.days), end_day, 200)
            value, lo, hi = m.damping_fit.mean_at(grid)
            gdates = [origin + timedelta(days=float(d)) for d in grid]
            ax.fill_between(gdates, lo, hi, color=PALETTE["band"], alpha=0.9, linewidth=0,
                            label=f"{pct} interval of the trend line")
            ax.plot(gdates, value, color=PALETTE["model"], linestyle="-",
                    label=f"weighted trend ({m.damping_fit.slope_per_day * 365.25:+.3g} per year)")
        ax.axhline(trend.threshold_damping, color=PALETTE["alert"], linestyle=":",
                   label=f"threshold ζ = {trend.threshold_damping:g}")
        if crossing is not None:
            lo_d = origin + timedelta(days=float(crossing["days_ci"][0]))
            hi_d = origin + timedelta(days=float(crossing["days_ci"][1]))
            ax.axvspan(lo_d, hi_d, color=PALETTE["segment"], alpha=0.7, linewidth=0,
                       label=f"projected crossing {crossing['date']}, {pct} interval (indicative)")
            ax.axvline(origin + timedelta(days=float(crossing["days"])), color=PALETTE["third"],
                       linestyle="-.", linewidth=1.0)
        step = m.step_change or {}
        if step.get("detected"):
            i = step["index"]
            mid = dates[i - 1] + (dates[i] - dates[i - 1]) / 2
            ax.axvline(mid, color=PALETTE["context"], linestyle="--",
                       label=f"step change {step['size']:+.3g} (p = {step['p_value']:.3g})")
        locator = mdates.AutoDateLocator(minticks=3, maxticks=8)
        ax.xaxis.set_major_locator(locator)
        ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))
        ax.set_ylabel("damping ratio ζ (–)")
        ax.set_xlabel("test date (UTC)")
        name = f"{trend.rig}: " if trend.rig else ""
        ax.set_title(f"{name}{m.mode}, {m.natural_frequency_hz:.4g} Hz: {m.level} "
                     "(extrapolation indicative only)")
        y0, y1 = ax.get_ylim()
        ax.set_ylim(y0, y1 + 0.5 * (y1 - y0))  # headroom: the legend sits above the data
        ax.legend(loc="upper right", ncols=2, frameon=True, framealpha=0.9, edgecolor="none")
    return fig
