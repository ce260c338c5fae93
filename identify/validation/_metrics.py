"""Goodness-of-fit numbers shared by every job (one definition each)."""
from __future__ import annotations

import numpy as np

__all__ = ["fit_percent", "r_squared", "rms"]


def fit_percent(measured, model) -> float:
    """NRMSE fit in percent: ``100·(1 - ‖y - ŷ‖ / ‖y - mean(y)‖)``.

    100 % for a perfect model, 0 % for the mean as a model, negative when the model is
    worse than the mean.  (Normalised root-mean-square error; common practice in system
    identification, e.g. Ljung 1999.)
    """
    y = np.asarray(measured, dtype=float)
    yh = np.asarray(model, dtype=float)
    work = y - y.mean()  # one record-length temporary, used twice (long records)
    denom = _norm(work)
    if denom == 0:
        return float("nan")
    np.subtract(y, yh, out=work)
    return float(100.0 * (1.0 - _norm(work) / denom))


def _norm(v) -> float:
    """Euclidean norm of a 1-D array without a temporary (``√(v·v)``)."""
    return float(np.sqrt(np.dot(v, v))) if v.ndim == 1 else float(np.linalg.norm(v))


def r_squared(measured, model) -> float:
    """Coefficient of determination ``1 - SS_res / SS_tot``."""
    y = np.asarray(measured, dtype=float)
    yh = np.asarray(model, dtype=float)
    ss_tot = float(np.sum((y - y.mean()) ** 2))
    if ss_tot == 0:
        return float("nan")
    return float(1.0 - np.sum((y - yh) ** 2) / ss_tot)


def rms(values) -> float:
    """Root mean square."""
    v = np.asarray(values, dtype=float)
    if not v.size:
        return float("nan")
    return _norm(v) / float(np.sqrt(v.size)) if v.ndim == 1 else float(np.sqrt(np.mean(v * v)))
