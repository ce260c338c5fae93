"""Optional decimation of heavily oversampled records.

Sampled far above its dynamics, an ARX model crowds its poles toward ``z = 1`` and
fits the high-frequency noise instead of the plant; about 10–20 samples per period of
the fastest pole of interest is the usual target (common practice, no source).

Factor.  The fastest pole is not known before the fit, so the first choice uses the
output's spectrum: ``f99``, the frequency below which 99 % of the (centred) output
power lies (Welch estimate), a conservative stand-in above every lightly damped mode
that carries power: ``q1 = floor(fs / (15·f99))``.  A first fit at that rate gives the
fastest decaying pole; when it still has more than 30 samples per period a second
factor ``q2 = floor(spp/15)`` follows and the job is redone at ``q1·q2``.  A factor
below 2 means no decimation.

How.  The relation between input and output must survive:

* an input *held* constant over runs of whole multiples of q samples (a clocked binary
  signal, a staircase) is subsampled on its own clock without any filter: the sampled
  plant (zero-order hold) is then exact at the new rate, and white output noise stays
  white (its power folds into the kept band);
* any other input and the output pass through the same zero-phase FIR low-pass
  (Hamming window, ``20q + 1`` taps, cut-off at 0.8 of the new Nyquist frequency), and
  every q-th sample is kept.  This keeps the relation only for what lies inside the
  kept band, so the automatic choice does not decimate further than leaves 95 % of the
  input's power inside it.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["TARGET_SAMPLES_PER_PERIOD", "power_bandwidth_hz", "choose_factor", "refine_factor",
           "decimate_signals", "power_fraction_above", "input_limited_factor", "hold_period",
           "largest_divisor"]

#: Samples per period of f99 aimed at by the automatic choice.
TARGET_SAMPLES_PER_PERIOD = 15.0


def power_bandwidth_hz(y, sample_time_s: float, fraction: float = 0.99) -> float:
    """Frequency below which ``fraction`` of the centred signal's power lies (Hz)."""
    from scipy.signal import welch

    y = np.asarray(y, dtype=float)
    f, p = welch(y - y.mean(), fs=1.0 / sample_time_s, nperseg=min(y.size, 1024), detrend="constant")
    p = p.copy()
    p[0] = 0.0
    total = p.sum()
    if total <= 0:
        return float(f[-1])
    k = int(np.searchsorted(np.cumsum(p) / total, fraction))
    return float(f[min(k, f.size - 1)])


