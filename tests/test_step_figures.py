"""Step figures against closed forms and published tables (scipy.signal.step simulates)."""
import math

import numpy as np
import pytest
from scipy import signal

from identify.step import measure_figures
from identify.step._figures import DEFINITIONS, figures_table


def _second_order(zeta, wn, t_end, n=20001):
    t = np.linspace(0.0, t_end, n)
    return signal.step(([wn * wn], [1.0, 2 * zeta * wn, wn * wn]), T=t)  # reference simulator


def test_ogata_example_zeta_06_wn_5():
    # Ogata, Modern Control Engineering, Example 5-1 (from memory): zeta = 0.6, wn = 5 rad/s
    t, y = _second_order(0.6, 5.0, 5.0)
    f2 = measure_figures(t, y, step_time_s=0.0, initial=0.0, final=1.0)
    wd = 5.0 * math.sqrt(1 - 0.36)
    assert f2["peak_time_s"] == pytest.approx(math.pi / wd, abs=1e-4)           # tp = pi/wd = 0.785 s (Ogata)
    assert f2["overshoot_percent"] == pytest.approx(100 * math.exp(-math.pi * 0.6 / 0.8), abs=1e-3)  # Mp = 9.48 % (Ogata)
    assert f2["rise_time_s"] == pytest.approx(0.371, abs=1e-3)                  # 10-90 %: 0.371 s (derived, REFERENCES.md)
    assert f2["settling_time_s"] == pytest.approx(1.189, abs=1e-3)              # 2 % exact: 1.189 s (derived, REFERENCES.md)
    f5 = measure_figures(t, y, step_time_s=0.0, initial=0.0, final=1.0, settling_band=0.05)
    assert f5["settling_time_s"] == pytest.approx(1.046, abs=1e-3)              # 5 % exact: 1.046 s (derived, REFERENCES.md)
    assert f2["final_value"] == 1.0


@pytest.mark.parametrize("zeta, wn_tr", [(0.1, 1.104), (0.3, 1.321), (0.5, 1.638), (0.7, 2.126), (0.9, 2.883)])
def test_nise_normalised_rise_time_table(zeta, wn_tr):
    # Nise, Control Systems Engineering, normalised 10-90 % rise-time table (wn = 1 rad/s)
    t, y = _second_order(zeta, 1.0, 60.0)
    assert measure_figures(t, y, step_time_s=0.0, initial=0.0, final=1.0)["rise_time_s"] == pytest.approx(wn_tr, abs=1.5e-3)


@pytest.mark.parametrize("tau, theta", [(1.0, 0.0), (3.5, 1.2)])
def test_first_order_identities(tau, theta):
    # first order (derived): 10-90 % rise = tau ln 9; 2 % settling = theta + tau ln 50; no overshoot
    t = np.linspace(0.0, theta + 12 * tau, 20001)
    _, y = signal.step(([1.0], [tau, 1.0]), T=t)  # reference simulator
    y = np.interp(t - theta, t, y, left=0.0)
    f = measure_figures(t, 2.0 + 3.0 * y, step_time_s=0.0, initial=2.0, final=5.0)
    assert f["rise_time_s"] == pytest.approx(tau * math.log(9), rel=1e-4)
    assert f["settling_time_s"] == pytest.approx(theta + tau * math.log(50), rel=1e-4)
    assert f["overshoot_percent"] == 0.0 and math.isnan(f["peak_time_s"])


def test_negative_change_and_step_instant():
    # a falling response measured from a step at t = 4 s gives the same figures (derived)
    t, y = _second_order(0.6, 5.0, 5.0)
    tt = np.concatenate([np.linspace(0, 4, 100, endpoint=False), 4.0 + t])
    yy = np.concatenate([np.full(100, 10.0), 10.0 - 2.0 * y])
    f = measure_figures(tt, yy, step_time_s=4.0, initial=10.0, final=8.0)
    assert f["peak_time_s"] == pytest.approx(0.785, abs=1e-3)   # Ogata Example 5-1
    assert f["overshoot_percent"] == pytest.approx(9.48, abs=0.01)


def test_not_reached_gives_nan():
    t = np.linspace(0, 1, 101)
    f = measure_figures(t, 1 - np.exp(-t / 5.0), step_time_s=0.0, initial=0.0, final=1.0)
    assert math.isnan(f["settling_time_s"]) and math.isnan(f["rise_time_s"])


def test_table_has_definitions():
    table = figures_table({"rise_time_s": 1.0}, {"rise_time_s": 1.1, "settling_time_s": float("nan")},
                          unit="degC", settling_band=0.05)
    assert set(table) == set(DEFINITIONS)
    assert "5 %" in table["settling_time_s"].definition
    assert "IEEE Std 181" in table["rise_time_s"].definition
    d = table["settling_time_s"].to_dict()
    assert d["model"] is None and d["unit"] == "s"
