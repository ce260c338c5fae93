"""Offset and linear trend by least squares, and a robust noise-level estimate.

    estimate_offset_trend   offset (and slope) of a signal, as a frozen :class:`OffsetTrend`
    robust_noise_std        white-noise standard deviation from a record that also holds signal
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._errors import ParameterValueError
from .._validate import check_time_series
from .._fftlen import fast_length

__all__ = ["OffsetTrend", "estimate_offset_trend", "robust_noise_std"]

#: 1 / Φ⁻¹(3/4): turns a median absolute deviation into a normal standard deviation.
_MAD_TO_STD = 1.482602218505602


@dataclass(frozen=True)
class OffsetTrend:
    """Offset and linear trend of a signal: ``offset + slope_per_s·(t − t_ref_s)``.

    Parameters
    ----------
    offset : float
        Level at ``t_ref_s``, in the signal's unit.
    slope_per_s : float
        Slope in unit per second (0 when estimated with ``linear=False``).
    t_ref_s : float
        Reference time: the mean of the time stamps used (makes offset and slope
        uncorrelated and the least-squares problem well conditioned).
    residual_std : float
        Standard deviation of the residual, ``sqrt(RSS / (n − p))``.
    samples : int
        Number of samples used.
    """

    offset: float
    slope_per_s: float
    t_ref_s: float
    residual_std: float
    samples: int

    def evaluate(self, time_s):
        """The offset-and-trend line at ``time_s`` (scalar or array)."""
        t = np.asarray(time_s, dtype=float)
        if t.ndim == 0:
            return float(self.offset + self.slope_per_s * (t - self.t_ref_s))
        if self.slope_per_s == 0:  # offset only: offset + 0·(t − t_ref) is the offset exactly
            return np.full(t.shape, float(self.offset))
        value = t - self.t_ref_s  # in place from here: one temporary on long records
        value *= self.slope_per_s
        value += self.offset
        return value

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({"offset": self.offset, "slope_per_s": self.slope_per_s,
                         "t_ref_s": self.t_ref_s, "residual_std": self.residual_std,
                         "samples": self.samples})


def estimate_offset_trend(time_s, values, *, linear: bool = True) -> OffsetTrend:
    """Estimate the offset (and linear trend) of a signal by least squares.

    Parameters
    ----------
    time_s : array_like
        Time stamps in seconds (any spacing, same length as ``values``).
    values : array_like
        Signal samples; typically a quiet part of a record.
    linear : bool, default=True
        Fit a straight line; with ``False`` only the offset (the mean) is fitted.

    Returns
    -------
    OffsetTrend
        Offset at the mean time, slope, residual standard deviation.

    Notes
    -----
    Ordinary least squares for ``y = a + b·(t − t̄)``: with the centred time the normal
    equations decouple, ``a = ȳ`` and ``b = Σ(t − t̄)(y − ȳ) / Σ(t − t̄)²``; the
    residual standard deviation uses ``n − p`` degrees of freedom (``p`` = 1 or 2).

    References
    ----------
    Any text on linear regression, e.g. Draper & Smith, *Applied Regression Analysis*.
    """
    t, y = check_time_series(time_s, values, min_length=1)
    p = 2 if linear else 1
    if y.size < p + 1:
        raise ParameterValueError(
            f"values needs at least {p + 1} samples to estimate "
            f"{'offset and trend' if linear else 'an offset'} with a residual; got {y.size}")
    t_ref = float(np.mean(t))
    tc = t - t_ref
    offset = float(np.mean(y))
    slope = 0.0
    if linear:
        stt = float(tc @ tc)
        if stt <= 0.0:
            raise ParameterValueError("time_s must hold at least two distinct times to estimate a trend")
        slope = float(tc @ (y - offset)) / stt
    resid = y - offset - slope * tc
    residual_std = math.sqrt(float(resid @ resid) / (y.size - p))
    return OffsetTrend(offset, slope, t_ref, residual_std, int(y.size))


def robust_noise_std(values) -> float:
    """Estimate the white-noise standard deviation of a record that also holds signal.

    Three robust estimates, each unbiased on pure white Gaussian noise and biased
    *upwards* by signal, are combined by taking the smallest:

    * the third difference of the samples (its variance is 20 s² for white noise),
      through the median absolute deviation;
    * the tail (last 10 %) of the record, through the median absolute deviation;
    * the upper half of the periodogram (above a quarter of the sample rate), through
      the median of ``|X_k|² / n`` (exponentially distributed with mean s², so the
      median is ``s² ln 2``).

    Notes
    -----
    Common practice, no single source: each estimate is only overestimated by
    signal content (a slow signal in the differences, a decay still ringing in the
    tail, a mode above fs/4 in the periodogram), so the minimum is close to the noise
    whenever one of the three sees mostly noise.
    """
    return _robust_noise_std(np.asarray(values, dtype=float))


def _robust_noise_std(x, spectrum=None) -> float:
    """:func:`robust_noise_std` of a float array; ``spectrum`` may give
    ``rfft(x - c, fast_length(x.size))`` for any constant ``c`` (only its upper half is
    used, which ``c`` does not change), so a caller that already holds it saves a
    transform of the whole record.  The zero-padding to a fast length leaves each bin's
    expected power at ``n·σ²`` for white noise of variance σ², so ``power / n`` is still
    the noise variance."""
    n = x.size
    if n < 8:
        return float(np.std(x))
    estimates = []
    d3 = np.diff(x, n=3)  # a temporary: the medians may reorder it (they do not change it)
    level = np.median(d3, overwrite_input=True)
    estimates.append(_MAD_TO_STD * float(np.median(np.abs(d3 - level), overwrite_input=True)) / math.sqrt(20.0))
    tail = x[-max(8, n // 10):]
    estimates.append(_MAD_TO_STD * float(np.median(np.abs(tail - np.median(tail)), overwrite_input=True)))
    if n >= 64:
        spec = np.fft.rfft(x - np.mean(x), fast_length(n)) if spectrum is None else spectrum
        upper = spec[len(spec) // 2:-1] if len(spec) > 4 else spec
        power = (upper.real ** 2 + upper.imag ** 2) / n
        estimates.append(math.sqrt(float(np.median(power, overwrite_input=True)) / math.log(2.0)))
    positive = [e for e in estimates if e > 0.0 and math.isfinite(e)]
    return min(positive) if positive else 0.0
