"""Two-point FOPDT methods on exact first-order-plus-dead-time responses."""
import math

import numpy as np
import pytest

from identify.step import smith, sundaresan_krishnaswamy, two_point_estimates
from identify.step._twopoint import crossing_time, exact_constants


def _tp(p, tau, theta):
    return theta - tau * math.log(1 - p)  # FOPDT: time to fraction p (derived)


def _sk_theta(tau, theta):
    return 1.01 * theta + tau * (1.3 * math.log(1 / 0.647) - 0.29 * math.log(1 / 0.147))


def _smith_theta(tau, theta):
    a = 1.5 * (math.log(1 / 0.368) - math.log(1 / 0.717))
    return theta + tau * (math.log(1 / 0.368) - a)


@pytest.mark.parametrize("tau, theta", [(10.0, 2.0), (0.5, 0.0), (3.0, 7.5)])
def test_rules_on_exact_crossing_times(tau, theta):
    # Smith (1972), as taught in Seborg et al.: tau = 1.5 (t63.2 - t28.3), theta = t63.2 - tau
    t1, t2 = _tp(0.283, tau, theta), _tp(0.632, tau, theta)
    a = 1.5 * (math.log(1 / 0.368) - math.log(1 / 0.717))  # derived: 1.5 / 1.4993
    tau_s, theta_s = smith(t1, t2)
    assert tau_s == pytest.approx(a * tau, rel=1e-12)
    assert theta_s == pytest.approx(theta + tau * (math.log(1 / 0.368) - a), rel=1e-12, abs=1e-12)
    # Sundaresan & Krishnaswamy (1978): tau = 0.67 (t85.3 - t35.3), theta = 1.3 t35.3 - 0.29 t85.3
    s1, s2 = _tp(0.353, tau, theta), _tp(0.853, tau, theta)
    tau_k, theta_k = sundaresan_krishnaswamy(s1, s2)
    assert tau_k == pytest.approx(0.67 * (math.log(1 / 0.147) - math.log(1 / 0.647)) * tau, rel=1e-12)  # derived
    assert theta_k == pytest.approx(1.3 * s1 - 0.29 * s2, rel=1e-12)
    # the rules are within their rounding of the exact constants (REFERENCES.md: 1.4993, 0.6748)
    assert tau_s == pytest.approx(tau, rel=2e-3) and tau_k == pytest.approx(tau, rel=8e-3)
    assert theta_s == pytest.approx(theta, abs=2e-3 * tau)
    # S&K dead time on exact FOPDT data: 1.01 theta + tau (1.3 ln(1/0.647) - 0.29 ln(1/0.147)) (derived)
    assert theta_k == pytest.approx(_sk_theta(tau, theta), rel=1e-12, abs=1e-12)


def test_exact_constants():
    c = exact_constants()
    assert c["smith_tau_factor"] == pytest.approx(1.4993, abs=1e-4)   # REFERENCES.md (derived)
    assert c["sk_tau_factor"] == pytest.approx(0.6748, abs=1e-4)      # REFERENCES.md (derived)


def test_on_sampled_fopdt_record():
    # sampled exact FOPDT: K = -2, tau = 6 s, theta = 1.3 s, step of +4 at t = 10 s (derived)
    t = np.arange(0, 80, 0.01)
    y = 5.0 - 8.0 * np.where(t > 11.3, 1 - np.exp(-(t - 11.3) / 6.0), 0.0)
    est = two_point_estimates(t, y, step_time_s=10.0, initial=5.0, final=-3.0, step_size=4.0)
    assert [e.method for e in est] == ["smith-1972", "sundaresan-krishnaswamy-1978"]
    for e in est:
        assert e.gain == pytest.approx(-2.0)
        assert e.time_constant_s == pytest.approx(6.0, rel=1e-2)
    # sampled at 0.01 s: crossings within a fraction of a sample of the exact ones (derived)
    assert est[0].dead_time_s == pytest.approx(_smith_theta(6.0, 1.3), abs=2e-3)
    assert est[1].dead_time_s == pytest.approx(_sk_theta(6.0, 1.3), abs=2e-3)
    assert est[0].times_s["t63.2"] == pytest.approx(1.3 + 6.0 * math.log(1 / 0.368), abs=1e-3)
    assert est[0].to_dict()["method"] == "smith-1972"


def test_crossing_not_reached_is_nan():
    t = np.linspace(0, 1, 11)
    assert math.isnan(crossing_time(t, 0.1 * t, 0.5, initial=0.0, final=1.0))
