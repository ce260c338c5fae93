"""SIMC starting gains (Skogestad 2003)."""
import pytest

from identify.step import simc
from identify.step._tuning import CAUTION


def test_simc_check_values():
    # Skogestad, J. Process Control 13 (2003): K = 1, tau = 30, theta = 2, tau_c = 2 -> Kc = 7.5, tauI = 16 (derived)
    tu = simc("first-order", gain=1.0, dead_time_s=2.0, time_constants_s=[30.0], closed_loop_time_constant_s=2.0)
    assert tu.gain == pytest.approx(7.5) and tu.integral_time_s == pytest.approx(16.0)
    assert tu.controller == "PI" and tu.derivative_time_s is None


def test_default_tau_c_is_dead_time():
    tu = simc("first-order", gain=1.0, dead_time_s=2.0, time_constants_s=[30.0])
    assert tu.closed_loop_time_constant_s == 2.0 and tu.gain == pytest.approx(7.5)
    # short lag: tauI = tau1 when tau1 < 4 (tau_c + theta) (Skogestad 2003)
    tu = simc("first-order", gain=2.0, dead_time_s=2.0, time_constants_s=[5.0])
    assert tu.integral_time_s == pytest.approx(5.0) and tu.gain == pytest.approx(5.0 / (2.0 * 4.0))


def test_two_lag_pid_and_integrating():
    # SOPDT: PID in series form with tauD = tau2 (Skogestad 2003); values derived
    tu = simc("two-lag", gain=0.5, dead_time_s=1.0, time_constants_s=[10.0, 2.0])
    assert tu.controller == "PID" and tu.form == "series PID"
    assert tu.gain == pytest.approx(10.0 / (0.5 * 2.0)) and tu.integral_time_s == pytest.approx(8.0)
    assert tu.derivative_time_s == pytest.approx(2.0)
    half = tu.alternatives[1]  # half rule: tau1 + tau2/2 = 11, theta + tau2/2 = 2 (derived)
    assert half["gain"] == pytest.approx(11.0 / (0.5 * (1.0 + 2.0)))
    # integrating: Kc = 1/(K'(tau_c + theta)), tauI = 4 (tau_c + theta) (Skogestad 2003); derived
    tu = simc("integrating", gain=0.1, dead_time_s=3.0, time_constants_s=())
    assert tu.gain == pytest.approx(1.0 / (0.1 * 6.0)) and tu.integral_time_s == pytest.approx(24.0)


def test_negative_gain_gives_negative_controller_gain():
    tu = simc("first-order", gain=-2.0, dead_time_s=1.0, time_constants_s=[4.0])
    assert tu.gain < 0


def test_caution_and_label_always_there():
    for tu in (simc("first-order", gain=1.0, dead_time_s=1.0, time_constants_s=[3.0]),
               simc("underdamped", gain=1.0, dead_time_s=1.0)):
        d = tu.to_dict()
        assert d["caution"] == CAUTION and d["label"] == "starting point to review"
        assert "site's approval" in d["caution"] and "starting point to review" in d["caution"]
    assert simc("underdamped", gain=1.0, dead_time_s=1.0).controller == "none"


def test_zero_dead_time_uses_one_sample():
    tu = simc("first-order", gain=1.0, dead_time_s=0.0, time_constants_s=[3.0], sample_time_s=0.1)
    assert tu.closed_loop_time_constant_s == pytest.approx(0.1)
    assert any("below one sample" in n for n in tu.notes)
