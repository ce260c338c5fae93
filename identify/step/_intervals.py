"""Intervals on the step-test parameters and poles: delta method and residual bootstrap."""
from __future__ import annotations

import math

import numpy as np

__all__ = ["delta_intervals", "poles_delta", "bootstrap_intervals", "process_model"]


def delta_intervals(fit, level):
    from ..poles import normal_quantile

    z = normal_quantile(level)
    out = {}
    for name in fit.names:
        se = fit.stderr(name)
        v = fit.values[name]
        lo, hi = v - z * se, v + z * se
        if name in ("dead_time_s", "time_constant_s", "time_constant_1_s", "time_constant_2_s",
                    "natural_frequency_rad_per_s"):
            lo = max(lo, 0.0)
        out[name] = (lo, hi)
    return out


def _pole_covariances(fit):
    """[(s, cov 2×2 of (Re s, Im s))] for the fitted structure, by the delta method."""
    v = fit.values

    def var(name):
        se = fit.stderr(name)
        return se * se
    if fit.structure == "first-order":
        tau = v["time_constant_s"]
        return [(complex(-1 / tau, 0), [[var("time_constant_s") / tau ** 4]])]
    if fit.structure == "two-lag":
        return [(complex(-1 / v[n], 0), [[var(n) / v[n] ** 4]])
                for n in ("time_constant_1_s", "time_constant_2_s")]
    if fit.structure == "underdamped":
        wn, zeta = v["natural_frequency_rad_per_s"], v["damping_ratio"]
        root = math.sqrt(max(1 - zeta * zeta, 1e-12))
        s = complex(-zeta * wn, wn * root)
        i, j = fit.names.index("natural_frequency_rad_per_s"), fit.names.index("damping_ratio")
        c = fit.covariance[np.ix_([i, j], [i, j])] if fit.covariance is not None else np.full((2, 2), np.nan)
        jac = np.array([[-zeta, -wn], [root, -wn * zeta / root]])
        return [(s, jac @ c @ jac.T)]
    return [(complex(0, 0), [[0.0]])]


def poles_delta(fit, level):
    from ..poles import Pole, pole_with_delta_intervals

    out = []
    for s, cov in _pole_covariances(fit):
        c = np.asarray(cov, dtype=float)
        if np.all(np.isfinite(c)):
            out.append(pole_with_delta_intervals(s, c, level))
        else:
            out.append(Pole(s.real, s.imag))
    return out


def bootstrap_intervals(fit, setup, level, seed, refits):
    """Residual bootstrap: ``refits`` refits on model + resampled residuals; percentile intervals.

    The residuals (centred) are drawn with replacement and added to the fitted response;
    each pseudo-record is refitted by lmfit from the fitted values.  Returns the
    parameter intervals and the poles with percentile intervals.
    """
    from ..poles import pole_with_delta_intervals, pole_with_sample_intervals
    from ._fit import refit
    from ._models import poles_of

    rng = np.random.default_rng(seed)
    m = setup.mask
    resid = (setup.y - fit.fitted)[m]
    resid = resid - resid.mean()
    samples = {name: [] for name in fit.names}
    pole_samples = []
    for _ in range(refits):
        y = fit.fitted.copy()
        y[m] = fit.fitted[m] + rng.choice(resid, size=resid.size, replace=True)
        res = refit(fit.structure, fit.values, setup, y=y)
        vals = {n: float(res.params[n].value) for n in fit.values}
        if fit.structure == "two-lag" and vals["time_constant_2_s"] > vals["time_constant_1_s"]:
            vals["time_constant_1_s"], vals["time_constant_2_s"] = vals["time_constant_2_s"], vals["time_constant_1_s"]
        for n in fit.names:
            samples[n].append(vals[n])
        pole_samples.append(poles_of(fit.structure, vals))
    q = [50 * (1 - level), 50 * (1 + level)]
    ci = {n: tuple(float(x) for x in np.percentile(samples[n], q)) for n in fit.names}
    poles = []
    for i, s in enumerate(poles_of(fit.structure, fit.values)):
        smp = [ps[i] for ps in pole_samples]
        if fit.structure == "integrating":
            poles.append(pole_with_delta_intervals(s, [[0.0]], level, method="bootstrap"))
        else:
            poles.append(pole_with_sample_intervals(s, smp, level))
    return ci, poles


def process_model(fit, ci, poles, level, method, gain_unit):
    from ._result import ProcessModel

    v = fit.values
    model_ci = {"gain": ci["gain"], "dead_time_s": ci["dead_time_s"], "offset": ci["offset"]}
    taus, fn, zeta = (), None, None
    if fit.structure == "first-order":
        taus = (v["time_constant_s"],)
        model_ci["time_constants_s"] = (ci["time_constant_s"],)
    elif fit.structure == "two-lag":
        taus = (v["time_constant_1_s"], v["time_constant_2_s"])
        model_ci["time_constants_s"] = (ci["time_constant_1_s"], ci["time_constant_2_s"])
    elif fit.structure == "underdamped":
        pole = poles[0]
        fn, zeta = pole.natural_frequency_hz, pole.damping_ratio
        if pole.ci is not None:
            model_ci["natural_frequency_hz"] = tuple(pole.ci.natural_frequency_hz)
            model_ci["damping_ratio"] = tuple(pole.ci.damping_ratio)
    return ProcessModel(structure=fit.structure, gain=v["gain"], dead_time_s=v["dead_time_s"],
                        time_constants_s=taus, natural_frequency_hz=fn, damping_ratio=zeta,
                        offset=v["offset"], ci=model_ci, level=level, method=method, gain_unit=gain_unit)
