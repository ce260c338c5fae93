"""Simulation (not one-step prediction) and one-step prediction of an ARX model."""
from __future__ import annotations

import numpy as np

__all__ = ["simulate", "simulate_with_estimated_state", "predict_one_step", "numerator"]


def numerator(b, delay: int) -> np.ndarray:
    """``[0]*nk + [b1, ..., b_nb]``: B(q) as a polynomial in q⁻¹ (``lfilter`` order)."""
    return np.concatenate([np.zeros(int(delay)), np.asarray(b, dtype=float)])


def simulate(a, b, delay: int, u, y_initial=None, *, constant: float = 0.0):
    """Simulate ``A(q) ŷ = B(q) u + c`` driven by ``u`` alone (no measured outputs).

    Parameters
    ----------
    a : array_like
        ``[1, a1, ..., a_na]``.
    b : array_like
        ``[b1, ..., b_nb]`` (empty for no input).
    delay : int
        nk in samples.
    u : array_like or None
        Input samples (``None`` for a pure autoregression: the free response).
    y_initial : array_like, optional
        Measured outputs that set the initial state: the first ``m`` samples of the
        result are these values and the simulation continues from them, with the
        input history ``u[:m]`` (the ARX state is past outputs and past inputs).
    constant : float, default=0.0

    Returns
    -------
    numpy.ndarray
        Simulated output, the length of ``u`` (or of ``y_initial`` plus nothing, for AR).
    """
    from scipy.signal import lfilter, lfiltic

    a = np.asarray(a, dtype=float)
    bn = numerator(b, delay) if np.size(b) else np.zeros(1)
    if u is None:
        from .._errors import ParameterValueError

        raise ParameterValueError("simulate needs an input (a pure autoregression has only a free response)")
    u = np.asarray(u, dtype=float)
    n = u.size
    # a constant c shifts the equilibrium by c/A(1): simulate the deviation, add it back
    offset = float(constant) / float(a.sum()) if constant else 0.0
    out = np.empty(n)
    m = 0 if y_initial is None else min(int(np.size(y_initial)), n)
    out[:m] = np.asarray(y_initial, dtype=float)[:m] if m else out[:0]
    if m == n:
        return out
    if m == 0:
        return lfilter(bn, a, u) + offset
    y_hist = (out[m - 1::-1] - offset)[: a.size - 1]  # most recent first, as lfiltic wants
    u_hist = u[m - 1::-1][: bn.size - 1]
    zi = lfiltic(bn, a, y_hist, u_hist)
    if zi.size == 0:
        out[m:] = lfilter(bn, a, u[m:]) + offset
    else:
        out[m:] = lfilter(bn, a, u[m:], zi=zi)[0] + offset
    return out


def predict_one_step(a, b, delay: int, y, u=None, *, constant: float = 0.0):
    """One-step-ahead prediction ``ŷ(t|t-1) = y(t) - A(q)y(t) + B(q)u(t) + c``.

    The first ``max_lag`` samples (no full history) are returned as measured.
    """
    from scipy.signal import lfilter

    from ._regressors import max_lag

    a = np.asarray(a, dtype=float)
    y = np.asarray(y, dtype=float)
    pred = y - lfilter(a, [1.0], y) + float(constant)
    nb = np.size(b)
    if nb:
        pred = pred + lfilter(numerator(b, delay), [1.0], np.asarray(u, dtype=float))
    m = max_lag(a.size - 1, nb, delay)
    pred[:m] = y[:m]
    return pred


def simulate_with_estimated_state(a, b, delay: int, u, y, first: int, stop: int, *,
                                  constant: float = 0.0):
    """Simulate from the input with the initial state fitted to the measured output.

    The response to the input before the record and to the plant's initial state
    obeys ``A(q) y_free = 0`` once the first ``first`` samples have passed, so it is a
    combination of the ``na`` free responses ``h_k = (1/A) δ(t - k)``, k = 0..na-1.
    Their weights are fitted by least squares to ``y - y_forced`` over the samples
    ``first .. stop-1`` (the estimation part: the hold-out part is never used), so the
    simulation carries no transient from a noisy measured initial condition.

    ``constant`` is the model's constant c, an extra input of ones through ``1/A``.

    Returns
    -------
    numpy.ndarray
        ``y_forced + H c`` over the whole length of ``u``.
    """
    from scipy.signal import lfilter

    a = np.asarray(a, dtype=float)
    u = np.asarray(u, dtype=float)
    y = np.asarray(y, dtype=float)
    n = u.size
    forced = lfilter(numerator(b, delay), a, u)
    if constant:
        forced = forced + lfilter([float(constant)], a, np.ones(n))
    na = a.size - 1
    if na == 0:
        return forced
    impulses = np.zeros((n, na))
    impulses[np.arange(na), np.arange(na)] = 1.0
    basis = lfilter([1.0], a, impulses, axis=0)
    rows = slice(int(first), int(stop))
    h = basis[rows]
    if not np.all(np.isfinite(h)) or not np.all(np.isfinite(forced)):
        return forced
    weights, *_ = np.linalg.lstsq(h, (y - forced)[rows], rcond=1e-10)
    return forced + basis @ weights
