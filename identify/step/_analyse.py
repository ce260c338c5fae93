"""``analyse_step``: the whole step-test job as one call."""
from __future__ import annotations

import inspect
import math

import numpy as np

from .._quality import channel_warnings
from .._errors import IdentificationError, ParameterValueError, RecordError
from .._validate import check_choice, check_confidence, check_fraction, check_int, check_positive
from ._intervals import bootstrap_intervals, delta_intervals, poles_delta, process_model
from ._models import SHAPE_PARAMETERS, STRUCTURES, step_response, unit_response

__all__ = ["analyse_step", "MODEL_CHOICES", "BOOTSTRAP_SAMPLES", "NOISE_BAND_SIGMAS",
           "SMALL_STEP_RATIO", "LJUNG_BOX_ALPHA"]

MODEL_CHOICES = ("auto",) + STRUCTURES
#: residual-bootstrap refits for ``intervals="bootstrap"``
BOOTSTRAP_SAMPLES = 200
#: the noise band is ±3 noise standard deviations (6σ wide).  Common practice, no source.
NOISE_BAND_SIGMAS = 6.0
#: warn when the output change is below this many noise bands.  Common practice, no source.
SMALL_STEP_RATIO = 4.0
#: Ljung–Box significance for "residual structure".  Common practice, no source.
LJUNG_BOX_ALPHA = 0.01
#: structures within this many BIC units count as a tie, broken by residual whiteness
#: and then by fewer parameters.  Common practice (Kass & Raftery's "not worth more
#: than a bare mention"), no exact source.
BIC_TIE = 2.0


def _load(record_or_path, sample_rate_hz, nan):
    from ..records import Record

    if isinstance(record_or_path, Record):
        return record_or_path
    from .. import read_record

    kwargs = {"sample_rate_hz": sample_rate_hz, "nan": nan}
    try:
        accepted = inspect.signature(read_record).parameters
        if not any(p.kind is p.VAR_KEYWORD for p in accepted.values()):
            kwargs = {k: v for k, v in kwargs.items() if k in accepted}
    except (TypeError, ValueError):
        pass
    return read_record(record_or_path, **kwargs)


def _validate(model, intervals, nan, settling_band, confidence, tau_c, seed, step_time_s, step_size):
    model = check_choice("model", model, MODEL_CHOICES)
    intervals = check_choice("intervals", intervals, ("delta", "bootstrap"))
    nan = check_choice("nan", nan, ("raise", "omit"))
    band = check_fraction("settling_band", settling_band, low=0.0, high=0.5)
    level = check_confidence(confidence)
    tau_c = check_positive("closed_loop_time_constant_s", tau_c, allow_none=True)
    seed = check_int("seed", seed, minimum=0)
    if step_size is not None:
        size = float(step_size)
        if not math.isfinite(size) or size == 0:
            raise ParameterValueError(f"step_size must be a finite nonzero number; got {step_size!r}")
    if step_time_s is not None and not math.isfinite(float(step_time_s)):
        raise ParameterValueError(f"step_time_s must be a finite number; got {step_time_s!r}")
    return model, intervals, nan, band, level, tau_c, seed


def _interp_missing(y, mask):
    if mask.all():
        return y
    idx = np.arange(y.size)
    return np.interp(idx, idx[mask], y[mask])


def _moving_mean(y, width):
    """Centred moving mean of odd ``width`` (edges padded with the end values)."""
    if width < 3 or y.size < 3 * width:
        return y
    half = width // 2
    pad = np.concatenate([np.full(half, y[0]), y, np.full(half, y[-1])])
    return np.convolve(pad, np.ones(width) / width, mode="valid")


