"""Time-base checks for records read from files, and resampling onto a uniform grid.

Estimators need a uniform sample interval.  Logged time stamps are checked in this
order; the first failed check raises :class:`~identify.RecordError` naming the line:

1. every stamp is finite;
2. stamps strictly increase (a repeated stamp is reported as a duplicate, a smaller one
   as time going backwards);
3. no gap: no interval longer than ``GAP_FACTOR`` (1.5) times the median interval.
   Poleprint never interpolates across a gap;
4. jitter: the largest deviation of a stamp from the least-squares uniform grid
   ``t_k = a + k Ts``, as a fraction of ``Ts``.  Deviations within the print rounding
   of the time column (0.6 of its resolution, at most Ts/2), or under 1 ppm of ``Ts``,
   count as uniform; up to
   ``JITTER_LIMIT`` (2 %) the channels are resampled onto the uniform grid by linear
   interpolation (reported in the record's notes); beyond that the time base is
   rejected.

The 1.5x gap rule is common practice (no source); the 2 % jitter limit is our choice:
linear interpolation of a shift of 2 % of Ts changes a sinusoid at a quarter of the
sample rate by at most about sin(2*pi*0.25*0.02) ~ 3 % of its amplitude, and much less
at the low frequencies that free-decay and step records hold.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._errors import RecordError
from ._validate import all_finite

__all__ = ["GAP_FACTOR", "JITTER_LIMIT", "TimeBase", "check_time_base", "resample"]

GAP_FACTOR = 1.5
JITTER_LIMIT = 0.02
UNIFORM_PPM = 1e-6


@dataclass(frozen=True)
class TimeBase:
    """The uniform time base chosen for a record.

    Parameters
    ----------
    start_s : float
        First stamp (seconds).
    sample_time_s : float
        Uniform interval Ts (seconds), the least-squares slope of stamp against index.
    samples : int
        Number of samples on the uniform grid.
    jitter_fraction : float
        Largest deviation of a stamp from the fitted uniform grid, as a fraction of Ts.
    resampled : bool
        True when the channels must be interpolated onto the grid.
    """

    start_s: float
    sample_time_s: float
    samples: int
    jitter_fraction: float
    resampled: bool

    @property
    def grid_s(self) -> np.ndarray:
        return self.start_s + self.sample_time_s * np.arange(self.samples)

    def note(self) -> str | None:
        if not self.resampled:
            return None
        return (f"time base: stamps deviate by up to {100 * self.jitter_fraction:.3g} % of the "
                f"{self.sample_time_s:.6g} s interval; resampled onto a uniform "
                f"{1 / self.sample_time_s:.6g} Hz grid by linear interpolation")


def _line(line_of, row: int) -> int:
    return int(line_of(row)) if line_of is not None else row + 1


def check_time_base(time_s, *, resolution_s: float = 0.0, line_of=None, source=None,
                    name: str = "time") -> TimeBase:
    """Check logged time stamps and choose a uniform time base (rules in the module notes).

    Parameters
    ----------
    time_s : array_like
        Time stamps in seconds, one per data row.
    resolution_s : float, default=0.0
        Print resolution of the stamps in seconds (e.g. 0.001 for ``0.123``).
    line_of : callable, optional
        Maps a 0-based data row to the 1-based line of the file (for messages).
    source : str, optional
        File path attached to errors.
    name : str, default="time"
        Name of the time column (for messages).

    Returns
    -------
    TimeBase

    Raises
    ------
    RecordError
        On a non-finite, repeated, decreasing, gapped or strongly jittered stamp.
    """
    with np.errstate(over="ignore", invalid="ignore"):  # huge stamps: judged, not warned
        return _check(np.asarray(time_s, dtype=float), resolution_s, line_of, source, name)


#: the checks run over blocks of this many stamps, so that a long record needs no
#: record-length temporaries (the same results as whole-array operations).  Not smaller:
#: each numpy call may wait for the interpreter lock while the command line imports lmfit
#: in another thread: a 2,000,000-stamp check beside a busy Python thread took 0.33 s in
#: blocks of 65,536 against 0.08 s in blocks of 1,048,576 (docs/decay.md)
BLOCK = 1 << 20


def _blocks(n):
    return ((a, min(n, a + BLOCK)) for a in range(0, n, BLOCK))


def _check(t, resolution_s, line_of, source, name) -> TimeBase:
    n = t.size
    if n < 2:
        raise RecordError(f"only {n} time stamp(s); a record needs at least 2 samples", source)
    dt_min, dt_max = np.inf, -np.inf
    if not all_finite(t):
        for a, b in _blocks(n):
            bad = ~np.isfinite(t[a:b])
            if bad.any():
                i = a + int(np.argmax(bad))
                raise RecordError(f"time column {name!r}: missing or non-finite stamp at line "
                                  f"{_line(line_of, i)}", source)
    for a, b in _blocks(n - 1):  # intervals t[i+1] - t[i], i in [a, b)
        dt = t[a + 1:b + 1] - t[a:b]
        nonpos = dt <= 0
        if nonpos.any():
            i = a + int(np.argmax(nonpos)) + 1
            if t[i] == t[i - 1]:
                raise RecordError(f"duplicate time stamp {t[i]:.10g} s at line {_line(line_of, i)} "
                                  f"(same as line {_line(line_of, i - 1)}); stamps must increase", source)
            raise RecordError(f"time goes backwards at line {_line(line_of, i)} ({t[i]:.10g} s after "
                              f"{t[i - 1]:.10g} s on line {_line(line_of, i - 1)}); stamps must increase",
                              source)
        dt_min, dt_max = min(dt_min, float(dt.min())), max(dt_max, float(dt.max()))
    # no interval beyond GAP_FACTOR x the smallest means none beyond GAP_FACTOR x the
    # median either: the median (a partial sort of every interval) is then not needed
    if dt_max > GAP_FACTOR * dt_min:
        dt = np.diff(t)
        median = float(np.median(dt))
        big = dt > GAP_FACTOR * median
        if big.any():
            i = int(np.argmax(big)) + 1
            raise RecordError(
                f"gap in the time base at line {_line(line_of, i)}: {dt[i - 1]:.6g} s since the "
                f"previous stamp, {dt[i - 1] / median:.3g} times the median interval {median:.6g} s; "
                f"gaps are never interpolated (split the record or use a gap-free part)", source)
        del dt, big
    # least-squares line through (k, t_k - t_0), then the largest deviation from it
    t0 = float(t[0])
    k_mean = (n - 1) / 2.0
    sum_k_rel = sum_rel = 0.0
    for a, b in _blocks(n):
        rel = t[a:b] - t0
        sum_k_rel += float(np.dot(np.arange(a, b, dtype=float), rel))
        sum_rel += float(rel.sum())
    slope = float((sum_k_rel - k_mean * sum_rel) / (n * (n * n - 1.0) / 12.0))
    intercept = float(sum_rel / n - slope * k_mean)
    worst, dev_worst = 0, -1.0
    for a, b in _blocks(n):
        k = np.arange(a, b, dtype=float)
        k *= slope
        k += intercept
        np.subtract(t[a:b] - t0, k, out=k)
        dev = np.abs(k, out=k)
        i = int(np.argmax(dev))
        if dev[i] > dev_worst:
            worst, dev_worst = a + i, float(dev[i])
    slope = float(f"{slope:.12g}")  # drop float noise of unit conversion (1e-12 relative)
    jitter = float(dev_worst / slope)
    eps = 64 * np.finfo(float).eps * max(abs(float(t[0])), abs(float(t[-1])))
    if dev_worst <= max(min(0.6 * resolution_s, 0.5 * slope), UNIFORM_PPM * slope) + eps:
        return TimeBase(float(t[0]), slope, n, jitter, False)
    if jitter > JITTER_LIMIT:
        raise RecordError(
            f"irregular time base: the stamp at line {_line(line_of, worst)} is "
            f"{100 * jitter:.3g} % of the {slope:.6g} s interval off a uniform grid (more than "
            f"the {100 * JITTER_LIMIT:g} % that is resampled)", source)
    samples = int(np.floor((t[-1] - t[0]) / slope * (1 + 1e-12))) + 1
    return TimeBase(float(t[0]), slope, max(samples, 2), jitter, True)


def resample(time_s, values, base: TimeBase) -> np.ndarray:
    """Linear interpolation of ``values`` (logged at ``time_s``) onto ``base.grid_s``."""
    t = np.asarray(time_s, dtype=float)
    v = np.asarray(values, dtype=float)
    return np.interp(base.grid_s, t, v)
