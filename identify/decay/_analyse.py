"""The free-decay job: segment → baseline → pencil → nonlinear fit → cross-checks → result.

    analyse_decay   one call from a record (or a CSV path) to a :class:`DecayResult`
"""
from __future__ import annotations

import math
import os

import numpy as np

from .._quality import channel_warnings
from .._errors import IdentificationError, ParameterTypeError, ParameterValueError, PoleprintError
from .._validate import check_choice, check_confidence, check_int, check_positive
from ._checks import _checks, _consensus, _not_used, _why
from ._common import MethodEstimate
from ._refine import (CROSS_CHECK_MAX_SAMPLES, EXTEND_ROUNDS, HALFPOWER_MAX_SAMPLES, SECOND_LOOK_MIN_SAMPLES,
                      _block_copy, _clipping, _extend_segment, _finite_run, _linear_model, _prune, _second_look,
                      _segment)

__all__ = ["analyse_decay", "METHODS"]

METHODS = ("auto", "logdec", "pencil", "fit", "halfpower")


def _load(record_or_path, sample_rate_hz, nan):
    from ..records import Record

    if isinstance(record_or_path, Record):
        return record_or_path
    if isinstance(record_or_path, (str, os.PathLike)):
        from .._csv import read_record

        return read_record(record_or_path, sample_rate_hz=sample_rate_hz, nan=nan)
    raise ParameterTypeError(
        f"record_or_path must be a Record or a path to a CSV file; got {type(record_or_path).__name__}")


def _model_on_segment(answer: MethodEstimate, t, y, drift):
    """The answer's model on the analysed segment (fit terms, or least-squares amplitudes)."""
    from ._nls import linear_coefficients, model_values, model_values_on_grid

    if answer.method == "fit" and "terms" in answer.details:
        d = answer.details
        sg = [-x["real"] for x in d["terms"]]
        om = [x["imag"] for x in d["terms"]]
        step = float(t[-1] - t[0]) / max(t.size - 1, 1)  # t is the record's uniform grid
        return model_values_on_grid(float(t[0]) - d["t_ref_s"], step, t.size, sg, om,
                                    [x["c"] for x in d["terms"]], [x["d"] for x in d["terms"]],
                                    d["offset"], d["drift_per_s"] or 0.0)
    tau = t - t[0]
    osc = [p for p in answer.poles if p.imag > 0]
    sg = [p.decay_rate_per_s for p in osc]
    om = [p.imag for p in osc]
    c, dd, b0, b1 = linear_coefficients(tau, y, sg, om, drift)
    return model_values(tau, sg, om, c, dd, b0, b1)


def _same_modes(these, those, tolerance=0.01):
    """True when two pole sets hold as many modes at frequencies within ``tolerance``."""
    fa = sorted(p.natural_frequency_hz for p in these)
    fb = sorted(p.natural_frequency_hz for p in those)
    return len(fa) == len(fb) and all(abs(a - b) <= tolerance * b for a, b in zip(fa, fb))


def _cross_checks(method, t, y0, poles, level, noise_pre, fs, which=("logdec", "halfpower")):
    """Log decrement (single-mode records only) and half-power at the frequencies of
    ``poles`` on the baseline-free segment ``(t, y0)``; ``poles=None`` lets the method
    named alone find its own.  In auto mode a failing cross-check is "not used".
    ``which`` limits the methods run."""
    out = {}
    if poles is None:
        from ._pencil import choose_decimation

        _, fastest = choose_decimation(y0, 1.0 / fs)
    else:
        fastest = max((p.natural_frequency_hz for p in poles), default=0.0)
    if method in ("auto", "logdec") and "logdec" in which:
        if poles is None or len(poles) == 1:
            try:
                from ._logdec import log_decrement

                # peaks need >= 20 samples per period for the 3-point interpolation
                tc, yc, q_cross = _block_copy(t, y0, fastest, 20.0, CROSS_CHECK_MAX_SAMPLES)
                out["logdec"] = log_decrement(tc, yc, confidence=level, noise_std=None if q_cross > 1 else noise_pre)
            except Exception as exc:  # a failing cross-check must not sink the answer
                if method == "logdec":
                    raise
                out["logdec"] = _not_used("logdec", _why(exc))
        else:
            out["logdec"] = _not_used("logdec", "a single-mode method and the record holds several modes")
    if method in ("auto", "halfpower") and "halfpower" in which:
        try:
            from ._halfpower import half_power

            freqs = None if poles is None else [p.natural_frequency_hz for p in poles]
            # the spectrum needs the record's length, not its sample rate
            tc, yc, _ = _block_copy(t, y0, fastest, 6.0, HALFPOWER_MAX_SAMPLES)
            out["halfpower"] = half_power(tc, yc, confidence=level, frequencies_hz=freqs)
        except Exception as exc:  # a failing cross-check must not sink the answer
            if method == "halfpower":
                raise
            out["halfpower"] = _not_used("halfpower", _why(exc))
    return out


