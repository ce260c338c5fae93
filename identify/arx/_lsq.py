"""Least squares with the parameter covariance, solved on a well-conditioned scale.

Each regressor column is divided by its root-mean-square value before a QR
factorisation (the numpy.polynomial practice of solving in a scaled window and mapping
back), so the covariance is accurate even when inputs and outputs differ by many orders
of magnitude.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._errors import IdentificationError

__all__ = ["LeastSquares", "least_squares"]

#: Columns whose scaled R-diagonal falls below this fraction of the largest are treated
#: as linearly dependent (common practice, no source; numpy.linalg.lstsq uses a similar rcond).
RANK_TOLERANCE = 1e-10


@dataclass(frozen=True)
class LeastSquares:
    """Solution of ``target ≈ Φ θ``.

    Parameters
    ----------
    theta : numpy.ndarray
        Estimated parameters.
    cov : numpy.ndarray
        ``s² (ΦᵀΦ)⁻¹`` with ``s² = RSS / (N - p)``.
    residuals : numpy.ndarray
        ``target - Φ θ``.
    sigma2 : float
        ``s²``, the residual variance with ``N - p`` degrees of freedom.
    loss : float
        ``V = RSS / N`` (the loss the information criteria use).
    rows : int
        N, number of equations.
    """

    theta: np.ndarray
    cov: np.ndarray
    residuals: np.ndarray
    sigma2: float
    loss: float
    rows: int

    @property
    def standard_errors(self) -> np.ndarray:
        return np.sqrt(np.clip(np.diag(self.cov), 0.0, None))


def least_squares(phi, target) -> LeastSquares:
    """Ordinary least squares with covariance ``s²(ΦᵀΦ)⁻¹``.

    Notes
    -----
    With ``D = diag(‖φ_j‖/√N)`` and ``Φ D⁻¹ = QR``, ``θ = D⁻¹ R⁻¹ Qᵀ y`` and
    ``cov θ = s² D⁻¹ R⁻¹ R⁻ᵀ D⁻¹`` (Ljung 1999, §7.3 and §9.3; Golub & Van Loan, §5.3).

    Raises
    ------
    IdentificationError
        When there are no more equations than parameters or the regressors are
        linearly dependent.
    """
    phi = np.asarray(phi, dtype=float)
    y = np.asarray(target, dtype=float)
    n, p = phi.shape
    if n <= p:
        raise IdentificationError(
            f"the model has {p} parameters but only {n} usable samples; "
            "shorten the orders or give a longer record")
    scale = np.sqrt(np.mean(phi * phi, axis=0))
    if np.any(scale == 0):
        bad = int(np.flatnonzero(scale == 0)[0])
        raise IdentificationError(f"regressor column {bad + 1} is identically zero; the data cannot determine it")
    q, r = np.linalg.qr(phi / scale, mode="reduced")
    diag = np.abs(np.diag(r))
    if diag.min() < RANK_TOLERANCE * diag.max():
        raise IdentificationError(
            "the regressors are linearly dependent (the input does not excite every parameter, "
            "or the orders are too high); lower the orders")
    theta_scaled = np.linalg.solve(r, q.T @ y)
    theta = theta_scaled / scale
    residuals = y - phi @ theta
    rss = float(residuals @ residuals)
    sigma2 = rss / (n - p)
    r_inv = np.linalg.solve(r, np.eye(p))
    cov = sigma2 * (r_inv @ r_inv.T) / np.outer(scale, scale)
    return LeastSquares(theta, 0.5 * (cov + cov.T), residuals, sigma2, rss / n, n)
