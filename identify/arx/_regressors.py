"""Lagged regressors of the ARX equation, built on scaled data.

The model (Ljung 1999, §4.2; Söderström & Stoica 1989, §6.2)::

    y(t) + a1 y(t-1) + ... + a_na y(t-na) = b1 u(t-nk) + ... + b_nb u(t-nk-nb+1) [+ c] + e(t)

is written as the linear regression ``y(t) = φ(t)ᵀ θ + e(t)`` with

    φ(t) = [-y(t-1) ... -y(t-na), u(t-nk) ... u(t-nk-nb+1), (1)]
    θ    = [a1 ... a_na, b1 ... b_nb, (c)]
"""
from __future__ import annotations

import numpy as np

__all__ = ["max_lag", "regressors", "parameter_names"]


def max_lag(na: int, nb: int, delay: int) -> int:
    """Largest lag the regression needs: ``max(na, nk + nb - 1)`` (0 when nothing lags)."""
    return max(int(na), int(delay) + int(nb) - 1 if nb > 0 else 0, 0)


def parameter_names(na: int, nb: int, constant: bool = False) -> list:
    """Names of θ's entries: ``a1..a_na, b1..b_nb`` and ``c`` for a constant."""
    names = [f"a{k}" for k in range(1, na + 1)] + [f"b{k}" for k in range(1, nb + 1)]
    return names + (["c"] if constant else [])


def regressors(y, u, na: int, nb: int, delay: int, *, start: int | None = None,
               stop: int | None = None, constant: bool = False):
    """Return ``(Φ, target)`` for the rows ``t = start .. stop-1``.

    Parameters
    ----------
    y : numpy.ndarray
        Output samples.
    u : numpy.ndarray or None
        Input samples (``None`` with ``nb = 0``: a pure autoregression).
    na, nb, delay : int
        Orders of A and B and the input delay nk in samples.
    start : int, optional
        First row; defaults to :func:`max_lag`, the first row with every lag available.
        Give a larger common start to compare several orders on the same sample.
    stop : int, optional
        One past the last row (default: the end of ``y``).
    constant : bool, default=False
        Append a column of ones.

    Returns
    -------
    phi : numpy.ndarray, shape (rows, na + nb [+ 1])
    target : numpy.ndarray, shape (rows,)
    """
    y = np.asarray(y, dtype=float)
    n = y.size
    first = max_lag(na, nb, delay) if start is None else int(start)
    last = n if stop is None else int(stop)
    rows = max(last - first, 0)
    t = np.arange(first, first + rows)
    cols = []
    for k in range(1, na + 1):
        cols.append(-y[t - k])
    if nb > 0:
        u = np.asarray(u, dtype=float)
        for k in range(nb):
            cols.append(u[t - delay - k])
    if constant:
        cols.append(np.ones(rows))
    phi = np.column_stack(cols) if cols else np.empty((rows, 0))
    return phi, y[t].copy()