def _given_step(t, step_time_s, step_size):
    from ..conditioning._stepdetect import StepEvent

    k = int(np.searchsorted(t, float(step_time_s) - 1e-9 * (t[1] - t[0])))
    if k <= 0 or k >= t.size:
        raise IdentificationError(
            f"the step time {step_time_s} s lies outside the record ({t[0]:g} s to {t[-1]:g} s)")
    if k < 5:
        raise IdentificationError(f"the step is at the very start of the record: only {k} samples before it")
    if t.size - k < 10:
        raise IdentificationError(f"the step is at the very end of the record: only {t.size - k} samples after it")
    u = np.where(np.arange(t.size) >= k, float(step_size), 0.0)
    event = StepEvent(time_s=float(t[k]), index=k, size=float(step_size), before_level=0.0,
                      after_level=float(step_size), pre_window=(float(t[0]), float(t[k - 1])),
                      stationary=True, stationarity_statistic=0.0, clean=True, rise_duration_s=0.0,
                      noise_std=0.0, explanation=f"step given: {float(step_size):g} at {float(t[k]):g} s (sample {k})")
    return u, event


def _choose(fits):
    """Index order of the candidates: chosen first, then the rest (see BIC_TIE)."""
    eligible = [f for f in fits if f.degenerate is None] or list(fits)
    best = min(f.bic for f in eligible)
    tied = [f for f in eligible if f.bic - best <= BIC_TIE]

    def whiteness_then_size(f):
        white = not (math.isfinite(f.ljung_box_p) and f.ljung_box_p < LJUNG_BOX_ALPHA)
        return (not white, f.parameter_count, f.bic)
    chosen = min(tied, key=whiteness_then_size)
    rest = sorted([f for f in fits if f is not chosen], key=lambda f: f.bic)
    return chosen, rest


def _model_poles_plain(fit):
    from ._models import poles_of

    return [p for p in poles_of(fit.structure, fit.values) if p != 0]


