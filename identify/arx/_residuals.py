"""Residual tests: whiteness (Ljung–Box) and residual–input cross-correlation."""
from __future__ import annotations

import math

import numpy as np

from ..poles import normal_quantile

__all__ = ["ljung_box", "input_cross_correlation", "default_lags", "SIGNIFICANCE"]

#: Level at which the residual tests raise a warning (common practice, no source).
SIGNIFICANCE = 0.01


def default_lags(rows: int) -> int:
    """Lags tested: ``min(20, N/5)``, at least 1 (common practice, no source)."""
    return max(1, min(20, rows // 5))


def ljung_box(residuals, lags: int, model_df: int = 0) -> dict:
    """Ljung–Box portmanteau test of residual whiteness.

    ``Q = N(N+2) Σ_{k=1..m} r_k²/(N-k)`` compared with χ² of ``m - model_df`` degrees of
    freedom (Ljung & Box, Biometrika 65(2), 1978); computed by
    ``statsmodels.stats.diagnostic.acorr_ljungbox``.

    Returns
    -------
    dict
        ``statistic``, ``p_value``, ``lags``, ``model_df``, ``white`` (p >= 0.01).
    """
    from statsmodels.stats.diagnostic import acorr_ljungbox

    e = np.asarray(residuals, dtype=float)
    e = e - e.mean()
    lags = int(max(1, min(lags, e.size - 1)))
    df = int(min(model_df, lags - 1))
    table = acorr_ljungbox(e, lags=[lags], model_df=df)
    q = float(table["lb_stat"].iloc[-1])
    p = float(table["lb_pvalue"].iloc[-1])
    return {"test": "ljung-box", "statistic": q, "p_value": p, "lags": lags, "model_df": df,
            "white": bool(p >= SIGNIFICANCE)}


def input_cross_correlation(residuals, u, first_row: int, max_lag: int) -> dict:
    """Cross-correlation of residuals ``ε(t)`` with past inputs ``u(t-k)``, k = 0..max_lag.

    Under a correct model in open loop ``ε`` is independent of past inputs, and each
    normalised correlation ``r(k)`` has standard deviation ``1/√N`` (Ljung 1999,
    §16.6, from memory).  The bound is two-sided at the 1 % family level, Bonferroni
    over the ``max_lag + 1`` lags: ``|r(k)| <= Φ⁻¹(1 - 0.01/(2(M+1)))/√N``.

    Returns
    -------
    dict
        ``max_abs``, ``lag_of_max``, ``bound``, ``lags``, ``uncorrelated``.
    """
    e = np.asarray(residuals, dtype=float)
    u = np.asarray(u, dtype=float)
    n = e.size
    t = np.arange(first_row, first_row + n)
    e = e - e.mean()
    su = u - u.mean()
    norm_e = math.sqrt(float(e @ e))
    lags = int(max(0, min(max_lag, first_row + n - 2)))
    values = []
    for k in range(lags + 1):
        ok = t - k >= 0
        uk = su[t[ok] - k]
        denom = norm_e * math.sqrt(float(uk @ uk))
        values.append(float(e[ok] @ uk) / denom if denom > 0 else 0.0)
    r = np.abs(np.asarray(values))
    family = 1.0 - SIGNIFICANCE / (lags + 1)
    bound = normal_quantile(family) / math.sqrt(n)
    k_max = int(np.argmax(r))
    return {"test": "residual-input cross-correlation", "max_abs": float(r[k_max]),
            "lag_of_max": k_max, "bound": bound, "lags": lags,
            "uncorrelated": bool(r[k_max] <= bound)}