def analyse_decay(record_or_path, *, column=None, method="auto", modes="auto", confidence=0.95,
                  intervals="delta", start_s=None, end_s=None, sample_rate_hz=None, nan="raise",
                  seed=0):
    """Natural frequencies and damping ratios, with intervals, from one free-decay record.

    Parameters
    ----------
    record_or_path : Record or path-like
        A :class:`~identify.records.Record`, or a CSV file read with
        :func:`identify.read_record`.
    column : str or int, optional
        Channel to analyse (required when the record holds several).
    method : {"auto", "logdec", "pencil", "fit", "halfpower"}, default="auto"
        ``"auto"``: matrix pencil → nonlinear fit as the answer, log decrement
        (single-mode records) and half-power bandwidth as cross-checks.  ``"fit"``: pencil
        → fit without cross-checks.  Otherwise the named method alone.
    modes : "auto" or int, default="auto"
        Number of modes; ``"auto"`` keeps every mode that stands above the noise.
        With a number, the largest modes are kept (never more than the data support).
    confidence : float, default=0.95
        Confidence level of every interval, as a probability.
    intervals : {"delta", "bootstrap"}, default="delta"
        Interval method of the nonlinear fit.
    start_s, end_s : float, optional
        Bounds of the analysed segment in seconds; detection fills what is not given.
    sample_rate_hz : float, optional
        Sample rate for CSV files without a time column.
    nan : {"raise", "omit"}, default="raise"
        Missing values: ``"raise"`` stops; ``"omit"`` analyses the longest complete stretch.
    seed : int, default=0
        Seed of the bootstrap (``intervals="bootstrap"``).

    Returns
    -------
    DecayResult

    Raises
    ------
    IdentificationError
        No oscillation above the noise, or a segment too short to analyse.
    RecordError
        Unreadable input, missing values under ``nan="raise"``, unknown column.

    Notes
    -----
    Each mode is ``A e^(-σt) cos(ω_d t + φ)``, a conjugate pole pair ``s = -σ ± jω_d``
    with ``fn = |s|/2π`` and ``ζ = σ/|s|``.  The nonlinear least-squares fit (the
    maximum-likelihood estimate under white Gaussian noise) includes an offset and a
    linear drift, and is seeded only by the matrix-pencil poles.  See docs/decay.md for
    the warnings and their thresholds.

    References
    ----------
    Hua & Sarkar (1990), IEEE Trans. ASSP 38(5); Kay (1993), *Fundamentals of Statistical
    Signal Processing: Estimation Theory*, ch. 3; Thomson, *Theory of Vibration with
    Applications*, §2.7 (logarithmic decrement).
    """
    method = check_choice("method", method, METHODS)
    if not (isinstance(modes, str) and modes.lower() == "auto"):
        modes = check_int("modes", modes, minimum=1, maximum=20)
    else:
        modes = "auto"
    level = check_confidence(confidence)
    intervals = check_choice("intervals", intervals, ("delta", "bootstrap"))
    nan = check_choice("nan", nan, ("raise", "omit"))
    seed = check_int("seed", seed)
    for name, value in (("start_s", start_s), ("end_s", end_s)):
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer))):
            raise ParameterTypeError(f"{name} must be a number of seconds; got {value!r}")
    if start_s is not None and end_s is not None and float(end_s) <= float(start_s):
        raise ParameterValueError(f"end_s must be later than start_s; got start_s={start_s!r}, end_s={end_s!r}")
    check_positive("sample_rate_hz", sample_rate_hz, allow_none=True)

    record = _load(record_or_path, sample_rate_hz, nan)
    source = record.source
    try:
        return _analyse(record, column, method, modes, level, intervals, start_s, end_s, nan, seed)
    except PoleprintError as exc:
        raise exc.with_source(source)