def analyse_step(record_or_path, *, output, input=None, step_time_s=None, step_size=None,
                 model="auto", confidence=0.95, intervals="delta", settling_band=0.02,
                 closed_loop_time_constant_s=None, start_s=None, end_s=None, sample_rate_hz=None,
                 nan="raise", seed=0):
    """Identify a process model from a step test, with intervals, figures and starting gains.

    Parameters
    ----------
    record_or_path : Record or str or path-like
        The record, or a CSV file to read with :func:`identify.read_record`.
    output : str or int
        Output (process variable) channel.
    input : str or int, optional
        Input (actuator / controller output) channel.  Without it give both
        ``step_time_s`` and ``step_size``.
    step_time_s : float, optional
        Step instant; overrides the detection on the input channel.
    step_size : float, optional
        Step size when there is no input channel.
    model : {"auto", "first-order", "two-lag", "underdamped", "integrating"}, default="auto"
        Structure to fit; ``"auto"`` fits all four and chooses by BIC with residual checks.
    confidence : float, default=0.95
        Confidence level of every interval.
    intervals : {"delta", "bootstrap"}, default="delta"
        Delta method (covariance of the least-squares fit) or residual bootstrap
        (200 refits, percentile intervals, seeded by ``seed``).
    settling_band : float, default=0.02
        Settling band as a fraction of the change.
    closed_loop_time_constant_s : float, optional
        τc for the SIMC gains; default the dead time.
    start_s, end_s : float, optional
        Part of the record to analyse.
    sample_rate_hz : float, optional
        For files without a time column.
    nan : {"raise", "omit"}, default="raise"
        Missing output samples: raise, or leave them out of the fit (the input must be
        complete; the model is still simulated on every sample).
    seed : int, default=0
        Seed of the bootstrap.

    Returns
    -------
    StepResult

    Raises
    ------
    IdentificationError
        No step in the input, a step at the very start or end, a constant output, too
        few samples.
    RecordError
        Unreadable file, missing values under ``nan="raise"``, unknown column.
    ParameterValueError, ParameterTypeError
        Options outside what is allowed.

    Notes
    -----
    Deviation variables: ``u - u_before`` (the input's pre-step level) drives the model
    ``y = offset + K·G(s)e^(-θs)(u - u_before)``; the offset is fitted.  The pre-step
    window is checked for steady state (linear drift below 2 noise standard
    deviations).  Dead time: whole-sample grid, then continuous refinement by lmfit
    (Levenberg–Marquardt).  Structure: lowest BIC among the non-degenerate candidates;
    within 2 BIC units a candidate whose residuals pass the Ljung–Box test (1 %) and
    then the one with fewer parameters is preferred.

    References
    ----------
    C. L. Smith, Digital Computer Process Control, 1972; C. B. Sundaresan and
    P. R. Krishnaswamy, Can. J. Chem. Eng. 56(2), 1978; S. Skogestad, J. Process
    Control 13 (2003) 291-309; G. Schwarz, Ann. Stat. 6 (1978); C. M. Hurvich and
    C.-L. Tsai, Biometrika 76 (1989); G. M. Ljung and G. E. P. Box, Biometrika 65(2)
    (1978); IEEE Std 181 (transition reference levels).
    """
    from .._response import ModelResponse
    from ..conditioning._stepdetect import STEADY_LIMIT, detect_step, noise_std, settled_tail, steady_statistic
    from ..poles import normal_quantile
    from ._figures import figures_table, measure_figures
    from ._fit import FitSetup, dead_time_profile_interval, fit_structure
    from ._result import StepResult
    from ._tuning import simc
    from ._twopoint import two_point_estimates

    model, intervals, nan, band, level, tau_c, seed = _validate(
        model, intervals, nan, settling_band, confidence, closed_loop_time_constant_s, seed,
        step_time_s, step_size)
    if input is None and (step_time_s is None or step_size is None):
        raise ParameterValueError(
            "give the input column (input=...), or both step_time_s and step_size when the record has no input")
    if input is not None and step_size is not None:
        raise ParameterValueError("step_size applies only without an input column (the size is read from the input)")
    record = _load(record_or_path, sample_rate_hz, nan)
    if start_s is not None or end_s is not None:
        record = record.segment(start_s, end_s)
    t = record.time_s
    ts = record.sample_time_s
    out_ch = record.channel(output)
    y = np.array(out_ch.values, dtype=float)
    if record.samples < 20:
        raise IdentificationError(f"too few samples for a step test: {record.samples} (at least 20 needed)")
    mask = np.isfinite(y)
    if not mask.all():
        first = int(np.flatnonzero(~mask)[0])
        if nan == "raise":
            raise RecordError(f"the output column {out_ch.name!r} has missing values (first at sample {first}, "
                              f"t = {t[first]:g} s); use nan='omit' (--nan omit) to leave them out of the fit")
        if mask.sum() < 20:
            raise IdentificationError(f"too few output samples left after omitting missing values: {int(mask.sum())}")
    yv = y[mask]
    if np.ptp(yv) <= 1e-12 * max(float(np.max(np.abs(yv))), 1e-300):
        raise IdentificationError(f"the output {out_ch.name!r} is constant ({yv[0]:g}): no response to identify")
    if input is None:
        u, step = _given_step(t, step_time_s, step_size)
        in_unit, in_name, in_ch = "", None, None
    else:
        in_ch = record.channel(input)
        u = np.array(in_ch.values, dtype=float)
        if not np.all(np.isfinite(u)):
            first = int(np.flatnonzero(~np.isfinite(u))[0])
            raise RecordError(f"the input column {in_ch.name!r} has missing values (first at sample {first}); "
                              "the model cannot be driven across them")
        step = detect_step(t, u, step_time_s=step_time_s)
        in_unit, in_name = in_ch.unit, in_ch.name
    u_dev = u - step.before_level
    warnings = channel_warnings(outputs=(out_ch,), inputs=() if in_ch is None else (in_ch,))

    # -- pre-step window: level, noise, steadiness -------------------------------------
    y_fill = _interp_missing(y, mask)
    pre = (t <= step.pre_window[1]) & mask
    y_pre, t_pre = y[pre], t[pre]
    y0 = float(np.mean(y_pre)) if y_pre.size else float(yv[0])
    if y_pre.size >= 5:
        tc = t_pre - t_pre.mean()
        slope = float(tc @ (y_pre - y0) / (tc @ tc)) if tc @ tc > 0 else 0.0
        sigma = max(float(np.std(y_pre - y0 - slope * tc, ddof=1)), noise_std(y_pre))
    else:
        sigma = noise_std(yv)
    stat = steady_statistic(t_pre, y_pre, sigma) if y_pre.size >= 5 else 0.0
    if stat >= STEADY_LIMIT:
        warnings.append(f"not steady before the step: the output drifts {stat:.1f} noise standard deviations "
                        f"over the pre-step window (below {STEADY_LIMIT:g} wanted); the baseline and gain may be biased")
    if not step.stationary:
        warnings.append(f"not steady before the step: the input drifts {step.stationarity_statistic:.1f} noise "
                        f"standard deviations over the pre-step window (below {STEADY_LIMIT:g} wanted)")
    if not step.clean:
        warnings.append(f"input not a clean step: the input took {step.rise_duration_s:.3g} s "
                        f"({step.rise_duration_s / ts:.1f} samples) to move 10-90 %; a ramp or rate limit adds "
                        f"apparent dead time (the model is driven by the measured input, but read the dead time with care)")

    # -- seeds from the two-point methods ----------------------------------------------
    post = t >= step.time_s
    n_post = int(np.count_nonzero(post))
    tail_n = max(5, n_post // 10)
    tail = np.flatnonzero(mask & post)[-tail_n:]
    yf_tail = float(np.mean(y[tail]))
    smooth = max(1, n_post // 60)
    twopoint = two_point_estimates(t, y_fill, step_time_s=step.time_s, initial=y0, final=yf_tail,
                                   step_size=step.size, smooth_samples=smooth)
    seed_tau, seed_theta = twopoint[0].time_constant_s, twopoint[0].dead_time_s
    post_duration = float(t[-1] - step.time_s)
    if not (math.isfinite(seed_tau) and seed_tau > 0):
        seed_tau = post_duration / 5.0
    if not (math.isfinite(seed_theta) and seed_theta >= 0):
        seed_theta = 0.0
    seed_wn = seed_zeta = None
    shape_meas = measure_figures(t, _moving_mean(y_fill, smooth // 2 * 2 + 1),
                                 step_time_s=step.time_s, initial=y0, final=yf_tail)
    mp = shape_meas["overshoot_percent"] / 100.0
    if math.isfinite(mp) and mp > 0.02 and math.isfinite(shape_meas["peak_time_s"]):
        lnm = math.log(mp)
        seed_zeta = min(max(-lnm / math.sqrt(math.pi ** 2 + lnm ** 2), 0.05), 0.9)
        tp = max(shape_meas["peak_time_s"] - max(seed_theta, 0.0), 2 * ts)
        seed_wn = math.pi / tp / math.sqrt(1 - seed_zeta ** 2)

    duration = float(t[-1] - t[0]) + ts
    setup = FitSetup(y=y, u_dev=u_dev, sample_time_s=ts, mask=mask,
                     dead_time_max_s=0.6 * post_duration, time_constant_max_s=10.0 * duration,
                     frequency_min_rad_per_s=1.0 / (10.0 * duration))
    structures = STRUCTURES if model == "auto" else (model,)
    fits = [fit_structure(s, setup, seed_theta_s=seed_theta, seed_tau_s=seed_tau,
                          seed_frequency_rad_per_s=seed_wn, seed_damping=seed_zeta) for s in structures]
    chosen, rest = _choose(fits)
    runner = rest[0] if rest else None

    # -- intervals and poles ---------------------------------------------------------
    def gain_unit(structure):  # an integrating process's gain is a rate: output per input per second
        unit = f"{out_ch.unit}/{in_unit}" if (out_ch.unit or in_unit) else ""
        return unit + "/s" if structure == "integrating" and unit else unit

    dead_time_interval = "bootstrap" if intervals == "bootstrap" else "delta"
    if intervals == "bootstrap":
        ci, poles = bootstrap_intervals(chosen, setup, level, seed, BOOTSTRAP_SAMPLES)
    else:
        ci, poles = delta_intervals(chosen, level), poles_delta(chosen, level)
        theta_hat, theta_se = chosen.values["dead_time_s"], chosen.stderr("dead_time_s")
        z = normal_quantile(level)
        if not (math.isfinite(theta_se) and theta_hat - z * theta_se > 0):
            # at or near the bound theta = 0 the normal approximation fails: profile likelihood
            ci["dead_time_s"] = dead_time_profile_interval(chosen, setup, level)
            dead_time_interval = "profile likelihood (estimate at or near zero)"
    pmodel = process_model(chosen, ci, poles, level, intervals, gain_unit(chosen.structure))
    runner_model = None
    if runner is not None:
        runner_model = process_model(runner, delta_intervals(runner, level), poles_delta(runner, level),
                                      level, "delta", gain_unit(runner.structure))

    # -- figures: measured and model -----------------------------------------------------
    v = chosen.values
    integrating = chosen.structure == "integrating"
    shape = tuple(v[n] for n in SHAPE_PARAMETERS[chosen.structure])
    notes = {}
    settled = True
    if integrating:
        model_final = float("nan")
        settled = False
    else:
        model_final = v["offset"] + v["gain"] * step.size
        # largest distance from the final value, from the last sample on (catches ringing)
        slow_s = max([ts] + [1.0 / abs(p.real) for p in _model_poles_plain(chosen) if p.real != 0])
        t_rel = t[-1] - step.time_s - v["dead_time_s"]
        ahead = t_rel + np.linspace(0.0, 10.0 * slow_s, 2001)
        remaining = float(np.max(np.abs(1.0 - step_response(chosen.structure, shape, ahead))))
        settled = remaining <= band
        tail_settled, drift = settled_tail(t[post], y[post], change=v["gain"] * step.size, band=band, sigma=sigma)
        if not settled:
            warnings.append(f"not settled at the end: the model is still {100 * abs(remaining):.1f} % of the change "
                            f"from its final value at the last sample; final value extrapolated from the model")
        elif not tail_settled:
            settled = False
            warnings.append(f"not settled at the end: the output still drifts {drift:.3g} over the last fifth of "
                            f"the record (more than the {100 * band:g} % band and the noise); final value "
                            f"extrapolated from the model")
    measured_final = yf_tail if (settled or integrating) else model_final
    if not settled and not integrating:
        notes["final_value"] = "extrapolated from the model: the record ends before the response settles"
    # the measured figures are read from the record smoothed by a centred moving mean over
    # about a tenth of the model's rise time (noise would make first crossings early)
    smooth_n = 1
    if not integrating:
        grid = np.linspace(0.0, 10.0 * slow_s, 4001)
        rise = measure_figures(grid, step_response(chosen.structure, shape, grid), step_time_s=0.0,
                               initial=0.0, final=1.0)["rise_time_s"]
        if math.isfinite(rise):
            smooth_n = int(rise / ts / 10.0) // 2 * 2 + 1
    y_meas = _moving_mean(y_fill, smooth_n)
    meas = measure_figures(t, y_meas, step_time_s=step.time_s, initial=y0, final=measured_final, settling_band=band)
    change = measured_final - y0
    # the largest of N noise samples reaches about sigma·sqrt(2 ln N): a measured peak
    # within that (plus one sigma) of the final value is noise, not overshoot (common
    # practice, no source)
    peak_noise = sigma * (math.sqrt(2.0 * math.log(max(n_post, 2))) + 1.0)
    if (math.isfinite(change) and change != 0 and meas["overshoot_percent"] > 0
            and meas["overshoot_percent"] / 100.0 * abs(change) < peak_noise):
        meas["overshoot_percent"], meas["peak_time_s"] = 0.0, float("nan")
        notes["overshoot_percent"] = ("measured peak within the noise (sigma·(sqrt(2 ln N) + 1)): "
                                      "no overshoot shown")
    if math.isfinite(change) and 3.0 * sigma > band * abs(change):
        meas["settling_time_s"] = float("nan")
        notes["settling_time_s"] = "measured value not given: the noise (3 sigma) exceeds the settling band"
    # the model driven by the measured input, the input held past the end until settled
    slow = max([ts] + [1.0 / abs(p.real) for p in _model_poles_plain(chosen) if p.real != 0])
    horizon = step.time_s + v["dead_time_s"] + 10.0 * slow
    n_extra = int(min(max(0.0, math.ceil((horizon - t[-1]) / ts)), 100000)) if not integrating else 0
    u_ext = np.concatenate([u_dev, np.full(n_extra, u_dev[-1])])
    t_ext = t[0] + ts * np.arange(u_ext.size)
    y_ext = v["offset"] + v["gain"] * unit_response(chosen.structure, shape, v["dead_time_s"], u_ext, ts)
    if integrating:
        mod = {"final_value": float("nan"), "rise_time_s": float("nan"), "overshoot_percent": float("nan"),
               "peak_time_s": float("nan"), "settling_time_s": float("nan")}
        for name in ("final_value", "rise_time_s", "overshoot_percent", "peak_time_s", "settling_time_s"):
            notes[name] = "integrating response: no final value, so no step figures"
        meas = dict(mod)
    else:
        mod = measure_figures(t_ext, y_ext, step_time_s=step.time_s, initial=v["offset"],
                              final=model_final, settling_band=band)
    metrics = figures_table(meas, mod, unit=out_ch.unit, settling_band=band, notes=notes)

    # -- remaining warnings ---------------------------------------------------------------
    if chosen.degenerate:
        warnings.append(f"degenerate structure: {chosen.degenerate}; a simpler structure fits as well "
                        f"(see the candidates)")
    noise_band = NOISE_BAND_SIGMAS * sigma
    moved = abs(v["gain"] * step.size) if not integrating else abs(float(chosen.fitted[-1] - v["offset"]))
    if noise_band > 0 and moved < SMALL_STEP_RATIO * noise_band:
        warnings.append(f"step small against the noise band: the output moved {moved:.3g}, "
                        f"{moved / noise_band:.1f}x the noise band {noise_band:.3g} (+/-3 sigma); "
                        f"{SMALL_STEP_RATIO:g}x or more advised")
    if integrating or any(f.structure == "first-order" and f.degenerate and "integrating" in f.degenerate
                          for f in fits):
        warnings.append("integrating response: the output ramps without settling over the record; "
                        "the gain is a rate (output units per second per input unit) and there is no final value")
    if math.isfinite(chosen.ljung_box_p) and chosen.ljung_box_p < LJUNG_BOX_ALPHA:
        warnings.append(f"residual structure: Ljung-Box p = {chosen.ljung_box_p:.2g} (below {LJUNG_BOX_ALPHA:g}); "
                        "the model leaves structure in the residuals (a missing lag, a disturbance or coloured noise)")
    tuning = simc(chosen.structure, gain=v["gain"], dead_time_s=v["dead_time_s"],
                  time_constants_s=pmodel.time_constants_s, closed_loop_time_constant_s=tau_c,
                  sample_time_s=ts)
    response = ModelResponse(time_s=t, measured=y, model=chosen.fitted, input=u, unit=out_ch.unit,
                             label=f"{chosen.structure} model driven by the measured input")
    candidates = tuple(f.to_row() for f in [chosen] + rest)
    fit = {"residual_rms": chosen.residual_rms, "fit_percent": chosen.fit_percent,
           "ljung_box_p": chosen.ljung_box_p, "samples": chosen.samples, "criterion": "BIC",
           "noise_std": sigma}
    settings = {"output": out_ch.name, "input": in_name, "output_unit": out_ch.unit, "input_unit": in_unit,
                "step_time_s": step_time_s, "step_size": step_size,
                "model": model, "confidence": level, "intervals": intervals, "settling_band": band,
                "closed_loop_time_constant_s": tau_c, "start_s": start_s, "end_s": end_s,
                "sample_rate_hz": sample_rate_hz, "nan": nan, "seed": seed,
                "bootstrap_samples": BOOTSTRAP_SAMPLES if intervals == "bootstrap" else None,
                "sample_time_s": ts, "criterion": "BIC", "input_hold": "zero-order hold",
                "dead_time_interval": dead_time_interval, "measured_figures_smoothing_samples": smooth_n}
    return StepResult(source=record.source, sha256=record.sha256, model=pmodel, runner_up=runner_model,
                      candidates=candidates, poles=tuple(poles), metrics=metrics, twopoint=tuple(twopoint),
                      tuning=tuning, fit=fit, warnings=tuple(warnings), settings=settings, step=step,
                      response=response)
