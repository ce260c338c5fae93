"""Nonlinear least-squares fit of damped sinusoids (lmfit), seeded by pencil poles."""

import numpy as np
import pytest

from _decay_synth import crb_fn_zeta, make_decay
from identify import IdentificationError, ParameterValueError
from identify.decay import fit_damped_sinusoids, matrix_pencil
from identify.decay._nls import linearised_covariance, model_jacobian, model_values, model_values_on_grid


def test_exact_data_from_perturbed_seeds_converges_to_the_truth():
    modes = [(10.0, 0.02, 1.0, 0.4), (17.0, 0.05, 0.5, 2.0)]
    t, y, poles, _ = make_decay(modes, fs=200.0, n=800, offset=0.3)
    seeds = [complex(s.real * 1.2, s.imag * 1.01) for s in poles]  # 20 % off in σ, 1 % in ω
    est = fit_damped_sinusoids(t, y, seeds)
    assert est.method == "fit"
    for p, s in zip(est.poles, poles):
        assert p.real == pytest.approx(s.real, rel=1e-7)
        assert p.imag == pytest.approx(s.imag, rel=1e-9)
    assert [p.amplitude for p in est.poles] == pytest.approx([1.0, 0.5], rel=1e-7)
    assert est.details["offset"] == pytest.approx(0.3, abs=1e-8)
    assert est.details["terms"][0]["phase_rad"] == pytest.approx(0.4, abs=1e-7)
    assert est.details["residual_rms"] < 1e-8


def test_analytic_jacobian_matches_finite_differences():
    rng = np.random.default_rng(1)
    tau = np.linspace(0, 2, 300)
    sg, om, c, d = [1.5, 0.3], [40.0, 95.0], [1.0, -0.4], [0.2, 0.7]
    jac = model_jacobian(tau, sg, om, c, d, drift=True)
    theta = np.array([sg[0], om[0], c[0], d[0], sg[1], om[1], c[1], d[1], 0.1, 0.05])

    def f(th):
        return model_values(tau, th[[0, 4]], th[[1, 5]], th[[2, 6]], th[[3, 7]], th[8], th[9])

    for k in rng.permutation(theta.size)[:6]:
        h = 1e-6 * max(1.0, abs(theta[k]))
        e = np.zeros_like(theta)
        e[k] = h
        fd = (f(theta + e) - f(theta - e)) / (2 * h)  # central difference [derived]
        assert np.max(np.abs(fd - jac[:, k])) < 1e-6 * max(1.0, np.max(np.abs(jac[:, k])))


@pytest.mark.parametrize("n", [100, 4096, 4097, 250_001])
@pytest.mark.parametrize("drift", [0.0, 0.003])
def test_model_on_a_grid_equals_the_direct_evaluation(n, drift):
    # the product form (row factor times column factor) is an identity of e^(s(a+b)) =
    # e^(sa)e^(sb) [derived]; it must agree with exp/cos/sin at every sample, on grids
    # that fill their last row exactly or not, below and above the direct-evaluation size
    args = (0.37, 1e-4, n, [0.04, 3.0, 0.08], [75.4, 120.0, 194.8], [1.0, 0.5, -0.3], [0.2, 0.0, 0.5], 0.05, drift)
    fast = model_values_on_grid(*args)
    direct = model_values(0.37 + 1e-4 * np.arange(n), *args[3:])
    assert fast.shape == (n,)
    # direct evaluation itself loses about eps * omega * tau of phase (1e-12 at tau = 25 s)
    assert np.max(np.abs(fast - direct)) < 1e-11 * np.max(np.abs(direct))


