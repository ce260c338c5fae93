"""The free-decay job: segment → baseline → pencil → nonlinear fit → cross-checks → result.

    analyse_decay   one call from a record (or a CSV path) to a :class:`DecayResult`
"""
from __future__ import annotations

import math
import os

import numpy as np

from .._errors import (IdentificationError, ParameterTypeError, ParameterValueError, PoleprintError,
                       RecordError)
from .._validate import check_choice, check_confidence, check_int, check_positive
from ._common import MethodEstimate

__all__ = ["analyse_decay", "METHODS"]

METHODS = ("auto", "logdec", "pencil", "fit", "halfpower")

# Warning thresholds (common practice, no source; documented in docs/decay.md)
MIN_CYCLES = 5.0            # cycles above the noise floor
MIN_SNR_DB = 20.0           # initial signal-to-noise ratio, 10·log10((A²/2)/σ²)
NYQUIST_FRACTION = 0.8      # a mode above this fraction of the Nyquist frequency
MAX_DRIFT_FRACTION = 0.1    # baseline change over the segment / largest amplitude
MAX_ZETA_REL_HALF_WIDTH = 0.5   # ζ interval half-width / ζ beyond which it is not useful
MAX_FN_REL_HALF_WIDTH = 0.02    # fn interval half-width / fn beyond which it is not useful
MATCH_TOLERANCE = 0.1       # relative frequency distance for matching modes across methods
#: cross-check methods get a block-averaged copy of records longer than this
CROSS_CHECK_MAX_SAMPLES = 50_000


def _load(record_or_path, sample_rate_hz, nan):
    from ..records import Record

    if isinstance(record_or_path, Record):
        return record_or_path
    if isinstance(record_or_path, (str, os.PathLike)):
        from .._csv import read_record

        return read_record(record_or_path, sample_rate_hz=sample_rate_hz, nan=nan)
    raise ParameterTypeError(
        f"record_or_path must be a Record or a path to a CSV file; got {type(record_or_path).__name__}")


def _finite_run(t, y, nan, source):
    finite = np.isfinite(y)
    if finite.all():
        return t, y, None
    if nan == "raise":
        bad = int(np.flatnonzero(~finite)[0])
        raise RecordError(f"missing value at t = {t[bad]:g} s (sample {bad}); use nan='omit' "
                          f"(--nan omit) to analyse the longest complete stretch", source)
    edges = np.flatnonzero(np.diff(np.concatenate(([0], finite.astype(np.int8), [0]))))
    starts, ends = edges[0::2], edges[1::2]
    if starts.size == 0:
        raise RecordError("the channel holds no finite value", source)
    k = int(np.argmax(ends - starts))
    lo, hi = int(starts[k]), int(ends[k])
    note = (f"missing values: {int((~finite).sum())} missing samples; analysed the longest complete "
            f"stretch, {t[lo]:g} s to {t[hi - 1]:g} s")
    return t[lo:hi], y[lo:hi], note


def _segment(t, y, start_s, end_s, source):
    """Detected (or given) decay segment, as (lo, hi, info dict)."""
    info = {}
    try:
        from ..conditioning._segment import detect_decay_segment
    except ImportError:  # conditioning not available: the whole record (or the given bounds)
        detect_decay_segment = None
    if detect_decay_segment is not None:
        seg = detect_decay_segment(t, y, start_s=start_s, end_s=end_s)
        s0, s1 = float(seg.start_s), float(seg.end_s)
        info = {"trigger_s": getattr(seg, "trigger_s", None), "noise_std": getattr(seg, "noise_std", None)}
        if hasattr(seg, "to_dict"):
            info["detection"] = seg.to_dict()
    else:
        s0 = float(t[0]) if start_s is None else float(start_s)
        s1 = float(t[-1]) if end_s is None else float(end_s)
    ts = float(t[1] - t[0])
    lo = int(np.searchsorted(t, s0 - 1e-9 * ts))
    hi = int(np.searchsorted(t, s1 + 1e-9 * ts, "right"))
    if hi - lo < 16:
        raise IdentificationError(f"the decay segment {s0:g} s to {s1:g} s holds {hi - lo} samples "
                                  f"(16 or more needed)", source)
    if start_s is not None and end_s is not None:
        chosen = "given"
    elif detect_decay_segment is None:
        chosen = "whole record" if start_s is None and end_s is None else "given and record end"
    else:
        chosen = "detected" if start_s is None and end_s is None else "given and detected"
    info.update({"start_s": float(t[lo]), "end_s": float(t[hi - 1]), "chosen_by": chosen,
                 "pretrigger_samples": lo})
    return lo, hi, info


