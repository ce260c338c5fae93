"""Instrumental-variable refinement of an ARX fit (Söderström & Stoica 1989, ch. 8).

Least squares is biased when noise enters at the output (sensor noise), because the
regressors ``-y(t-k)`` then correlate with the equation error.  Instruments that are
correlated with the noise-free regressors but not with the noise remove the bias:
here the lagged output of the current model simulated from the input alone::

    x̂ = B(q)/A(q) u,   ζ(t) = [-x̂(t-1) .. -x̂(t-na), u(t-nk) .. u(t-nk-nb+1)]
    θ_IV = (Σ ζ_f(t) φ_f(t)ᵀ)⁻¹ Σ ζ_f(t) y_f(t)

where the subscript f marks signals prefiltered by ``1/Â(q)`` of the current model
(the simplified refined IV of Young, Automatica 1976 / Young 2011, which under white
output noise makes the equation error nearly white and the estimate nearly efficient).
The iteration starts from the least-squares model, rebuilds instruments and prefilter
from each new model, and reflects any root of Â outside the unit circle inside it
before simulating with it (so instruments never diverge).

The covariance is the sandwich

    cov θ = M⁻¹ S M⁻ᵀ,   M = Σ ζ_f φ_fᵀ,   S = Σ_|k|≤L w_k Σ_t ζ_f(t) ε(t) ε(t-k) ζ_f(t-k)ᵀ

with Bartlett weights ``w_k = 1 - |k|/(L+1)`` (Newey & West, Econometrica 55(3), 1987),
which stays valid if the filtered equation error is still coloured.
"""
from __future__ import annotations

import numpy as np

from .._errors import IdentificationError

__all__ = ["refine_iv", "search_orders_iv", "iv_lag_window", "reflect_unstable"]

#: Largest |z| allowed for the model that builds instruments and prefilter; roots beyond
#: are reflected to 0.999/z̄ (common practice, no source).
STABILITY_RADIUS = 0.999


#: Instrument updates per candidate in :func:`search_orders_iv` (over-parametrised models
#: wander instead of converging; a few updates rank the orders; common practice, no source).
SEARCH_ITERATIONS = 6


def iv_lag_window(na: int) -> int:
    """L of the Bartlett window: ``max(4·na, 10)`` lags (common practice, no source)."""
    return max(4 * int(na), 10)


def reflect_unstable(a) -> np.ndarray:
    """``a`` with every root of magnitude >= 0.999 reflected to ``0.999·z/|z|²``."""
    a = np.asarray(a, dtype=float)
    if a.size < 2:
        return a
    r = np.roots(a)
    big = np.abs(r) >= STABILITY_RADIUS
    if not big.any():
        return a
    r[big] = STABILITY_RADIUS * r[big] / np.abs(r[big]) ** 2
    return np.real(np.poly(r))


def _orthonormal(z):
    scale = np.sqrt(np.mean(z * z, axis=0))
    scale[scale == 0] = 1.0
    q, _ = np.linalg.qr(z / scale, mode="reduced")
    return q


def _sandwich(z, phi, residuals, lags):
    m = z.T @ phi
    ze = z * residuals[:, None]
    s = ze.T @ ze
    for k in range(1, min(lags, residuals.size - 1) + 1):
        w = 1.0 - k / (lags + 1.0)
        c = ze[k:].T @ ze[:-k]
        s += w * (c + c.T)
    m_inv = np.linalg.inv(m)
    cov = m_inv @ s @ m_inv.T
    return 0.5 * (cov + cov.T)