def _analyse(record, column, method, modes, level, intervals, start_s, end_s, nan, seed):
    source = record.source
    channel = record.channel(column)
    warnings = channel_warnings(outputs=(channel,))
    t_all, y_all, missing_note = _finite_run(record.time_s, channel.values, nan, source)
    if missing_note:
        warnings.append(missing_note)
    if y_all.size < 16:
        raise IdentificationError(f"{y_all.size} samples are too few for a free-decay analysis (16 or more needed)")
    lo, hi, seg_info = _segment(t_all, y_all, start_s, end_s, source)
    # how far the segment may later grow: back to just after the trigger (or the record
    # start), forward to the record end; never past a bound the caller gave
    trigger = seg_info.get("trigger_s")
    if start_s is not None:
        lo_min = lo
    elif trigger is not None:
        lo_min = min(lo, int(np.searchsorted(t_all, float(trigger), "right")))
    else:
        lo_min = 0
    hi_max = hi if end_s is not None else y_all.size
    if not np.ptp(y_all[lo:hi]) > 0:
        raise IdentificationError("no oscillation: the signal is constant over the analysed segment")

    # clipping (looked for from the trigger on): analyse only after the last clipped sample
    clip_text, last_clipped = _clipping(t_all[lo_min:hi], y_all[lo_min:hi], channel.name)
    if clip_text:
        warnings = [w for w in warnings if not w.startswith("clipping:")]
        if last_clipped is not None and last_clipped >= 0:
            first = lo_min + last_clipped + 1
            if hi - first < 16:
                raise IdentificationError(f"{clip_text}; too few unclipped samples after the last clipped one "
                                          f"to analyse the decay")
            lo_min = first
            if lo < first:
                lo = first
                seg_info["chosen_by"] = seg_info["chosen_by"] + ", moved past clipping"
            clip_text += f"; analysed from {t_all[lo]:g} s, after the last clipped sample"
        warnings.append(clip_text)
    t, y = t_all[lo:hi], y_all[lo:hi]
    seg_info["start_s"], seg_info["end_s"] = float(t[0]), float(t[-1])

    # baseline: the quiet part before the segment when there is one, else the segment
    from ..conditioning._trend import estimate_offset_trend

    quiet = 0 if trigger is None else min(lo, int(np.searchsorted(t_all, float(trigger))) - 2)
    if quiet >= 20:
        pre = estimate_offset_trend(t_all[:quiet], y_all[:quiet], linear=False)
        baseline_source = "pre-trigger"
    else:
        pre = estimate_offset_trend(t, y, linear=True)
        baseline_source = "segment"
    y0 = y - pre.evaluate(t)
    noise_pre = seg_info.get("noise_std")
    if noise_pre is None and quiet >= 20:
        noise_pre = pre.residual_std

    fs = 1.0 / float(t[1] - t[0])
    methods: dict = {}
    order_scan = ()
    max_modes = 10 if modes == "auto" else int(modes)
    drift = True

    def run_pencil(tt, yy):
        est = matrix_pencil(tt, yy, confidence=level, max_modes=max(max_modes, 10))
        if modes != "auto" and len(est.poles) > modes:
            keep = sorted(est.poles, key=lambda p: -(p.amplitude or 0.0))[:modes]
            est = MethodEstimate("pencil", tuple(keep), est.warnings, est.details)
        return est

    from ._nls import fit_damped_sinusoids
    from ._pencil import matrix_pencil

    answer = None
    early = None  # cross-checks run before the fit: (segment, the poles they were given, results)
    if method in ("auto", "fit", "pencil"):
        detected = (float(t[0]), float(t[-1]))
        pencil = run_pencil(t, y0)
        if method != "pencil":
            # grow the segment while the pencil's model explains the samples (back to just
            # after the trigger, on to the record end), the pencil again on each growth
            for _ in range(EXTEND_ROUNDS):
                model = _linear_model(t, y, pencil.poles, drift)
                if model is None:
                    break
                new_lo, new_hi = _extend_segment(t_all, y_all, lo, hi, lo_min, hi_max, model)
                if (new_lo, new_hi) == (lo, hi):
                    break
                t_new, y_new = t_all[new_lo:new_hi], y_all[new_lo:new_hi]
                y0_new = y_new - pre.evaluate(t_new)
                try:
                    grown = run_pencil(t_new, y0_new)
                except PoleprintError:
                    break
                if not grown.poles:
                    break
                lo, hi, t, y, y0, pencil = new_lo, new_hi, t_new, y_new, y0_new, grown
        methods["pencil"] = pencil
        pencil_segment = (lo, hi)
        order_scan = tuple(pencil.details.get("order_scan", ()))
        if modes != "auto" and len(pencil.poles) < modes:
            warnings.append(f"fewer modes: {modes} asked for, {len(pencil.poles)} found above the noise; "
                            f"no mode is made up")
        answer = pencil
        if method != "pencil":
            if method == "auto":
                # half-power needs only the segment and the modes' frequencies: run it now,
                # ahead of the fit (log decrement's t quantiles need scipy.stats, which the
                # command line is importing with lmfit in another thread meanwhile)
                early = ((lo, hi), pencil.poles, _cross_checks(method, t, y0, pencil.poles, level, noise_pre, fs,
                                                               which=("halfpower",)))
            try:
                fitted = fit_damped_sinusoids(t, y, pencil.poles, drift=drift, confidence=level,
                                              intervals="delta", seed=seed)
            except (PoleprintError, np.linalg.LinAlgError, ValueError) as exc:
                warnings.append(f"fit failed: {' '.join(str(exc).split())}; the matrix-pencil poles are the answer")
            else:
                fitted = _prune(fitted, t, y, fit_damped_sinusoids, drift, level, "delta", seed)
                methods["fit"] = answer = fitted
                for _ in range(EXTEND_ROUNDS):  # the fit extrapolates better: grow again, refit
                    new_lo, new_hi = _extend_segment(t_all, y_all, lo, hi, lo_min, hi_max, fitted.details)
                    if (new_lo, new_hi) == (lo, hi):
                        break
                    try:
                        refit = fit_damped_sinusoids(t_all[new_lo:new_hi], y_all[new_lo:new_hi], fitted.poles,
                                                     drift=drift, confidence=level, intervals="delta",
                                                     seed=seed)
                    except (PoleprintError, np.linalg.LinAlgError, ValueError):
                        break
                    lo, hi = new_lo, new_hi
                    refit = _prune(refit, t_all[lo:hi], y_all[lo:hi], fit_damped_sinusoids, drift, level,
                                   "delta", seed)
                    methods["fit"] = answer = fitted = refit
                if lo - lo_min > SECOND_LOOK_MIN_SAMPLES and start_s is None:
                    # the model did not reach back to the trigger (or the record start): a
                    # fast-decaying mode may be gone by the detected start.  Look again from
                    # there; keep it only if a free decay explains those samples as well.
                    second = _second_look(t_all, y_all, lo_min, lo, hi, fitted, pre, level, max_modes, modes,
                                          drift, "delta", seed)
                    if second is not None:
                        lo = lo_min
                        methods["pencil"], fitted = second
                        methods["fit"] = answer = fitted
                        order_scan = tuple(methods["pencil"].details.get("order_scan", ()))
                        pencil_segment = (lo, hi)
                if (lo, hi) != pencil_segment:
                    t, y = t_all[lo:hi], y_all[lo:hi]
                    y0 = y - pre.evaluate(t)
                    if method == "auto":  # the pencil as a cross-check on the same samples
                        try:
                            methods["pencil"] = run_pencil(t, y0)
                            order_scan = tuple(methods["pencil"].details.get("order_scan", ()))
                        except PoleprintError:
                            pass
        if detected != (float(t[0]), float(t[-1])):
            seg_info["detected_start_s"], seg_info["detected_end_s"] = detected
            seg_info["start_s"], seg_info["end_s"] = float(t[0]), float(t[-1])
            # (the pencil's model is fitted too, its amplitudes by least squares; the words are
            # part of the JSON contract)
            seg_info["chosen_by"] += ", extended while the fitted model explains the samples"
    if intervals == "bootstrap" and "fit" in methods:  # the segment is settled: resample once
        try:
            methods["fit"] = answer = fit_damped_sinusoids(t, y, methods["fit"].poles, drift=drift,
                                                           confidence=level, intervals="bootstrap", seed=seed)
        except (PoleprintError, np.linalg.LinAlgError, ValueError) as exc:
            warnings.append(f"bootstrap failed: {' '.join(str(exc).split())}; delta-method intervals given")
    if method in ("auto", "logdec", "halfpower"):
        poles = None if answer is None else answer.poles
        if early is not None and early[0] == (lo, hi) and _same_modes(early[1], poles):
            # the fit kept the pencil's segment and modes: half-power stands
            methods.update(_cross_checks(method, t, y0, poles, level, noise_pre, fs, which=("logdec",)))
            methods.update(early[2])
        else:
            methods.update(_cross_checks(method, t, y0, poles, level, noise_pre, fs))
        if answer is None:
            answer = methods[method]
    if not answer.poles:
        raise IdentificationError("no oscillation found above the noise")
    warnings.extend(answer.warnings)

    # model on the segment, goodness of fit, noise
    from .._response import ModelResponse
    from ..validation._metrics import fit_percent, rms

    model = _model_on_segment(answer, t, y, drift)
    model.setflags(write=False)  # the response keeps these arrays without copies
    t = t.view()
    t.setflags(write=False)
    resid = y - model
    residual_rms = rms(resid)
    noise = residual_rms
    a_max = max((p.amplitude or 0.0) for p in answer.poles)
    snr_db = 10 * math.log10((a_max ** 2 / 2) / noise ** 2) if noise > 0 and a_max > 0 else float("inf")
    duration = float(t[-1] - t[0])
    fit_stats = {"residual_rms": residual_rms, "fit_percent": fit_percent(y, model),
                 "noise_rms": noise_pre if noise_pre is not None else residual_rms,
                 "snr_db": snr_db, "samples": int(y.size)}
    response = ModelResponse(t, y, model, unit=channel.unit,
                             label=f"sum of {len(answer.poles)} damped sinusoid(s) ({answer.method})")

    consensus, disagreements = _consensus(answer, methods)
    warnings.extend(_checks(answer, duration, noise, snr_db, fs, y, t, methods, pre, baseline_source))
    warnings.extend(disagreements)

    settings = {"column": channel.name, "method": method, "modes": modes, "confidence": level,
                "intervals": intervals, "start_s": start_s, "end_s": end_s,
                "sample_rate_hz": record.sample_rate_hz, "nan": nan, "seed": seed,
                "drift_fitted": drift, "baseline": baseline_source,
                "logdec_rule": "single-mode records only"}
    seg_info["baseline"] = pre.to_dict() if hasattr(pre, "to_dict") else None
    seen, unique = set(), []
    for w in warnings:
        if w not in seen:
            seen.add(w)
            unique.append(w)
    from ._result import DecayResult

    return DecayResult(source=source, sha256=record.sha256, column=channel.name, unit=channel.unit,
                       segment=seg_info, poles=answer.poles, method=answer.method, methods=methods,
                       consensus=tuple(consensus), fit=fit_stats, warnings=tuple(unique),
                       settings=settings, response=response, order_scan=order_scan)
