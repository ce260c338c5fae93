"""Step detection on an input channel: instant, size, pre-step window and its checks.

The step is located by the best single change point of the mean (least squares over
two constant levels, computed with cumulative sums), then pinned to the sample where a
median-filtered copy of the input crosses half-way between the two levels.  The
10–90 % transition of the input (IEEE Std 181 reference levels) tells a clean step
from a ramp or a rate-limited move.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._errors import IdentificationError
from .._validate import check_time_series

__all__ = ["StepEvent", "detect_step", "noise_std", "steady_statistic", "settled_tail",
           "STEADY_LIMIT", "CLEAN_STEP_SAMPLES"]

#: A window is called steady when its fitted linear drift is below this many noise
#: standard deviations.  Common practice, no source.
STEADY_LIMIT = 2.0

#: A step whose 10–90 % transition takes at most this many sample intervals is clean.
#: Common practice, no source (a logged step spans one sample interval at most, plus
#: a sample of noise).
CLEAN_STEP_SAMPLES = 2.0

#: The step must move the input by at least this many noise standard deviations.
#: Common practice, no source.
MIN_STEP_SNR = 8.0

#: Fewest samples wanted before and after the step.
MIN_PRE_SAMPLES = 5
MIN_POST_SAMPLES = 10


def noise_std(values) -> float:
    """Robust noise standard deviation from first differences: 1.4826·MAD(Δx)/√2.

    Insensitive to steps and slow trends (Donoho-style MAD estimate; the √2 undoes the
    differencing of white noise).
    """
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    if x.size < 3:
        return 0.0
    d = np.diff(x)
    mad = float(np.median(np.abs(d - np.median(d))))
    return 1.4826 * mad / math.sqrt(2.0)


def steady_statistic(time_s, values, sigma=None) -> float:
    """Linear drift over a window in noise standard deviations: ``|b|·T / σ``.

    ``b`` is the least-squares slope, ``T`` the window duration and ``σ`` the noise
    standard deviation (``noise_std`` when not given, or the residual std of the
    linear fit when that is larger).  Returns 0 for a window with fewer than 3 samples.
    """
    t = np.asarray(time_s, dtype=float)
    x = np.asarray(values, dtype=float)
    ok = np.isfinite(x)
    t, x = t[ok], x[ok]
    if x.size < 3:
        return 0.0
    tc = t - t.mean()
    denom = float(np.sum(tc * tc))
    if denom == 0:
        return 0.0
    slope = float(np.sum(tc * (x - x.mean())) / denom)
    resid = x - x.mean() - slope * tc
    s = noise_std(x) if sigma is None else float(sigma)
    s = max(s, float(np.std(resid)) if sigma is None else s)
    drift = abs(slope) * float(t[-1] - t[0])
    if drift <= 1e-9 * float(np.max(np.abs(x))):  # rounding of a constant window
        return 0.0
    if s <= 0:
        return 0.0 if drift == 0 else float("inf")
    return drift / s


def settled_tail(time_s, values, *, change, band=0.02, fraction=0.2, sigma=None) -> tuple:
    """Has a step response settled by the end of the record?  Returns ``(settled, drift)``.

    A straight line is fitted to the last ``fraction`` of the response; ``drift`` is its
    change over that part.  The tail counts as settled when the drift is within
    ``band·|change|`` or below ``STEADY_LIMIT`` noise standard deviations (``sigma``,
    default :func:`noise_std` of the tail).
    """
    t = np.asarray(time_s, dtype=float)
    x = np.asarray(values, dtype=float)
    ok = np.isfinite(x)
    t, x = t[ok], x[ok]
    m = max(5, int(round(fraction * x.size)))
    t, x = t[-m:], x[-m:]
    if x.size < 3:
        return True, 0.0
    tc = t - t.mean()
    slope = float(tc @ (x - x.mean()) / (tc @ tc)) if tc @ tc > 0 else 0.0
    drift = abs(slope) * float(t[-1] - t[0])
    s = noise_std(x) if sigma is None else float(sigma)
    return bool(drift <= band * abs(float(change)) or drift < STEADY_LIMIT * s), drift


@dataclass(frozen=True)
class StepEvent:
    """What :func:`detect_step` chose.

    Parameters
    ----------
    time_s : float
        Step instant: time of the first sample at or past half-way between the two
        levels (the logged input is read as held between samples, so a clean step
        takes effect at that sample).
    index : int
        Index of that sample.
    size : float
        ``after_level - before_level`` (signed), in the input's unit.
    before_level, after_level : float
        Median of the input before the transition and over the settled part after it.
    pre_window : tuple of float
        ``(start_s, end_s)`` of the pre-step window used for the levels and the
        steadiness check.
    stationary : bool
        True when the input's drift over the pre-step window is below
        ``STEADY_LIMIT`` noise standard deviations.
    stationarity_statistic : float
        That drift in noise standard deviations.
    clean : bool
        True when the 10–90 % transition of the input lasts at most
        ``CLEAN_STEP_SAMPLES`` sample intervals (else a ramp or a rate limit).
    rise_duration_s : float
        Duration of the input's 10–90 % transition.
    noise_std : float
        Robust noise standard deviation of the input.
    explanation : str
        One line saying how the step was found.
    """

    time_s: float
    index: int
    size: float
    before_level: float
    after_level: float
    pre_window: tuple
    stationary: bool
    stationarity_statistic: float
    clean: bool
    rise_duration_s: float
    noise_std: float
    explanation: str

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({
            "time_s": self.time_s, "index": self.index, "size": self.size,
            "before_level": self.before_level, "after_level": self.after_level,
            "pre_window": list(self.pre_window), "stationary": self.stationary,
            "stationarity_statistic": self.stationarity_statistic, "clean": self.clean,
            "rise_duration_s": self.rise_duration_s, "noise_std": self.noise_std,
            "explanation": self.explanation})


def _median_filter(x, width=5):
    n = x.size
    if n < width:
        return x.copy()
    half = width // 2
    pad = np.concatenate([np.full(half, x[0]), x, np.full(half, x[-1])])
    windows = np.lib.stride_tricks.sliding_window_view(pad, width)
    return np.median(windows, axis=1)


def _change_point(x):
    """Index k (1..n-1) minimising the two-level SSE of x[:k] and x[k:]."""
    n = x.size
    c = np.cumsum(x)
    total = c[-1]
    k = np.arange(1, n)
    left = c[:-1]
    mean_l = left / k
    mean_r = (total - left) / (n - k)
    # SSE reduction relative to one level is k(n-k)/n·(mean_l - mean_r)^2
    gain = k * (n - k) / n * (mean_l - mean_r) ** 2
    return int(k[np.argmax(gain)])


def _crossing_time(t, x, level, start, stop, rising):
    """First time in [start, stop) where x passes ``level`` (linear interpolation)."""
    seg = x[start:stop]
    above = seg >= level if rising else seg <= level
    idx = np.flatnonzero(above)
    if idx.size == 0:
        return float("nan"), stop
    i = start + int(idx[0])
    if i == 0:
        return float(t[0]), 0
    x0, x1 = x[i - 1], x[i]
    frac = 0.0 if x1 == x0 else (level - x0) / (x1 - x0)
    frac = min(max(frac, 0.0), 1.0)
    return float(t[i - 1] + frac * (t[i] - t[i - 1])), i


def detect_step(time_s, input_values, *, step_time_s=None) -> StepEvent:
    """Find the step in an input channel.

    Parameters
    ----------
    time_s : array_like
        Uniform time base in seconds.
    input_values : array_like
        The logged input (actuator command or valve position).
    step_time_s : float, optional
        Where the step is; overrides the search (the levels and checks still run).

    Returns
    -------
    StepEvent

    Raises
    ------
    IdentificationError
        No step in the input (the change is below 8 noise standard deviations or the
        input is constant), the step too close to the end (fewer than 10 samples after
        the transition) or to the start (fewer than 5 samples before it).

    Notes
    -----
    The change point maximises ``k(n-k)/n·(x̄_left - x̄_right)²`` (the least-squares
    two-level split).  Levels are medians of the input before the transition and
    over the last half of the samples after it.  The instant is the first sample at
    or past the half-way (50 %) level and the transition duration the 10–90 % crossing interval, with
    the reference levels of IEEE Std 181.
    """
    t, u = check_time_series(time_s, input_values, min_length=2, values_name="input_values")
    n = u.size
    ts = float(np.median(np.diff(t)))
    sigma = noise_std(u)
    if np.ptp(u) == 0:
        raise IdentificationError("no step in the input: the input channel is constant")
    smooth = _median_filter(u, 5)
    if step_time_s is None:
        k = _change_point(u - u.mean())
        how = "largest change of level in the input"
    else:
        k = int(np.searchsorted(t, float(step_time_s) - 1e-9 * ts))
        if k <= 0 or k >= n:
            raise IdentificationError(
                f"the step time {step_time_s} s lies outside the record ({t[0]:g} s to {t[-1]:g} s)")
        how = f"step time given as {float(step_time_s):g} s"
    # provisional levels around the change point
    before0 = float(np.median(u[:k]))
    after0 = float(np.median(u[k:]))
    size0 = after0 - before0
    if abs(size0) <= MIN_STEP_SNR * sigma or abs(size0) <= 1e-12 * max(abs(before0), abs(after0), 1.0):
        raise IdentificationError(
            f"no step in the input: the largest change of level ({size0:.4g}) is within "
            f"{MIN_STEP_SNR:g} noise standard deviations ({sigma:.3g}) of the input")
    rising = size0 > 0
    half = before0 + 0.5 * size0
    # the transition region: where the smoothed input leaves the 10 % band and reaches 90 %
    lev10, lev90 = before0 + 0.1 * size0, before0 + 0.9 * size0
    # search the half-way crossing near the change point
    lo = max(0, k - max(5, n // 4))
    t50, i50 = _crossing_time(t, smooth, half, lo, n, rising)
    if not math.isfinite(t50):
        t50, i50 = float(t[k]), k
    # start of the transition: last sample before i50 still inside the 10 % band
    if rising:
        below = np.flatnonzero(smooth[:i50] <= lev10)
    else:
        below = np.flatnonzero(smooth[:i50] >= lev10)
    start_idx = int(below[-1]) if below.size else 0
    t10, _ = _crossing_time(t, smooth, lev10, start_idx, n, rising)
    t90, i90 = _crossing_time(t, smooth, lev90, i50, n, rising) if i50 < n else (float("nan"), n)
    if not math.isfinite(t90):
        t90, i90 = float(t[-1]), n - 1
    rise = max(float(t90 - t10), 0.0) if math.isfinite(t10) else float("nan")
    # refine the levels: before = samples up to the last one still within 10 % of the old level
    pre_end = max(start_idx, 0)
    if pre_end + 1 < MIN_PRE_SAMPLES:
        raise IdentificationError(
            f"the step is at the very start of the record: only {pre_end + 1} samples before it "
            f"(at least {MIN_PRE_SAMPLES} needed for a pre-step baseline)")
    post = n - i90
    if post < MIN_POST_SAMPLES:
        raise IdentificationError(
            f"the step is at the very end of the record: only {post} samples after it "
            f"(at least {MIN_POST_SAMPLES} needed, and enough to see the response)")
    before = float(np.median(u[:pre_end + 1]))
    tail = u[i90 + (n - i90) // 2:]
    after = float(np.median(tail)) if tail.size else float(u[-1])
    size = after - before
    stat = steady_statistic(t[:pre_end + 1], u[:pre_end + 1], sigma if sigma > 0 else None)
    clean = bool(math.isfinite(rise) and rise <= CLEAN_STEP_SAMPLES * ts * (1 + 1e-9))
    index = int(min(max(i50, 0), n - 1))
    t_step = float(t[index])
    explanation = (f"{how}: {before:.4g} to {after:.4g} at {t_step:.6g} s (sample {index}); "
                   f"10-90 % transition {rise:.3g} s; pre-step window {t[0]:.6g} to {t[pre_end]:.6g} s")
    return StepEvent(time_s=t_step, index=index, size=float(size), before_level=before,
                     after_level=after, pre_window=(float(t[0]), float(t[pre_end])),
                     stationary=bool(stat < STEADY_LIMIT), stationarity_statistic=float(stat),
                     clean=clean, rise_duration_s=rise, noise_std=float(sigma),
                     explanation=explanation)
