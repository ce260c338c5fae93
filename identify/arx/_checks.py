"""Diagnostics of a fitted ARX model and assembly of :class:`ArxResult`.

Residual whiteness, residual–input correlation, the least-squares versus
instrumental-variable comparison that reveals output-noise bias, sampling checks,
validation by simulation on the hold-out part, and every warning.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["assess", "noise_bias_test"]


def noise_bias_test(ls, iv) -> dict:
    """Compare the A-coefficients of least squares and instrumental variables.

    ``W = Δᵀ Σ_IV⁻¹ Δ`` with ``Δ = a_IV - a_LS`` and ``Σ_IV`` the IV covariance of the
    a-coefficients, against χ²(na).  Under equation-error noise both estimates are
    consistent and ``var Δ = Σ_IV - Σ_LS <= Σ_IV`` (Hausman, Econometrica 46(6), 1978),
    so the test is conservative; under output noise least squares is biased and ``W``
    grows with N.
    """
    from scipy.stats import chi2

    d = iv.a[1:] - ls.a[1:]
    cov = iv.cov_a
    try:
        w = float(d @ np.linalg.solve(cov, d))
    except np.linalg.LinAlgError:
        w = float("nan")
    p = float(chi2.sf(w, d.size)) if math.isfinite(w) else float("nan")
    return {"test": "least squares against instrumental variables (a-coefficients)",
            "statistic": w, "df": int(d.size), "p_value": p}


def _fmt_p(p: float) -> str:
    return f"{p:.2g}" if p >= 1e-4 else "< 0.0001"


def assess(*, record, out_ch, in_ch, ls, iv_fit, final, y, u, yc, uc, y_mean, u_mean, n_est,
           n_hold, ts, t_start, q, f99, table, warnings, scan, settings):
    from ..validation import fit_percent
    from .._response import ModelResponse
    from ._residuals import SIGNIFICANCE, default_lags, input_cross_correlation, ljung_box
    from ._result import ArxResult
    from ._simulate import predict_one_step, simulate_with_estimated_state

    has_input = uc is not None
    na, nk = final.na, final.delay_samples
    m = final.first_row

    # -- model output over the whole analysed record ------------------------------
    if has_input:
        with np.errstate(over="ignore", invalid="ignore"):
            model_c = simulate_with_estimated_state(final.a, final.b, nk, uc, yc, m, n_est,
                                                    constant=final.constant or 0.0)
        method = "simulation"
    else:
        model_c = predict_one_step(final.a, final.b, nk, yc, constant=final.constant or 0.0)
        method = "one-step prediction"
    model = model_c + y_mean

    # -- residual tests (estimation part) -----------------------------------------
    if final.method == "instrumental variables":
        resid = (yc - model_c)[m:n_est]
        which = "simulation error y - ŷ (instrumental variables)"
        df = 0
    else:
        resid = final.residuals
        which = "equation error (least squares)"
        df = na
    tests = {"residuals": which}
    whiteness = ljung_box(resid, default_lags(resid.size), df) if np.all(np.isfinite(resid)) else None
    tests["whiteness"] = whiteness
    xc = None
    if has_input and np.all(np.isfinite(resid)):
        xc = input_cross_correlation(resid, uc, m, default_lags(resid.size))
    tests["input_correlation"] = xc
    bias = noise_bias_test(ls, iv_fit) if iv_fit is not None else None
    tests["noise_bias"] = bias

    # -- warnings --------------------------------------------------------------------
    biased = (final.method == "least squares" and whiteness is not None and not whiteness["white"]
              and bias is not None and math.isfinite(bias["p_value"]) and bias["p_value"] < SIGNIFICANCE)
    if biased:
        warnings.append(
            f"output noise bias: residuals are not white (Ljung-Box p {_fmt_p(whiteness['p_value'])}) and the "
            f"instrumental-variable estimate differs from least squares (p {_fmt_p(bias['p_value'])}); "
            "sensor noise biases least squares, so rerun with refine='iv' (--refine iv)")
    elif whiteness is not None and not whiteness["white"]:
        warnings.append(
            f"residuals not white: Ljung-Box p {_fmt_p(whiteness['p_value'])} over {whiteness['lags']} lags; "
            "the model misses dynamics or the noise is coloured, so intervals may be too narrow")
    if xc is not None and not xc["uncorrelated"]:
        warnings.append(
            f"input correlation: residuals correlate with the input {xc['lag_of_max']} samples earlier "
            f"(|r| = {xc['max_abs']:.3f} above the bound {xc['bound']:.3f}); raise nb or check the delay")
    if final.rows < 10 * final.parameters:
        warnings.append(f"few samples: {final.rows} equations for {final.parameters} parameters "
                        f"(10 per parameter or more advised); intervals are rough")
    growing = [z for z in final.discrete_poles if abs(z) >= 1.0]
    if growing:
        zmax = max(growing, key=abs)
        warnings.append(f"growing pole: the model has a discrete pole at |z| = {abs(zmax):.4f} (on or outside "
                        "the unit circle); its simulation grows, so the hold-out fit says little")
    nyquist = [z for z in final.discrete_poles if z.imag == 0 and z.real < 0]
    if nyquist:
        warnings.append(f"nyquist pole: a real discrete pole at z = {nyquist[0].real:.3g} maps to the Nyquist "
                        f"frequency ({0.5 / ts:g} Hz); usually an artefact of the order or of noise, not plant dynamics")
    fastest = [p for p, z in zip(final.poles, final.discrete_poles)
               if not (z.imag == 0 and z.real < 0) and p.imag > 0 and 0 <= p.damping_ratio < 0.3]
    if fastest:
        fn = max(p.natural_frequency_hz for p in fastest)
        spp = 1.0 / (ts * fn)
        if spp < 10.0:
            warnings.append(f"coarse sampling: the fastest lightly damped pole ({fn:.4g} Hz) has only {spp:.1f} "
                            "samples per period (10 or more advised); aliasing and the zero-order hold distort it")
        elif q == 1 and spp > 60.0:
            warnings.append(f"oversampled: the fastest lightly damped pole ({fn:.4g} Hz) has {spp:.0f} samples per "
                            "period (10-20 advised); poles crowd z = 1, so decimate (decimate='auto')")

    # -- validation -----------------------------------------------------------------
    t = t_start + ts * np.arange(y.size)
    with np.errstate(over="ignore", invalid="ignore"):
        finite = bool(np.all(np.isfinite(model)))
        fit_est = fit_percent(y[m:n_est], model[m:n_est]) if finite else float("nan")
        fit_hold = (fit_percent(y[n_est:], model[n_est:]) if finite else float("nan")) if n_hold > 1 else fit_est
    validation = {"method": method, "fit_percent": fit_hold, "fit_percent_estimation": fit_est,
                  "holdout_fraction": settings["holdout"], "holdout_samples": int(n_hold),
                  "holdout_start_s": float(t[n_est]) if n_hold > 0 else None,
                  "estimation_samples": int(n_est)}
    if math.isfinite(fit_hold) and fit_hold < 50.0:
        part = "hold-out part" if n_hold > 1 else "estimation data (no hold-out)"
        warnings.append(f"poor validation: the model's {method} fits the {part} at {fit_hold:.1f} % "
                        "(below 50 %); treat the poles with care")
    elif not finite:
        warnings.append("poor validation: the simulated output diverges, so no fit percent could be computed")
    if not has_input:
        validation["note"] = ("no input: a pure autoregression has only a free response, so it is "
                              "validated by one-step prediction")

    response = ModelResponse(
        time_s=t, measured=y, model=np.where(np.isfinite(model), model, np.nan),
        input=None if u is None else u, unit=out_ch.unit,
        label=("ARX model simulated from the input" if has_input else "AR one-step prediction"),
        holdout_start_s=validation["holdout_start_s"])

    settings = dict(settings)
    settings["delay_s"] = nk * ts
    return ArxResult(
        source=record.source, sha256=record.sha256, poles=final.poles,
        discrete_poles=tuple(complex(z) for z in final.discrete_poles),
        zeros=tuple(complex(z) for z in final.zeros), model=final, order_search=table,
        order_scan=tuple(scan()), validation=validation, residual_tests=tests,
        least_squares=ls if final is not ls else None, warnings=tuple(warnings), settings=settings,
        response=response)
