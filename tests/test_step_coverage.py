"""Seeded Monte-Carlo coverage of the step job's 95 % delta-method intervals."""
import numpy as np

from identify.records import Record
from identify.step import analyse_step, unit_response

TRIALS = 300


def test_interval_coverage_gain_time_constant_dead_time():
    # FOPDT K = 2, tau = 8 s, theta = 3.4 s (a fraction of a sample), Ts = 1 s, 70 samples,
    # white noise 2 % of the change.  Nominal 95 % intervals must cover 92-98 % of trials
    # (project convention).  The dead time is fitted continuously (exact sub-sample
    # shift), so its delta interval is not tied to the sample grid.
    ts, n, pre = 1.0, 70, 10
    gain, tau, theta = 2.0, 8.0, 3.4
    u = np.zeros(n)
    u[pre:] = 1.0
    clean = 5.0 + gain * unit_response("first-order", (tau,), theta, u, ts)
    t = ts * np.arange(n)
    hits = np.zeros(3)
    for trial in range(TRIALS):
        rng = np.random.default_rng(70000 + trial)
        y = clean + rng.normal(0.0, 0.02 * gain, n)
        r = analyse_step(Record.from_arrays(t, u=u, y=y), output="y", input="u", model="first-order")
        ci = r.model.ci
        hits += [ci["gain"][0] <= gain <= ci["gain"][1],
                 ci["time_constants_s"][0][0] <= tau <= ci["time_constants_s"][0][1],
                 ci["dead_time_s"][0] <= theta <= ci["dead_time_s"][1]]
    coverage = hits / TRIALS
    print("coverage", coverage)
    assert np.all((coverage >= 0.92) & (coverage <= 0.98)), coverage


def test_pole_interval_coverage():
    # the pole -1/tau with its delta interval on Re s: same 92-98 % band (project convention)
    ts, n, pre = 1.0, 70, 10
    u = np.zeros(n)
    u[pre:] = -3.0
    clean = 1.0 + 0.7 * unit_response("first-order", (6.0,), 2.3, u, ts)
    t = ts * np.arange(n)
    hits = 0
    trials = 150
    for trial in range(trials):
        rng = np.random.default_rng(90000 + trial)
        y = clean + rng.normal(0.0, 0.02 * 2.1, n)
        r = analyse_step(Record.from_arrays(t, u=u, y=y), output="y", input="u", model="first-order")
        lo, hi = r.poles[0].ci.real
        hits += lo <= -1.0 / 6.0 <= hi
    print("pole coverage", hits / trials)
    assert 0.92 <= hits / trials <= 0.98, hits / trials
