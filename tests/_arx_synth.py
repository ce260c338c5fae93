"""Synthetic input/output records with known poles for the ARX tests.

A continuous plant with given modes (fn, ζ) and real poles, unit DC gain, is sampled
with a zero-order hold (``scipy.signal.cont2discrete``), so its discrete poles are
exactly ``z = exp(s·Ts)`` (derived) and its input delay is one sample.
"""
from __future__ import annotations

import numpy as np

from identify.poles import Pole, pole_from_frequency_damping


def plant(modes, real_poles_per_s, sample_time_s):
    """Return ``(b_full, a, poles)``: lfilter-ready numerator/denominator and true Poles.

    The plant is a parallel sum of unit-DC-gain terms, ``ωn²/(s² + 2ζωn s + ωn²)`` per
    mode and ``-r/(s - r)`` per real pole, so every pole shows in the response (as in
    a structure's modal sum), sampled with a zero-order hold.
    """
    from scipy.signal import cont2discrete

    s, terms = [], []
    for fn, zeta in modes:
        p = pole_from_frequency_damping(fn, zeta)
        s += [p, p.conjugate()]
        terms.append((np.array([abs(p) ** 2]), np.real(np.poly([p, p.conjugate()]))))
    for r in real_poles_per_s:
        s.append(complex(r))
        terms.append((np.array([-float(r)]), np.array([1.0, -float(r)])))
    num, den = np.zeros(1), np.ones(1)
    for tn, td in terms:  # n/d + tn/td = (n·td + tn·d)/(d·td)
        num = np.polyadd(np.polymul(num, td), np.polymul(tn, den))
        den = np.polymul(den, td)
    import warnings

    with warnings.catch_warnings():  # leading zeros of the sampled numerator are expected
        warnings.simplefilter("ignore")
        nd, dd, _ = cont2discrete((num, den), sample_time_s, method="zoh")
    nd = np.ravel(nd) / dd[0]
    a = np.asarray(dd, dtype=float) / dd[0]
    poles = sorted((Pole(p.real, p.imag) for p in s if p.imag >= 0), key=lambda p: p.natural_frequency_hz)
    return nd, a, poles


def binary_input(n, rng, hold=1):
    """Random binary ±1 signal, each level held ``hold`` samples."""
    levels = np.where(rng.random(n // hold + 1) < 0.5, -1.0, 1.0)
    return np.repeat(levels, hold)[:n]


def record_signals(modes, real_poles_per_s, sample_time_s, n, *, noise, kind, seed, hold=1):
    """``(y, u, poles, b_full, a)`` with equation-error or output (sensor) noise.

    ``noise`` is the standard deviation of the noise's contribution to the output, as a
    fraction of the noise-free output's (for equation error, of ``e/A``).
    """
    from scipy.signal import lfilter

    rng = np.random.default_rng(seed)
    b, a, poles = plant(modes, real_poles_per_s, sample_time_s)
    u = binary_input(n, rng, hold)
    x = lfilter(b, a, u)
    e = rng.normal(0.0, 1.0, n)
    if kind == "equation":  # e enters before 1/A: scale so that e/A has the asked std
        v = lfilter([1.0], a, e)
        y = x + v * (noise * np.std(x) / np.std(v))
    elif kind == "output":
        y = x + e * noise * np.std(x)
    else:
        raise ValueError(kind)
    return y, u, poles, b, a


def match(estimated, true_poles):
    """For each true pole the estimated pole nearest to it in the s-plane."""
    out = []
    for p in true_poles:
        out.append(min(estimated, key=lambda q: abs(q.s - p.s)))
    return out


def relative_errors(estimated, true_poles):
    """Pairs ``(|Δfn|/fn, |Δζ|/ζ)`` for each true pole (ζ error relative to ζ)."""
    out = []
    for q, p in zip(match(estimated, true_poles), true_poles):
        out.append((abs(q.natural_frequency_hz - p.natural_frequency_hz) / p.natural_frequency_hz,
                    abs(q.damping_ratio - p.damping_ratio) / abs(p.damping_ratio)))
    return out
