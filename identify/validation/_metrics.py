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
    denom = np.linalg.norm(y - y.mean())
    if denom == 0:
        return float("nan")
    return float(100.0 * (1.0 - np.linalg.norm(y - yh) / denom))


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
    return float(np.sqrt(np.mean(v * v))) if v.size else float("nan")
