"""Signal-quality checks that may spoil an estimate: clipping and coarse quantisation.

Each check returns a one-line warning string (``"clipping: ..."``,
``"coarse quantisation: ..."``) or ``None``; records carry them in ``Record.warnings``
and estimators may call them again on the segment they use.

Rules (common practice, no source; thresholds are our choice):

* clipping: at the maximum (or minimum) value the channel sits in flat runs of at least
  ``MIN_RUN`` (3) equal samples, at least ``MIN_RUN`` samples in all, and the extreme
  value occurs more than twice as often as the next value inside it (a pile-up at the
  rail rather than a settled plateau with noise spreading over neighbouring levels).
  A channel that changes value on fewer than 5 % of its steps (a step command, a held
  set-point) is flat by design and never called clipped.
* coarse quantisation: the channel takes at most ``MAX_LEVELS`` (32) distinct values
  while holding at least four samples per value.  A switched input (two levels) is
  reported too; the message says that is fine for an input.
"""
from __future__ import annotations

import numpy as np

from ._validate import all_finite

__all__ = ["clipping_warning", "quantisation_warning", "quality_warnings", "MIN_RUN", "MAX_LEVELS"]

MIN_RUN = 3
MAX_LEVELS = 32
_PROBE = 20_000


def _finite(values) -> np.ndarray:
    v = np.asarray(values, dtype=float).ravel()
    return v if all_finite(v) else v[np.isfinite(v)]


def _piecewise_constant(v: np.ndarray) -> bool:
    """True when ``v`` changes value on fewer than 5 % of its steps (a switched signal)."""
    return np.count_nonzero(v[1:] != v[:-1]) < 0.05 * (v.size - 1)


def _runs_at(v: np.ndarray, level: float):
    """Lengths of the runs of consecutive samples equal to ``level``."""
    at = np.concatenate(([False], v == level, [False]))
    edges = np.flatnonzero(np.diff(at.astype(np.int8)))
    return edges[1::2] - edges[0::2]


def _side(v: np.ndarray, level: float, inner):
    runs = _runs_at(v, level)
    long_runs = runs[runs >= MIN_RUN]
    count_at = int(runs.sum())
    if long_runs.size == 0 or long_runs.sum() < MIN_RUN:
        return None
    rest = v[v != level]
    if rest.size == 0:
        return None
    next_level = inner(rest)
    count_next = int(np.count_nonzero(v == next_level))
    if count_at <= 2 * count_next:
        return None
    return count_at, int(long_runs.size), int(long_runs.max())


def clipping_warning(values, name: str = "signal") -> str | None:
    """Warn when a channel shows flat runs at its extremes (a saturated sensor or logger).

    Parameters
    ----------
    values : array_like
        Samples (NaN ignored).
    name : str
        Channel name for the message.

    Returns
    -------
    str or None
        ``"clipping: channel 'x' sits at its maximum 10 for 57 samples (3 flat runs,
        longest 20); the sensor or logger may have saturated"`` or None.
    """
    v = _finite(values)
    if v.size < 2 * MIN_RUN:
        return None
    lo, hi = float(v.min()), float(v.max())
    if lo == hi:
        return None  # constant: flat by design, not clipped
    # a side needs MIN_RUN samples at its extreme value; most records hold each extreme
    # once, and then nothing below can find clipping (a cheap count settles it)
    sides = [(word, level, inner) for word, level, inner in (("maximum", hi, np.max), ("minimum", lo, np.min))
             if np.count_nonzero(v == level) >= MIN_RUN]
    if not sides or _piecewise_constant(v):
        return None  # no pile-up at either extreme, or switched (steps): not clipped
    parts = []
    for word, level, inner in sides:
        found = _side(v, level, inner)
        if found:
            count, runs, longest = found
            parts.append(f"its {word} {level:.6g} for {count} samples ({runs} flat "
                         f"run{'s' if runs != 1 else ''}, longest {longest})")
    if not parts:
        return None
    return (f"clipping: channel {name!r} sits at {' and at '.join(parts)}; the sensor or "
            f"logger may have saturated")


def quantisation_warning(values, name: str = "signal") -> str | None:
    """Warn when a channel takes only a few distinct values (coarse quantisation).

    Parameters
    ----------
    values : array_like
        Samples (NaN ignored).
    name : str
        Channel name for the message.

    Returns
    -------
    str or None
        ``"coarse quantisation: channel 'x' takes only 5 distinct values (step 0.1 over a
        range of 0.4); fine for a switched input, coarse for a measured response"`` or None.
    """
    v = _finite(values)
    if v.size < 8:
        return None
    if v.size > _PROBE:  # cheap probe first: many levels in a subsample settles it
        probe = v[:: v.size // _PROBE + 1]
        if np.unique(probe).size > MAX_LEVELS:
            return None
    levels = np.unique(v)
    if levels.size > MAX_LEVELS or v.size < 4 * levels.size:
        return None
    if levels.size == 1:
        return (f"coarse quantisation: channel {name!r} holds one constant value "
                f"{levels[0]:.6g}; it carries no response")
    with np.errstate(over="ignore", invalid="ignore"):
        step = float(np.min(np.diff(levels)))
        span = float(levels[-1] - levels[0])
    return (f"coarse quantisation: channel {name!r} takes only {levels.size} distinct values "
            f"(step {step:.3g} over a range of {span:.3g}); fine for a switched input, coarse "
            f"for a measured response")


def quality_warnings(channels) -> list:
    """Clipping and quantisation warnings for every channel of a record."""
    return channel_warnings(outputs=channels)


def channel_warnings(outputs=(), inputs=()) -> list:
    """Quality warnings for the channels a job actually analyses.

    Measured responses (``outputs``) are checked for clipping and coarse quantisation;
    inputs only for clipping, since a switched input (a step, a binary sequence) has few
    levels by design.
    """
    out = []
    for ch in outputs:
        for check in (clipping_warning, quantisation_warning):
            text = _checked(ch, check)
            if text:
                out.append(text)
    for ch in inputs:
        text = _checked(ch, clipping_warning)
        if text:
            out.append(text)
    return out


def _checked(channel, check):
    """``check(channel.values, channel.name)``, once per :class:`~identify.Channel` (its
    values are read-only; the result is kept in the channel's cache)."""
    cache = getattr(channel, "_quality_cache", None)
    if cache is None:
        return check(channel.values, channel.name)
    if check.__name__ not in cache:
        cache[check.__name__] = check(channel.values, channel.name)
    return cache[check.__name__]
