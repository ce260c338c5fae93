"""Order and delay selection by information criteria over a common sample.

Every candidate ``(na, nb, nk)`` is fitted to the *same* equations, those from
``t0 = max(na_max, nk_max + nb_max - 1)`` on, so that the losses are comparable
(Ljung 1999, §16.4).  With ``V = RSS/N`` and ``d = na + nb`` parameters:

    AIC  = N ln V + 2d                        (Akaike, IEEE TAC 19(6), 1974)
    AICc = AIC + 2d(d+1)/(N-d-1)              (Hurvich & Tsai, Biometrika 76(2), 1989)
    BIC  = N ln V + d ln N                    (Schwarz, Ann. Stat. 6(2), 1978)
    FPE  = V (1 + d/N)/(1 - d/N)              (Akaike, Ann. Inst. Stat. Math. 21, 1969)

The fits share one Gram matrix of all lagged columns (scaled to unit RMS), so the
whole grid costs little more than one large fit.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["CRITERIA", "information_criteria", "search_orders", "order_scan"]

CRITERIA = ("aic", "aicc", "bic", "fpe")


def information_criteria(loss: float, rows: int, parameters: int) -> dict:
    """AIC, AICc, BIC and FPE from ``V = RSS/N``, ``N`` and ``d`` (see module notes)."""
    n, d = float(rows), float(parameters)
    v = max(float(loss), 1e-300)
    aic = n * math.log(v) + 2.0 * d
    aicc = aic + (2.0 * d * (d + 1.0) / (n - d - 1.0) if n - d - 1.0 > 0 else math.inf)
    bic = n * math.log(v) + d * math.log(n)
    fpe = v * (1.0 + d / n) / (1.0 - d / n) if d < n else math.inf
    return {"aic": aic, "aicc": aicc, "bic": bic, "fpe": fpe}


class _Gram:
    """Gram matrix of -y(t-1..-na_max) and u(t-0 .. t-L) over the common rows."""

    def __init__(self, y, u, na_max, u_lags, start, stop):
        from ._regressors import regressors

        nb_cols = u_lags if u is not None else 0
        phi, target = regressors(y, u, na_max, nb_cols, 0, start=start, stop=stop)
        scale = np.sqrt(np.mean(phi * phi, axis=0)) if phi.size else np.ones(0)
        scale[scale == 0] = 1.0
        x = phi / scale
        self.rows = target.size
        self.na_max = na_max
        self.gram = x.T @ x
        self.cross = x.T @ target
        self.yy = float(target @ target)
        self.scale = scale

    def columns(self, na, nb, nk):
        return list(range(na)) + [self.na_max + nk + k for k in range(nb)]

    def solve(self, na, nb, nk):
        """θ (in physical units) and RSS of one candidate; ``None`` when singular."""
        cols = self.columns(na, nb, nk)
        if not cols:
            return np.zeros(0), self.yy
        g = self.gram[np.ix_(cols, cols)]
        c = self.cross[cols]
        try:
            theta = np.linalg.solve(g, c)
        except np.linalg.LinAlgError:
            return None
        if np.linalg.cond(g) > 1e12:
            return None
        rss = max(self.yy - float(theta @ c), 0.0)
        return theta / self.scale[cols], rss


def search_orders(y, u, na_values, nb_values, delay_values, criterion: str = "aic", *,
                  stop: int | None = None):
    """Fit every candidate on a common sample and rank them.

    Parameters
    ----------
    y, u : numpy.ndarray
        Output and input (``u=None`` with ``nb_values=(0,)`` for an autoregression).
    na_values, nb_values, delay_values : sequence of int
        Candidate orders and delays.
    criterion : {"aic", "aicc", "bic", "fpe"}
    stop : int, optional
        One past the last equation row (the end of the estimation part).

    Returns
    -------
    rows : list of dict
        One per candidate that could be fitted: ``na``, ``nb``, ``delay_samples``,
        ``parameters``, ``loss``, ``aic``, ``aicc``, ``bic``, ``fpe``, ``selected``;
        sorted by the chosen criterion (ties: fewer parameters first).
    samples : int
        N, the common number of equations.
    """
    na_values = sorted({int(v) for v in na_values})
    nb_values = sorted({int(v) for v in nb_values}) if u is not None else [0]
    delay_values = sorted({int(v) for v in delay_values}) if u is not None else [0]
    na_max = max(na_values)
    u_lags = max(delay_values) + max(nb_values) if u is not None else 0
    start = max(na_max, u_lags - 1, 0)
    gram = _Gram(y, u, na_max, u_lags, start, stop)
    rows = []
    for na in na_values:
        for nb in nb_values:
            for nk in delay_values:
                d = na + nb
                if d == 0 or d >= gram.rows - 1:
                    continue
                solved = gram.solve(na, nb, nk)
                if solved is None:
                    continue
                _, rss = solved
                loss = rss / gram.rows
                row = {"na": na, "nb": nb, "delay_samples": nk, "parameters": d, "loss": loss}
                row.update(information_criteria(loss, gram.rows, d))
                rows.append(row)
    rows.sort(key=lambda r: (r[criterion], r["parameters"]))
    for i, r in enumerate(rows):
        r["selected"] = i == 0
    return rows, gram.rows


def order_scan(y, u, orders, delay: int, sample_time_s: float, *, nb_equal: bool = True,
               stop: int | None = None):
    """Continuous poles of the LS fit at each order, for a pole-stability plot.

    For an input/output model ``na = nb = order`` at the chosen delay; for an
    autoregression ``na = order``.  Returns ``[{"order": n, "poles": [[re, im], ...]}]``
    with ``im >= 0`` in rad/s.
    """
    from ._poles import discrete_roots

    orders = sorted({int(v) for v in orders if int(v) > 0})
    if not orders:
        return []
    top = max(orders)
    gram = _Gram(y, u, top, (delay + top) if u is not None else 0, max(top, delay + top - 1 if u is not None else 0), stop)
    out = []
    for n in orders:
        solved = gram.solve(n, n if u is not None else 0, delay if u is not None else 0)
        if solved is None:
            continue
        theta, _ = solved
        z = discrete_roots(np.concatenate([[1.0], theta[:n]]))
        z = z[(z.imag >= 0) & (z != 0)]
        s = np.log(z) / sample_time_s
        s = s[np.argsort(np.abs(s))]
        out.append({"order": n, "poles": [[float(v.real), float(v.imag)] for v in s]})
    return out