@pytest.mark.parametrize("kind", ["uniform", "jittered", "short"])
def test_damped_parts_on_a_grid_equal_the_direct_formulas(kind):
    # derived: e^(s(a+b)) = e^(sa)e^(sb); a uniform grid of 4096 or more points is evaluated
    # as row-by-column products, anything else term by term: the same values either way
    from identify.decay._nls import _damped_parts, _uniform_grid

    n = 3000 if kind == "short" else 50_001
    tau = 0.25 + 2e-3 * np.arange(n)
    if kind == "jittered":
        tau[n // 2] += 1e-6  # half a thousandth of a step off the grid: not a uniform grid
    assert (_uniform_grid(tau) is not None) == (kind == "uniform")
    sg, om = [0.05, 4.0], [75.4, 300.0]
    for (ec, es), a, b in zip(_damped_parts(tau, sg, om), sg, om):
        env = np.exp(-a * tau)
        np.testing.assert_allclose(ec, env * np.cos(b * tau), rtol=0, atol=1e-12 * env.max())
        np.testing.assert_allclose(es, env * np.sin(b * tau), rtol=0, atol=1e-12 * env.max())


def test_linearised_covariance_is_the_inverse_normal_matrix():
    rng = np.random.default_rng(2)
    jac = rng.standard_normal((50, 3)) * np.array([1e-3, 1.0, 1e3])  # badly scaled columns
    cov = linearised_covariance(jac, 2.0)
    assert np.allclose(cov, 2.0 * np.linalg.inv(jac.T @ jac), rtol=1e-8)


@pytest.mark.parametrize("seed", range(3))
def test_noisy_fit_within_tolerance_and_interval_width_near_the_bound(seed):
    modes = [(12.0, 0.02, 1.0, 0.7)]
    t, y, poles, s = make_decay(modes, fs=150.0, n=1200, snr_db=25, offset=0.1, seed=seed)
    pencil = matrix_pencil(t, y)
    est = fit_damped_sinusoids(t, y, pencil.poles)
    (sd_fn, sd_z), = crb_fn_zeta(modes, t, s)
    p = est.poles[0]
    assert abs(p.natural_frequency_hz - 12.0) / 12.0 < 0.005
    assert abs(p.damping_ratio - 0.02) < max(0.1 * 0.02, 3 * sd_z)
    # the delta-method half width / 1.96 is the Cramér–Rao standard deviation at the
    # estimate, so it matches the bound at the truth within sampling error [derived]
    half_fn = (p.ci.natural_frequency_hz[1] - p.ci.natural_frequency_hz[0]) / 2 / 1.959964
    half_z = (p.ci.damping_ratio[1] - p.ci.damping_ratio[0]) / 2 / 1.959964
    assert half_fn / sd_fn == pytest.approx(1.0, abs=0.15)
    assert half_z / sd_z == pytest.approx(1.0, abs=0.15)


def test_drift_is_fitted_when_asked():
    modes = [(6.0, 0.03, 1.0, 0.0)]
    t, y, poles, _ = make_decay(modes, fs=100.0, n=1000, snr_db=40, offset=-0.5, drift_per_s=0.08, seed=3)
    pencil = matrix_pencil(t, y)
    est = fit_damped_sinusoids(t, y, pencil.poles, drift=True)
    assert est.details["drift_per_s"] == pytest.approx(0.08, abs=5 * est.details["drift_std_per_s"])
    assert est.details["offset"] == pytest.approx(-0.5, abs=0.01)
    assert est.details["parameters"] == 6
    without = fit_damped_sinusoids(t, y, pencil.poles, drift=False)
    assert without.details["drift_per_s"] is None and without.details["parameters"] == 5


def test_bootstrap_intervals_cover_and_resemble_the_delta_ones():
    modes = [(9.0, 0.04, 1.0, 1.0)]
    t, y, poles, s = make_decay(modes, fs=100.0, n=600, snr_db=25, seed=5)
    pencil = matrix_pencil(t, y)
    delta = fit_damped_sinusoids(t, y, pencil.poles)
    boot = fit_damped_sinusoids(t, y, pencil.poles, intervals="bootstrap", n_boot=60, seed=1)
    p, q = delta.poles[0], boot.poles[0]
    assert q.ci.method == "bootstrap" and boot.details["bootstrap_refits"] >= 50
    assert q.real == p.real  # same point estimate
    w_delta = p.ci.damping_ratio[1] - p.ci.damping_ratio[0]
    w_boot = q.ci.damping_ratio[1] - q.ci.damping_ratio[0]
    assert 0.6 < w_boot / w_delta < 1.6
    same = fit_damped_sinusoids(t, y, pencil.poles, intervals="bootstrap", n_boot=60, seed=1)
    assert same.poles[0].ci == q.ci  # seeded: repeatable


def test_long_oversampled_record_is_fitted_decimated_and_says_so():
    modes = [(4.0, 0.01, 2.0, 0.5)]
    t, y, poles, s = make_decay(modes, fs=20000.0, n=120_000, snr_db=30, offset=0.2, seed=6)
    pencil = matrix_pencil(t, y)
    est = fit_damped_sinusoids(t, y, pencil.poles, drift=True)
    q = est.details["decimation_factor"]
    assert q > 1 and "decimated" in est.details["note"]
    assert est.details["samples_fitted"] == 120_000 // q
    p = est.poles[0]
    assert abs(p.natural_frequency_hz - 4.0) / 4.0 < 1e-3
    assert abs(p.damping_ratio - 0.01) < 0.05 * 0.01
    assert p.amplitude == pytest.approx(2.0, rel=0.01)  # block-mean gain undone
    (sd_fn, sd_z), = crb_fn_zeta(modes, t, s)
    half_z = (p.ci.damping_ratio[1] - p.ci.damping_ratio[0]) / 2 / 1.959964
    assert half_z / sd_z == pytest.approx(1.0, abs=0.2)  # no information lost [derived]


def test_bad_seeds_and_arguments():
    t = np.arange(200) / 100.0
    y = np.exp(-t) * np.cos(20 * t)
    with pytest.raises(ParameterValueError, match="at least one pole"):
        fit_damped_sinusoids(t, y, [])
    with pytest.raises(ParameterValueError, match="imag > 0"):
        fit_damped_sinusoids(t, y, [complex(-1.0, 0.0)])
    with pytest.raises(ParameterValueError, match="intervals"):
        fit_damped_sinusoids(t, y, [complex(-1, 20)], intervals="profile")
    with pytest.raises(IdentificationError, match="too few"):
        fit_damped_sinusoids(t[:10], y[:10], [complex(-1, 20), complex(-1, 40)])


def test_input_not_mutated():
    t, y, poles, _ = make_decay([(10.0, 0.02, 1.0, 0.4)], fs=200.0, n=400, snr_db=30)
    y0 = y.copy()
    fit_damped_sinusoids(t, y, poles)
    assert np.array_equal(y, y0)