def choose_factor(y, sample_time_s: float, *, minimum_samples: int = 200) -> tuple:
    """Return ``(q, f99_hz)``: the automatic decimation factor and the bandwidth it used.

    The factor is capped so that at least ``minimum_samples`` samples remain.
    """
    f99 = power_bandwidth_hz(y, sample_time_s)
    fs = 1.0 / sample_time_s
    if f99 <= 0:
        return 1, f99
    q = int(math.floor(fs / (TARGET_SAMPLES_PER_PERIOD * f99)))
    q = min(q, max(1, np.size(y) // minimum_samples))
    return max(q, 1), f99


def decimate_signals(signals, q: int, *, hold_phase: int | None = None):
    """Keep every q-th sample of each signal, after the same anti-alias filter for all.

    Parameters
    ----------
    signals : sequence of array_like or None
        Signals on one time base (``None`` passes through).
    q : int
        Decimation factor.
    hold_phase : int, optional
        The input is held constant over runs of whole multiples of ``q`` samples that
        start at ``hold_phase`` (mod q), see :func:`hold_period`: then every q-th sample
        from ``hold_phase`` on is kept *without* filtering, which keeps the sampled
        plant (zero-order hold) exact at the new rate.

    Returns
    -------
    out : list of numpy.ndarray
        The decimated signals.
    first : int
        Index, in the original samples, of the first kept sample (with the filter its
        edges are dropped: ``10q`` samples at each end).
    """
    from scipy.signal import firwin, oaconvolve

    q = int(q)
    if q <= 1:
        return [None if s is None else np.asarray(s, dtype=float).copy() for s in signals], 0
    if hold_phase is not None:
        first = int(hold_phase) % q
        return [None if s is None else np.asarray(s, dtype=float)[first::q].copy() for s in signals], first
    taps = firwin(20 * q + 1, 0.8 / q)
    half = taps.size // 2
    out = []
    for s in signals:
        if s is None:
            out.append(None)
            continue
        x = np.asarray(s, dtype=float)
        mean = x.mean()
        filtered = oaconvolve(x - mean, taps, mode="same") + mean
        out.append(filtered[half: x.size - half: q])
    return out, half


def hold_period(u) -> tuple:
    """``(g, phase)``: the input changes only at samples ``phase + k·g``.

    ``g`` is the greatest common divisor of the spacings between the samples at which
    the input changes (a clocked binary signal held ``h`` samples gives a multiple of
    ``h``); ``(1, 0)`` for an input that is not held (or changes at most once).
    """
    u = np.asarray(u, dtype=float)
    changes = np.flatnonzero(np.diff(u) != 0) + 1
    if changes.size < 2:
        return 1, 0
    g = int(np.gcd.reduce(np.diff(changes)))
    return (g, int(changes[0] % g)) if g >= 2 else (1, 0)


def largest_divisor(g: int, limit: int, multiple_of: int = 1) -> int:
    """Largest divisor of ``g`` that is ``<= limit`` and a multiple of ``multiple_of`` (or 1)."""
    best = 1
    for d in range(1, int(limit) + 1):
        if g % d == 0 and d % multiple_of == 0:
            best = d
    return best


def refine_factor(fit, sample_time_s: float, samples: int, *, minimum_samples: int = 200) -> int:
    """Second pass of the automatic choice: extra factor from the fitted poles.

    The fastest decaying pole of a first fit (Nyquist artefacts, ``z < 0``, left out)
    sets ``spp = 1/(fn·Ts)`` samples per period; when ``spp`` exceeds twice the target
    the extra factor is ``floor(spp / 15)`` (capped so ``minimum_samples`` remain),
    otherwise 1.
    """
    fastest = 0.0
    for pole, z in zip(fit.poles, fit.discrete_poles):
        if z.imag == 0 and z.real < 0:
            continue
        if pole.real < 0:
            fastest = max(fastest, pole.natural_frequency_hz)
    if fastest <= 0:
        return 1
    spp = 1.0 / (fastest * sample_time_s)
    if spp <= 2 * TARGET_SAMPLES_PER_PERIOD:
        return 1
    q = int(math.floor(spp / TARGET_SAMPLES_PER_PERIOD))
    q = min(q, max(1, int(samples) // minimum_samples))
    return max(q, 1)


def power_fraction_above(x, sample_time_s: float, frequency_hz: float) -> float:
    """Fraction of the centred signal's power above ``frequency_hz`` (Welch estimate)."""
    from scipy.signal import welch

    x = np.asarray(x, dtype=float)
    f, p = welch(x - x.mean(), fs=1.0 / sample_time_s, nperseg=min(x.size, 1024), detrend="constant")
    total = p[1:].sum()
    return float(p[f > frequency_hz].sum() / total) if total > 0 else 0.0


def input_limited_factor(u, sample_time_s: float, q: int, share: float = 0.05) -> int:
    """Largest factor ``<= q`` that leaves at most ``share`` of the input's power above the band.

    The kept band ends at 0.8 of the new Nyquist frequency, ``0.4/(q·Ts)``.  An input
    with much power above it (a fast binary signal) would not fit the sampled plant
    after decimation, so the automatic choice does not decimate that far.
    """
    for factor in range(int(q), 1, -1):
        if power_fraction_above(u, sample_time_s, 0.4 / (factor * sample_time_s)) <= share:
            return factor
    return 1
