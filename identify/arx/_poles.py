"""Poles, zeros and DC gain of an ARX model, with first-order (delta-method) intervals.

Discrete poles are the roots of ``A(z) = z^n + a1 z^(n-1) + ... + a_n``; continuous
poles follow by ``s = ln(z) / Ts``.  Intervals propagate the full covariance of
``(a1 .. a_n)`` through the root sensitivity (Guillaume, Schoukens, Pintelon & Kollár,
IEEE Trans. Instrum. Meas. 38(6), 1989)::

    ∂z_i/∂a_k = -z_i^(n-k) / A'(z_i),        ds = dz / (z·Ts)

so ``cov(Re s, Im s) = J Σ_a Jᵀ`` with ``J = [Re h; Im h]``, ``h_k = ∂s_i/∂a_k``.
"""
from __future__ import annotations

import math

import numpy as np

from ..poles import Interval, normal_quantile, pole_with_delta_intervals

__all__ = ["discrete_roots", "root_sensitivity", "continuous_poles", "model_zeros", "dc_gain"]

#: Imaginary parts below this (relative to |z|) are treated as a real root (numerical
#: noise of the root finder); common practice, no source.
REAL_ROOT_TOLERANCE = 1e-9


def discrete_roots(a) -> np.ndarray:
    """Roots of ``A(z)`` from ``a = [1, a1, ..., a_n]``, real ones made exactly real."""
    a = np.asarray(a, dtype=float)
    if a.size < 2:
        return np.empty(0, dtype=complex)
    z = np.roots(a).astype(complex)
    small = np.abs(z.imag) <= REAL_ROOT_TOLERANCE * np.maximum(np.abs(z), 1e-300)
    z[small] = z[small].real
    return z


def root_sensitivity(a, z) -> np.ndarray:
    """Matrix ``G[i, k-1] = ∂z_i/∂a_k = -z_i^(n-k)/A'(z_i)`` (Guillaume et al. 1989)."""
    a = np.asarray(a, dtype=float)
    n = a.size - 1
    z = np.asarray(z, dtype=complex)
    dpoly = np.polyder(a)
    deriv = np.polyval(dpoly, z)
    powers = np.arange(n - 1, -1, -1)  # n-k for k = 1..n
    with np.errstate(divide="ignore", invalid="ignore"):
        return -(z[:, None] ** powers[None, :]) / deriv[:, None]


def continuous_poles(a, cov_a, sample_time_s: float, confidence: float = 0.95):
    """Continuous poles with delta-method intervals from ``a`` and its covariance.

    Parameters
    ----------
    a : array_like
        ``[1, a1, ..., a_n]``.
    cov_a : array_like, shape (n, n)
        Covariance of ``(a1, ..., a_n)`` (the full matrix: correlations matter).
    sample_time_s : float
        Ts.
    confidence : float, default=0.95

    Returns
    -------
    poles : tuple of identify.poles.Pole
        One per real root and one per conjugate pair (``Im s >= 0``), sorted by natural
        frequency; a negative real root maps to ``Im s = π/Ts`` (the Nyquist frequency).
    discrete : numpy.ndarray
        The discrete roots kept, in the same order as ``poles``.
    """
    z_all = discrete_roots(a)
    keep = z_all[z_all.imag >= 0]
    keep = keep[keep != 0]
    if keep.size == 0:
        return (), np.empty(0, dtype=complex)
    g = root_sensitivity(a, keep)
    cov_a = np.atleast_2d(np.asarray(cov_a, dtype=float))
    poles, discrete = [], []
    for zi, gi in zip(keep, g):
        s = complex(np.log(zi) / sample_time_s)
        h = gi / (zi * sample_time_s)
        if np.all(np.isfinite(h)):
            jac = np.vstack([h.real, h.imag])
            cov = jac @ cov_a @ jac.T
        else:  # a repeated root: the first-order perturbation is undefined
            cov = np.full((2, 2), np.inf)
        if not np.all(np.isfinite(cov)):
            cov = np.diag([1e300, 1e300 if zi.imag != 0 else 0.0])
        poles.append(pole_with_delta_intervals(s, cov, confidence, method="delta (root perturbation)"))
        discrete.append(zi)
    order = np.argsort([p.natural_frequency_hz for p in poles], kind="stable")
    return tuple(poles[i] for i in order), np.asarray(discrete)[order]


def model_zeros(b) -> np.ndarray:
    """Discrete zeros: roots of ``b1 z^(nb-1) + ... + b_nb`` (delay zeros at the origin omitted)."""
    b = np.trim_zeros(np.asarray(b, dtype=float), "f")
    if b.size < 2:
        return np.empty(0, dtype=complex)
    return discrete_roots(b / b[0]) if b[0] != 0 else np.empty(0, dtype=complex)


def dc_gain(a, b, cov_ab, confidence: float = 0.95):
    """Steady-state gain ``G(1) = B(1)/A(1)`` with a delta-method interval.

    Parameters
    ----------
    a : array_like
        ``[1, a1, ..., a_na]``.
    b : array_like
        ``[b1, ..., b_nb]``.
    cov_ab : array_like, shape (na + nb, na + nb)
        Covariance of ``(a1..a_na, b1..b_nb)``.

    Notes
    -----
    ``∂G/∂a_k = -B(1)/A(1)²`` and ``∂G/∂b_k = 1/A(1)`` (derived).

    Returns
    -------
    gain : float
        ``nan`` when ``A(1) = 0`` (an integrator).
    interval : identify.poles.Interval or None
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    a1, b1 = float(a.sum()), float(b.sum())
    if b.size == 0 or a1 == 0.0:
        return float("nan"), None
    gain = b1 / a1
    grad = np.concatenate([np.full(a.size - 1, -b1 / a1 ** 2), np.full(b.size, 1.0 / a1)])
    var = float(grad @ np.asarray(cov_ab, dtype=float) @ grad)
    half = normal_quantile(confidence) * math.sqrt(max(var, 0.0))
    return gain, Interval(gain - half, gain + half, confidence, "delta")
