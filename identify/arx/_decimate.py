"""Optional anti-alias filtering and decimation of heavily oversampled records.

Sampled far above its dynamics, an ARX model crowds its poles toward ``z = 1`` and
fits the high-frequency noise instead of the plant; about 10–20 samples per period of
the fastest pole of interest is the usual target (common practice, no source).

The fastest pole is not known before the fit, so the choice uses the output's
spectrum: ``f99``, the frequency below which 99 % of the (centred) output power lies
(Welch estimate), is a conservative first stand-in, above every lightly damped mode
that carries power: ``q1 = floor(fs / (15·f99))``.  A first fit at that rate then gives
the fastest decaying pole; when it still has more than 30 samples per period a second
factor ``q2 = floor(spp/15)`` follows and the job is redone at ``q1·q2``.  A factor
below 2 means no decimation.  Output and input pass through the same zero-phase FIR low-pass
(Hamming-windowed, 20q + 1 taps, cut-off at 0.8 of the new Nyquist frequency, so
the stop band begins near the new Nyquist frequency and little aliases), which leaves their
relation unchanged, before every q-th sample is kept.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["TARGET_SAMPLES_PER_PERIOD", "power_bandwidth_hz", "choose_factor", "refine_factor", "decimate_signals",
           "power_fraction_above"]

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


def decimate_signals(signals, q: int):
    """Low-pass and keep every q-th sample of each signal (same filter for all).

    Returns
    -------
    out : list of numpy.ndarray
        The decimated signals (``None`` passes through).
    first : int
        Index, in the original samples, of the first kept sample (filter edges are
        dropped: ``10q`` samples at each end).
    """
    from scipy.signal import firwin, oaconvolve

    q = int(q)
    if q <= 1:
        return [None if s is None else np.asarray(s, dtype=float).copy() for s in signals], 0
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
