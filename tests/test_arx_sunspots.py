"""Open data: the yearly sunspot numbers bundled with statsmodels (offline)."""
from __future__ import annotations

import math

import pytest

from identify.arx import analyse_arx, fit_arx, search_orders
from identify.records import Record


@pytest.fixture(scope="module")
def sunspots():
    import statsmodels.api as sm

    data = sm.datasets.sunspots.load_pandas().data  # yearly 1700-2008, bundled with statsmodels
    return data["YEAR"].to_numpy(float), data["SUNACTIVITY"].to_numpy(float)


def test_ar2_with_constant_matches_the_published_coefficients_and_period(sunspots):
    _, y = sunspots
    fit = fit_arx(y, None, 2, 0, 0, 1.0, constant=True)  # Ts = 1 year
    phi = -fit.a[1:]  # y(t) = φ1 y(t-1) + φ2 y(t-2) + c + e(t)
    se = fit.standard_errors[:2]
    # published maximum-likelihood AR(2) on exactly this series: φ = (1.390656, -0.688571)
    # [pub: the statsmodels sunspots ARMA example output; REFERENCES.md "Open data"]
    assert abs(phi[0] - 1.3907) <= se[0]
    assert abs(phi[1] - (-0.6886)) <= se[1]
    (pole,) = fit.poles
    assert not pole.is_real  # a complex pair: the solar cycle
    period_years = 1.0 / pole.damped_frequency_hz  # Ts = 1 year, so Hz here is 1/year
    # period 10.87 ± 0.05 years [pub: same example; REFERENCES.md gives 10.88]
    assert period_years == pytest.approx(10.87, abs=0.05)
    # |z| = 0.830 [pub: same example]
    assert abs(fit.discrete_poles[0]) == pytest.approx(0.830, abs=0.005)


def test_information_criteria_would_pick_ar9_so_the_check_fixes_the_order(sunspots):
    # REFERENCES.md: information criteria choose AR(9) on this series [pub: statsmodels example]
    _, y = sunspots
    rows, _ = search_orders(y - y.mean(), None, range(1, 17), [0], [0], "aic")
    assert rows[0]["na"] == 9


def test_output_only_job_on_the_sunspot_record(sunspots):
    years, y = sunspots
    record = Record.from_arrays(years, sunspots=y, source="statsmodels sunspots")
    result = analyse_arx(record, output="sunspots", orders=2, holdout=0.0, decimate="off")
    (pole,) = result.poles
    assert 1.0 / pole.damped_frequency_hz == pytest.approx(10.87, abs=0.1)  # centred, not a constant: close
    assert result.validation["method"] == "one-step prediction"
    assert result.model.nb == 0 and math.isnan(result.model.dc_gain)
    assert result.order_search == ()
