"""Order and delay selection by AIC, AICc, BIC and FPE over a common sample."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.signal import lfilter

from identify.arx import fit_arx, search_orders
from identify.arx._orders import information_criteria, order_scan


def _delayed_plant(seed, n=3000, delay=3):
    # y(t) - 1.5 y(t-1) + 0.7 y(t-2) = 1.0 u(t-3) + 0.5 u(t-4) + e(t)   (na = nb = 2, nk = 3)
    rng = np.random.default_rng(seed)
    u = np.where(rng.random(n) < 0.5, -1.0, 1.0)
    e = rng.normal(0.0, 0.2, n)
    b = np.concatenate([np.zeros(delay), [1.0, 0.5]])
    y = lfilter(b, [1.0, -1.5, 0.7], u) + lfilter([1.0], [1.0, -1.5, 0.7], e)
    return y, u


def test_information_criteria_formulas():
    # derived from the published definitions (REFERENCES.md, order selection):
    # AIC = N ln V + 2d (Akaike 1974), BIC = N ln V + d ln N (Schwarz 1978),
    # FPE = V(1 + d/N)/(1 - d/N) (Akaike 1969), AICc = AIC + 2d(d+1)/(N-d-1) (Hurvich & Tsai 1989)
    v, n, d = 0.04, 500, 6
    c = information_criteria(v, n, d)
    assert c["aic"] == pytest.approx(500 * math.log(0.04) + 12)
    assert c["bic"] == pytest.approx(500 * math.log(0.04) + 6 * math.log(500))
    assert c["fpe"] == pytest.approx(0.04 * (1 + 6 / 500) / (1 - 6 / 500))
    assert c["aicc"] == pytest.approx(500 * math.log(0.04) + 12 + 2 * 6 * 7 / (500 - 6 - 1))


@pytest.mark.parametrize("criterion", ["aic", "aicc", "bic", "fpe"])
def test_search_finds_the_true_orders_and_delay(criterion):
    y, u = _delayed_plant(1)
    rows, n = search_orders(y, u, range(1, 5), range(1, 5), range(0, 7), criterion)
    best = rows[0]
    if criterion == "bic":  # consistent: the true structure itself
        assert (best["na"], best["nb"], best["delay_samples"]) == (2, 2, 3)
    else:  # AIC-type criteria may over-fit a little, but never miss a true term
        assert best["na"] >= 2
        assert best["delay_samples"] <= 3 and best["delay_samples"] + best["nb"] - 1 >= 4
        assert best["parameters"] <= 7
    assert best["selected"] and not any(r["selected"] for r in rows[1:])
    assert [r[criterion] for r in rows] == sorted(r[criterion] for r in rows)
    assert len(rows) == 4 * 4 * 7


def test_every_candidate_uses_the_same_sample():
    # the common sample starts at max(na_max, nk_max + nb_max - 1) = max(4, 6 + 4 - 1) = 9
    y, u = _delayed_plant(2)
    rows, n = search_orders(y, u, range(1, 5), range(1, 5), range(0, 7), "aic")
    assert n == y.size - 9
    for r in rows[:: 17]:
        fit = fit_arx(y, u, r["na"], r["nb"], r["delay_samples"], 1.0, start=9)
        assert fit.rows == n
        assert r["loss"] == pytest.approx(fit.loss, rel=1e-7)


def test_search_respects_the_estimation_end():
    y, u = _delayed_plant(3)
    rows, n = search_orders(y, u, [2], [2], [3], "aic", stop=2000)
    assert n == 2000 - 4
    fit = fit_arx(y[:2000], u[:2000], 2, 2, 3, 1.0)
    assert rows[0]["loss"] == pytest.approx(fit.loss, rel=1e-7)


def test_autoregression_search_and_order_scan():
    rng = np.random.default_rng(4)
    e = rng.normal(size=4000)
    # AR(2): y(t) = 1.2 y(t-1) - 0.6 y(t-2) + e(t); BIC recovers na = 2
    y = lfilter([1.0], [1.0, -1.2, 0.6], e)
    rows, _ = search_orders(y, None, range(1, 9), [0], [0], "bic")
    assert rows[0]["na"] == 2 and rows[0]["nb"] == 0
    scan = order_scan(y, None, range(1, 5), 0, 0.1)
    assert [entry["order"] for entry in scan] == [1, 2, 3, 4]
    assert len(scan[1]["poles"]) == 1  # one conjugate pair stored once
    z_true = np.roots([1.0, -1.2, 0.6])[0]
    s_true = np.log(z_true) / 0.1
    re, im = scan[1]["poles"][0]
    assert complex(re, abs(im)) == pytest.approx(complex(s_true.real, abs(s_true.imag)), rel=0.05)
    assert all(im >= 0 for entry in scan for _, im in entry["poles"])