def _clip_mask(y):
    """Samples sitting at the channel's extreme values in flat runs (3 or more)."""
    mask = np.zeros(y.size, dtype=bool)
    for level in (y.max(), y.min()):
        at = np.concatenate(([False], y == level, [False]))
        edges = np.flatnonzero(np.diff(at.astype(np.int8)))
        for a, b in zip(edges[0::2], edges[1::2]):
            if b - a >= 3:
                mask[a:b] = True
    return mask


def _clipping(t, y, name):
    try:
        from .._quality import clipping_warning
    except ImportError:  # pragma: no cover - quality checks ship with the package
        clipping_warning = None
    mask = _clip_mask(y)
    if clipping_warning is not None:
        text = clipping_warning(y, name)
        if text is None:
            return None, None
    elif mask.sum() < 3:
        return None, None
    else:
        text = f"clipping: channel '{name}' sits at its extremes for {int(mask.sum())} samples"
    last = int(np.flatnonzero(mask)[-1]) if mask.any() else -1
    return text, last


def _block_copy(t, y, fastest_hz):
    """Block-averaged copy of about 50,000 samples, keeping >= 20 samples per period of
    the fastest mode (poles preserved exactly), for the cross-checks on long records."""
    from ._pencil import block_decimate

    if y.size <= CROSS_CHECK_MAX_SAMPLES or not fastest_hz > 0:
        return t, y, 1
    ts = float(t[1] - t[0])
    q = int(min(1.0 / (ts * 20.0 * fastest_hz), -(-y.size // CROSS_CHECK_MAX_SAMPLES)))
    if q < 2:
        return t, y, 1
    td, yd = block_decimate(t, y, q)
    return td, yd, q


def _cycles_above_noise(pole, duration_s, noise):
    amp = pole.amplitude or 0.0
    if not (amp > 0 and noise > 0):
        return duration_s * pole.damped_frequency_hz
    sigma = pole.decay_rate_per_s
    visible = duration_s
    if sigma > 0:
        ratio = amp / (3.0 * noise)
        visible = min(duration_s, math.log(ratio) / sigma) if ratio > 1 else 0.0
    return max(visible, 0.0) * pole.damped_frequency_hz


def _not_used(name, why):
    """A method that did not run on this record, with the reason (no poles)."""
    text = " ".join(str(why).split())
    return MethodEstimate(name, (), (f"not used: {text}",), {"used": False})


def _interval_summary(p):
    ci = p.ci
    return {"natural_frequency_hz": p.natural_frequency_hz, "damping_ratio": p.damping_ratio,
            "natural_frequency_ci_hz": None if ci is None else list(ci.natural_frequency_hz),
            "damping_ratio_ci": None if ci is None else list(ci.damping_ratio)}


def _overlap(a, b):
    return a is None or b is None or (a[0] <= b[1] and b[0] <= a[1])


def _consensus(answer: MethodEstimate, methods: dict):
    rows, disagreements = [], []
    for i, p in enumerate(answer.poles, 1):
        row = {"mode": i, "natural_frequency_hz": p.natural_frequency_hz,
               "damping_ratio": p.damping_ratio, "answer": answer.method, "estimates": {}, "agree": True}
        mine = _interval_summary(p)
        for name, est in methods.items():
            if name == answer.method or est is None:
                continue
            if not est.poles:
                row["estimates"][name] = None
                continue
            q = min(est.poles, key=lambda x: abs(x.natural_frequency_hz - p.natural_frequency_hz))
            if abs(q.natural_frequency_hz - p.natural_frequency_hz) > MATCH_TOLERANCE * p.natural_frequency_hz:
                row["estimates"][name] = None
                continue
            other = _interval_summary(q)
            agree_fn = _overlap(mine["natural_frequency_ci_hz"], other["natural_frequency_ci_hz"])
            agree_z = _overlap(mine["damping_ratio_ci"], other["damping_ratio_ci"])
            other["agree"] = bool(agree_fn and agree_z)
            row["estimates"][name] = other
            if not other["agree"]:
                row["agree"] = False
                what = "ζ" if not agree_z else "fn"
                if not agree_z:
                    a, b, ca, cb = p.damping_ratio, q.damping_ratio, mine["damping_ratio_ci"], other["damping_ratio_ci"]
                    fmt = "{:.4g}"
                else:
                    a, b = p.natural_frequency_hz, q.natural_frequency_hz
                    ca, cb = mine["natural_frequency_ci_hz"], other["natural_frequency_ci_hz"]
                    fmt = "{:.6g}"
                disagreements.append(
                    f"methods disagree: mode {i} ({p.natural_frequency_hz:.4g} Hz): {name} {what} "
                    f"{fmt.format(b)} [{fmt.format(cb[0])}, {fmt.format(cb[1])}] against {answer.method} "
                    f"{fmt.format(a)} [{fmt.format(ca[0])}, {fmt.format(ca[1])}]; the intervals do not overlap")
        rows.append(row)
    return rows, disagreements


def _model_on_segment(answer: MethodEstimate, t, y, drift):
    """The answer's model on the analysed segment (fit terms, or least-squares amplitudes)."""
    from ._nls import linear_coefficients, model_values

    if answer.method == "fit" and "terms" in answer.details:
        d = answer.details
        tau = t - d["t_ref_s"]
        sg = [-x["real"] for x in d["terms"]]
        om = [x["imag"] for x in d["terms"]]
        return model_values(tau, sg, om, [x["c"] for x in d["terms"]], [x["d"] for x in d["terms"]],
                            d["offset"], d["drift_per_s"] or 0.0)
    tau = t - t[0]
    osc = [p for p in answer.poles if p.imag > 0]
    sg = [p.decay_rate_per_s for p in osc]
    om = [p.imag for p in osc]
    c, dd, b0, b1 = linear_coefficients(tau, y, sg, om, drift)
    return model_values(tau, sg, om, c, dd, b0, b1)


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
    warnings = [w for w in record.warnings]
    t_all, y_all, missing_note = _finite_run(record.time_s, channel.values, nan, source)
    if missing_note:
        warnings.append(missing_note)
    if y_all.size < 16:
        raise IdentificationError(f"{y_all.size} samples are too few for a free-decay analysis (16 or more needed)")
    lo, hi, seg_info = _segment(t_all, y_all, start_s, end_s, source)
    t, y = t_all[lo:hi], y_all[lo:hi]
    if not np.ptp(y) > 0:
        raise IdentificationError("no oscillation: the signal is constant over the analysed segment")

    # clipping: analyse only after the last clipped sample
    clip_text, last_clipped = _clipping(t, y, channel.name)
    if clip_text:
        warnings = [w for w in warnings if not w.startswith("clipping:")]
        if last_clipped is not None and last_clipped >= 0:
            first = last_clipped + 1
            if y.size - first < 16:
                raise IdentificationError(f"{clip_text}; too few unclipped samples after the last clipped one "
                                          f"to analyse the decay")
            t, y = t[first:], y[first:]
            seg_info["start_s"] = float(t[0])
            seg_info["chosen_by"] = seg_info["chosen_by"] + ", moved past clipping"
            clip_text += f"; analysed from {t[0]:g} s, after the last clipped sample"
        warnings.append(clip_text)

    # baseline: the quiet part before the segment when there is one, else the segment
    from ..conditioning._trend import estimate_offset_trend

    trigger = seg_info.get("trigger_s")
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

    def run_pencil():
        est = matrix_pencil(t, y0, confidence=level, max_modes=max(max_modes, 10))
        if modes != "auto" and len(est.poles) > modes:
            keep = sorted(est.poles, key=lambda p: -(p.amplitude or 0.0))[:modes]
            est = MethodEstimate("pencil", tuple(keep), est.warnings, est.details)
        return est

    from ._nls import fit_damped_sinusoids
    from ._pencil import matrix_pencil

    answer = None
    if method in ("auto", "fit", "pencil"):
        pencil = run_pencil()
        methods["pencil"] = pencil
        order_scan = tuple(pencil.details.get("order_scan", ()))
        if modes != "auto" and len(pencil.poles) < modes:
            warnings.append(f"fewer modes: {modes} asked for, {len(pencil.poles)} found above the noise; "
                            f"no mode is made up")
        answer = pencil
        if method != "pencil":
            try:
                fitted = fit_damped_sinusoids(t, y, pencil.poles, drift=drift, confidence=level,
                                              intervals=intervals, seed=seed)
            except (PoleprintError, np.linalg.LinAlgError, ValueError) as exc:
                warnings.append(f"fit failed: {' '.join(str(exc).split())}; the matrix-pencil poles are the answer")
            else:
                methods["fit"] = fitted
                answer = fitted
    fastest = max((p.natural_frequency_hz for p in answer.poles), default=0.0) if answer else 0.0
    if method in ("auto", "logdec", "halfpower"):
        if answer is None:
            from ._pencil import choose_decimation

            _, fastest = choose_decimation(y0, 1.0 / fs)
        tc, yc, q_cross = _block_copy(t, y0, fastest)
        single = answer is None or len(answer.poles) == 1
        if method in ("auto", "logdec"):
            if single:
                try:
                    from ._logdec import log_decrement

                    methods["logdec"] = log_decrement(tc, yc, confidence=level,
                                                      noise_std=None if q_cross > 1 else noise_pre)
                except PoleprintError as exc:
                    if method == "logdec":
                        raise
                    methods["logdec"] = _not_used("logdec", exc)
            else:
                methods["logdec"] = _not_used("logdec", "a single-mode method and the record holds several modes")
        if method in ("auto", "halfpower"):
            try:
                from ._halfpower import half_power

                freqs = None if answer is None else [p.natural_frequency_hz for p in answer.poles]
                methods["halfpower"] = half_power(tc, yc, confidence=level, frequencies_hz=freqs)
            except PoleprintError as exc:
                if method == "halfpower":
                    raise
                methods["halfpower"] = _not_used("halfpower", exc)
            except ImportError:
                methods["halfpower"] = _not_used("halfpower", "the half-power method is not available")
        if answer is None:
            answer = methods[method]
    if not answer.poles:
        raise IdentificationError("no oscillation found above the noise")
    warnings.extend(answer.warnings)

    # model on the segment, goodness of fit, noise
    from .._response import ModelResponse
    from ..validation._metrics import fit_percent, rms

    model = _model_on_segment(answer, t, y, drift)
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


def _checks(answer, duration, noise, snr_db, fs, y, t, methods, baseline, baseline_source):
    """The result's warnings about the record and the intervals (one line each)."""
    out = []
    cycles = [_cycles_above_noise(p, duration, noise) for p in answer.poles]
    worst = int(np.argmin(cycles))
    if cycles[worst] < MIN_CYCLES:
        p = answer.poles[worst]
        out.append(f"few cycles: mode at {p.natural_frequency_hz:.4g} Hz shows only {cycles[worst]:.1f} cycles "
                   f"above the noise floor ({MIN_CYCLES:g} or more advised)")
    if snr_db < MIN_SNR_DB:
        out.append(f"low SNR: initial signal-to-noise ratio {snr_db:.1f} dB ({MIN_SNR_DB:g} dB or more advised); "
                   f"intervals widen and log-decrement damping is biased low")
    nyq = fs / 2
    for p in answer.poles:
        if p.damped_frequency_hz > NYQUIST_FRACTION * nyq:
            out.append(f"near Nyquist: mode at {p.natural_frequency_hz:.4g} Hz is above {NYQUIST_FRACTION:.0%} of the "
                       f"Nyquist frequency {nyq:.4g} Hz; it may be aliased (sample faster)")
    fit = methods.get("fit")
    a_max = max((p.amplitude or 0.0) for p in answer.poles)
    drift_change = None
    if isinstance(fit, MethodEstimate) and fit.details.get("drift_per_s") is not None:
        drift_change = abs(fit.details["drift_per_s"]) * duration
    elif baseline_source == "segment":
        drift_change = abs(baseline.slope_per_s) * duration
    if drift_change is not None and a_max > 0 and drift_change > MAX_DRIFT_FRACTION * a_max:
        out.append(f"large drift: the baseline moves by {drift_change:.3g} over the segment "
                   f"({100 * drift_change / a_max:.0f} % of the largest mode's amplitude); it was fitted as a "
                   f"straight line — check the sensor and its mounting")
    for p in answer.poles:
        ci = p.ci
        if ci is None:
            continue
        lo, hi = ci.damping_ratio
        if lo <= 0:
            out.append(f"damping interval includes zero: mode at {p.natural_frequency_hz:.4g} Hz has ζ "
                       f"{p.damping_ratio:.3g} with interval [{lo:.3g}, {hi:.3g}]; the record does not show it decays")
        zeta = abs(p.damping_ratio)
        fn_lo, fn_hi = ci.natural_frequency_hz
        rel_z = (hi - lo) / 2 / zeta if zeta > 0 else float("inf")
        rel_f = (fn_hi - fn_lo) / 2 / p.natural_frequency_hz if p.natural_frequency_hz > 0 else float("inf")
        if rel_z > MAX_ZETA_REL_HALF_WIDTH or rel_f > MAX_FN_REL_HALF_WIDTH:
            out.append(f"short record: mode at {p.natural_frequency_hz:.4g} Hz has ζ ±{100 * rel_z:.0f} % and fn "
                       f"±{100 * rel_f:.2g} % ({round(100 * ci.level)} % interval); a longer or cleaner record is "
                       f"needed for a useful interval")
    return out