def refine_iv(fit, y, u, *, iterations: int = 20, tolerance: float = 1e-9, stop: int | None = None):
    """Refine a least-squares :class:`ArxFit` by (refined) instrumental variables.

    Parameters
    ----------
    fit : ArxFit
        The least-squares fit (orders, delay and starting model); a fitted constant is
        refined too (its column of ones passes through the same prefilter).
    y, u : numpy.ndarray
        The same centred output and input the fit used.
    iterations : int, default=20
        Largest number of instrument updates.
    tolerance : float, default=1e-9
        Stop when ``max|Δθ| <= tolerance·(1 + max|θ|)``.
    stop : int, optional
        One past the last sample of the estimation part.

    Returns
    -------
    ArxFit
        With ``method="instrumental variables"``.

    Raises
    ------
    IdentificationError
        Without an input, or when the instruments are not informative.

    References
    ----------
    Söderström, T. and Stoica, P., *System Identification*, 1989, ch. 8.
    Young, P. C., *Recursive Estimation and Time-Series Analysis*, 2nd ed., 2011, ch. 7
    (refined instrumental variables).
    """
    from scipy.signal import lfilter

    from ._fit import assemble_fit
    from ._regressors import regressors
    from ._simulate import simulate

    if u is None or fit.nb == 0:
        raise IdentificationError("the instrumental-variable refinement needs an input channel")
    const = fit.constant is not None
    last = np.size(y) if stop is None else int(stop)
    y = np.asarray(y, dtype=float)[:last]
    u = np.asarray(u, dtype=float)[:last]
    na, nb, nk = fit.na, fit.nb, fit.delay_samples
    first = fit.first_row
    a, b = fit.a, fit.b
    theta = fit.theta
    for _ in range(max(int(iterations), 1)):
        a_s = reflect_unstable(a)
        x_hat = simulate(a_s, b, nk, u)
        yf, uf, xf = (lfilter([1.0], a_s, v) for v in (y, u, x_hat))
        phi, target = regressors(yf, uf, na, nb, nk, start=first)
        z, _ = regressors(xf, uf, na, nb, nk, start=first)
        if const:  # the constant c enters as a column of ones, through the same prefilter
            ones = lfilter([1.0], a_s, np.ones(y.size))[first:]
            phi = np.column_stack([phi, ones])
            z = np.column_stack([z, ones])
        scale = np.sqrt(np.mean(phi * phi, axis=0))
        scale[scale == 0] = 1.0
        # orthonormal instruments Q (Z = QR) give the same estimate, (QᵀΦ)⁻¹Qᵀy, with the
        # condition of Φ alone instead of that of Z times that of Φ
        q_inst = _orthonormal(z)
        m = q_inst.T @ (phi / scale)
        if not np.all(np.isfinite(m)) or np.linalg.cond(m) > 1e12:
            raise IdentificationError(
                "the instruments are not informative (the input excites too little); "
                "the instrumental-variable refinement cannot be computed")
        new = np.linalg.solve(m, q_inst.T @ target) / scale
        a = np.concatenate([[1.0], new[:na]])
        b = new[na:na + nb]
        done = np.max(np.abs(new - theta)) <= tolerance * (1.0 + np.max(np.abs(new)))
        theta = new
        if done:
            break
    residuals = target - phi @ theta
    rows, p = target.size, theta.size
    cov = _sandwich(q_inst, phi / scale, residuals, iv_lag_window(na)) / np.outer(scale, scale)
    # the loss is reported on the unfiltered equations, comparable with least squares
    phi_raw, target_raw = regressors(y, u, na, nb, nk, start=first, constant=const)
    raw = target_raw - phi_raw @ theta
    rss = float(raw @ raw)
    return assemble_fit(theta, cov, raw, rss / (rows - p), rss / rows, rows, first,
                        na, nb, nk, fit.sample_time_s, fit.confidence, const, "instrumental variables")


def search_orders_iv(y, u, candidates, criterion: str, sample_time_s: float, *,
                     start: int | None = None, stop: int | None = None):
    """Rank candidate ``(na, nb, nk)`` by the criterion on each IV model's simulation error.

    Least-squares criteria over-estimate the order under output noise (the extra poles
    model the coloured equation error) and can misplace the delay; an
    instrumental-variable model is judged instead by its simulation error ``y - ŷ``
    (initial state fitted, see :func:`simulate_with_estimated_state`) over a common
    sample, with the same AIC/BIC/FPE formulas and ``d = na + nb``.  Each candidate gets
    at most ``SEARCH_ITERATIONS`` instrument updates; the chosen one is refined fully
    afterwards.

    Parameters
    ----------
    y, u : numpy.ndarray
        Centred output and input.
    candidates : iterable of (na, nb, nk)
    criterion : {"aic", "aicc", "bic", "fpe"}
    sample_time_s : float
    start : int, optional
        First sample of the common sample (default: the largest lag of the candidates);
        give the same value to compare rows of separate calls.
    stop : int, optional
        One past the last sample of the estimation part.

    Returns
    -------
    rows : list of dict
        As :func:`search_orders`, with ``"loss"`` the mean squared simulation error and
        ``"estimator": "instrumental variables"``; best first.
    """
    from ._fit import fit_arx
    from ._orders import information_criteria
    from ._regressors import max_lag
    from ._simulate import simulate_with_estimated_state

    y = np.asarray(y, dtype=float)
    u = np.asarray(u, dtype=float)
    last = y.size if stop is None else int(stop)
    candidates = sorted({(int(na), int(nb), int(nk)) for na, nb, nk in candidates
                         if int(na) >= 0 and int(nb) >= 1 and int(nk) >= 0})
    if not candidates:
        return []
    if start is None:
        start = max(max_lag(na, nb, nk) for na, nb, nk in candidates)
    rows = []
    for na, nb, nk in candidates:
        try:
            ls = fit_arx(y[:last], u[:last], na, nb, nk, sample_time_s, start=start, constant=True)
            iv = refine_iv(ls, y, u, stop=last, iterations=SEARCH_ITERATIONS)
        except IdentificationError:
            continue
        with np.errstate(over="ignore", invalid="ignore"):
            sim = simulate_with_estimated_state(iv.a, iv.b, nk, u[:last], y[:last], start, last,
                                                constant=iv.constant or 0.0)
        err = (y[:last] - sim)[start:]
        with np.errstate(over="ignore", invalid="ignore"):
            loss = float(np.mean(err * err))
        if not np.isfinite(loss):  # a diverging simulation: not a candidate
            continue
        d = na + nb
        row = {"na": na, "nb": nb, "delay_samples": nk, "parameters": d, "loss": loss,
               "estimator": "instrumental variables"}
        row.update(information_criteria(loss, err.size, d))
        rows.append(row)
    rows.sort(key=lambda r: (r[criterion], r["parameters"]))
    for i, r in enumerate(rows):
        r["selected"] = i == 0
    return rows
