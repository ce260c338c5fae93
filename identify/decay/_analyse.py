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
MIN_SEGMENT_SAMPLES = 64    # a shorter detected segment is lengthened (end) for the pencil
EXTEND_RMS = 2.0            # segment extension: block RMS of the residual <= 2 noise std
EXTEND_PEAK = 5.0           # ... and no sample beyond 5 noise std in the block
EXTEND_EDGE = 3.0           # in the first failing block, kept up to 2 samples in a row beyond 3 std
EXTEND_ROUNDS = 4           # grow, refit, grow again (the refit extrapolates better)
SECOND_LOOK_RATIO = 1.1     # a fit from the trigger is kept if its residual RMS is within 10 %
SECOND_LOOK_MIN_SAMPLES = 4  # ... looked for only when the segment stops this far after the trigger
#: cross-check methods get a block-averaged copy of records longer than this
CROSS_CHECK_MAX_SAMPLES = 50_000
HALFPOWER_MAX_SAMPLES = 20_000


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
    seg = None
    if detect_decay_segment is not None:
        try:
            seg = detect_decay_segment(t, y, start_s=start_s, end_s=end_s)
        except (IdentificationError, ParameterValueError) as exc:
            # detection found nothing it trusts: analyse the whole record (or the given
            # bounds) and let the pencil's own noise test decide; never a made-up mode
            if isinstance(exc, ParameterValueError) and (start_s is not None or end_s is not None):
                raise
            info["detection"] = f"failed: {' '.join(str(exc).split())}"
    if seg is not None:
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
    short = end_s is None and hi - lo < MIN_SEGMENT_SAMPLES and hi < t.size
    if short:  # a heavily damped decay: give the pencil something to work on
        hi = min(t.size, lo + MIN_SEGMENT_SAMPLES)
    if hi - lo < 16:
        raise IdentificationError(f"the decay segment {s0:g} s to {s1:g} s holds {hi - lo} samples "
                                  f"(16 or more needed)", source)
    if start_s is not None and end_s is not None:
        chosen = "given"
    elif seg is None:
        chosen = "whole record" if start_s is None and end_s is None else "given and record end"
    else:
        chosen = "detected" if start_s is None and end_s is None else "given and detected"
    if short:
        chosen += f", end moved to hold {MIN_SEGMENT_SAMPLES} samples"
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


def _block_copy(t, y, fastest_hz, min_samples_per_period, max_samples):
    """Block-averaged copy of about ``max_samples`` samples, keeping at least
    ``min_samples_per_period`` samples per period of the fastest mode (poles preserved
    exactly), for the cross-checks on long records."""
    from ._pencil import block_decimate

    if y.size <= max_samples or not fastest_hz > 0:
        return t, y, 1
    ts = float(t[1] - t[0])
    q = int(min(1.0 / (ts * min_samples_per_period * fastest_hz), -(-y.size // max_samples)))
    if q < 2:
        return t, y, 1
    td, yd = block_decimate(t, y, q)
    return td, yd, q


def _stride(n, limit=50_000):
    """Step that leaves at most about ``limit`` of ``n`` samples (for sums and spreads)."""
    return max(1, -(-int(n) // limit))


def _mode_energies(fitted, t):
    """Energy Σ (mode's term)² over ``t`` of each fitted mode (from a strided subset)."""
    from ._nls import model_values

    d = fitted.details
    step = _stride(t.size)
    tau = t[::step] - d["t_ref_s"]
    return [step * float(np.sum(model_values(tau, [-x["real"]], [x["imag"]], [x["c"]], [x["d"]]) ** 2))
            for x in d["terms"]]


def _prune(fitted, t, y, fit, drift, level, intervals, seed):
    """Drop fitted modes whose energy over the segment is below ``MIN_MODE_ENERGY`` noise
    variances (the fit moved a pencil seed onto nothing), then refit the rest."""
    from ._pencil import MIN_MODE_ENERGY

    d = fitted.details
    if len(d.get("terms", ())) < 2:
        return fitted
    noise_var = d["residual_std"] ** 2 * d["decimation_factor"]  # per raw sample
    energies = _mode_energies(fitted, t)
    terms = d["terms"]
    keep = [complex(x["real"], x["imag"]) for x, e in zip(terms, energies) if e >= MIN_MODE_ENERGY * noise_var]
    if not keep or len(keep) == len(terms):
        return fitted
    try:
        refit = fit(t, y, keep, drift=drift, confidence=level, intervals=intervals, seed=seed)
    except (PoleprintError, np.linalg.LinAlgError, ValueError):
        return fitted
    refit.details["pruned"] = [{"real": x["real"], "imag": x["imag"], "reason": "negligible amplitude after the fit"}
                               for x, e in zip(terms, energies) if e < MIN_MODE_ENERGY * noise_var]
    return refit


def _second_look(t_all, y_all, lo, lo_cur, hi, fitted, baseline, level, max_modes, modes, drift, intervals,
                 seed):
    """Pencil and fit on ``[lo, hi)``; returned only when the residual RMS is within
    ``SECOND_LOOK_RATIO`` of the current fit's on its own segment ``[lo_cur, hi)``."""
    from ._nls import fit_damped_sinusoids, model_values
    from ._pencil import matrix_pencil

    d = fitted.details
    terms = d["terms"]
    t, y = t_all[lo:hi], y_all[lo:hi]
    step = _stride(hi - lo_cur)
    t_cur, y_cur = t_all[lo_cur:hi:step], y_all[lo_cur:hi:step]
    model = model_values(t_cur - d["t_ref_s"], [-x["real"] for x in terms], [x["imag"] for x in terms],
                         [x["c"] for x in terms], [x["d"] for x in terms], d["offset"], d["drift_per_s"] or 0.0)
    noise_ref = float(np.std(y_cur - model))
    try:
        pencil = matrix_pencil(t, y - baseline.evaluate(t), confidence=level, max_modes=max(max_modes, 10))
        if modes != "auto" and len(pencil.poles) > modes:
            keep = sorted(pencil.poles, key=lambda p: -(p.amplitude or 0.0))[:modes]
            pencil = MethodEstimate("pencil", tuple(keep), pencil.warnings, pencil.details)
        fit = fit_damped_sinusoids(t, y, pencil.poles, drift=drift, confidence=level, intervals=intervals,
                                   seed=seed)
        fit = _prune(fit, t, y, fit_damped_sinusoids, drift, level, intervals, seed)
    except (PoleprintError, np.linalg.LinAlgError, ValueError):
        return None
    e = fit.details
    tm = e["terms"]
    step = _stride(t.size)
    resid = y[::step] - model_values(t[::step] - e["t_ref_s"], [-x["real"] for x in tm], [x["imag"] for x in tm],
                                     [x["c"] for x in tm], [x["d"] for x in tm], e["offset"], e["drift_per_s"] or 0.0)
    if float(np.std(resid)) <= SECOND_LOOK_RATIO * noise_ref:
        return pencil, fit
    return None


def _extend_segment(t_all, y_all, lo, hi, lo_min, hi_max, fitted):
    """Grow ``[lo, hi)`` outwards (to ``lo_min`` / ``hi_max``) while the fitted free-decay
    model explains the samples: blocks of about one period whose residual RMS stays within
    ``EXTEND_RMS`` noise std and no sample beyond ``EXTEND_PEAK``; in the first failing
    block the samples are kept up to the first one beyond ``EXTEND_PEAK`` noise std, or the
    first of two in a row beyond ``EXTEND_EDGE``."""
    from ._nls import model_values

    d = fitted.details
    terms = d.get("terms")
    if not terms or (lo <= lo_min and hi >= hi_max):
        return lo, hi
    sg = [-x["real"] for x in terms]
    om = [x["imag"] for x in terms]
    cc = [x["c"] for x in terms]
    dd = [x["d"] for x in terms]

    def resid(a, b, step=1):
        tau = t_all[a:b:step] - d["t_ref_s"]
        return y_all[a:b:step] - model_values(tau, sg, om, cc, dd, d["offset"], d["drift_per_s"] or 0.0)

    noise = float(np.std(resid(lo, hi, _stride(hi - lo))))
    if not noise > 0:
        return lo, hi
    ts = float(t_all[1] - t_all[0])
    slowest_hz = min(x["imag"] for x in terms) / (2 * math.pi)
    w = int(np.clip(round(1.0 / (ts * slowest_hz)), 16, 5000))

    def grow(r):  # r ordered outwards from the segment; returns how many samples to take
        nb = r.size // w
        if nb:
            blocks = r[: nb * w].reshape(nb, w)
            ok = (np.sqrt(np.mean(blocks ** 2, axis=1)) <= EXTEND_RMS * noise) & \
                 (np.max(np.abs(blocks), axis=1) <= EXTEND_PEAK * noise)
            fail = np.flatnonzero(~ok)
            if fail.size == 0:
                start_partial = nb * w
            else:
                start_partial = int(fail[0]) * w
        else:
            start_partial = 0
        rest = np.abs(r[start_partial:start_partial + w]) / noise
        over = rest > EXTEND_EDGE
        stop = (rest > EXTEND_PEAK) | (over & np.concatenate((over[1:], [True])))
        beyond = np.flatnonzero(stop)
        return start_partial + (int(beyond[0]) if beyond.size else rest.size)

    new_lo = lo - grow(resid(lo_min, lo)[::-1]) if lo > lo_min else lo
    new_hi = hi + grow(resid(hi, hi_max)) if hi < hi_max else hi
    return int(new_lo), int(new_hi)


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


def _why(exc):
    if isinstance(exc, PoleprintError):
        return exc.message
    return f"failed ({type(exc).__name__}: {exc})"


def _not_used(name, why):
    """A method that did not run on this record, with the reason (no poles)."""
    text = " ".join(str(why).split())
    return MethodEstimate(name, (), (f"not used: {text}",), {"used": False})


def _interval_summary(p):
    ci = p.ci
    return {"natural_frequency_hz": p.natural_frequency_hz, "damping_ratio": p.damping_ratio,
            "natural_frequency_ci_hz": None if ci is None else list(ci.natural_frequency_hz),
            "damping_ratio_ci": None if ci is None else list(ci.damping_ratio)}


def _format_for(*values):
    """A format with enough significant digits to tell the numbers and limits apart."""
    flat = []
    for v in values:
        flat.extend(v if isinstance(v, (list, tuple)) else [v])
    flat = [float(v) for v in flat if v is not None and math.isfinite(float(v))]
    if not flat:
        return "{:.4g}"
    scale = max(abs(v) for v in flat) or 1.0
    gaps = [abs(a - b) for a in flat for b in flat if a != b]
    smallest = min(gaps) if gaps else scale
    digits = int(min(12, max(4, math.ceil(math.log10(scale / smallest)) + 2)))
    return "{:." + str(digits) + "g}"


def _at_least(ci, reference):
    """``ci`` widened about its centre to at least the half-width of ``reference``."""
    if ci is None or reference is None:
        return ci
    centre, half = 0.5 * (ci[0] + ci[1]), 0.5 * (ci[1] - ci[0])
    half = max(half, 0.5 * (reference[1] - reference[0]))
    return [centre - half, centre + half]


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
            # the answer's interval is at the Cramér–Rao bound, which no unbiased method
            # beats: a cross-check's narrower interval is widened to it before comparing
            agree_fn = _overlap(mine["natural_frequency_ci_hz"],
                                _at_least(other["natural_frequency_ci_hz"], mine["natural_frequency_ci_hz"]))
            agree_z = _overlap(mine["damping_ratio_ci"],
                               _at_least(other["damping_ratio_ci"], mine["damping_ratio_ci"]))
            other["agree"] = bool(agree_fn and agree_z)
            row["estimates"][name] = other
            if not other["agree"] and name != "pencil":
                # the pencil seeds the fit on the same samples: shown in the table, but it is
                # not an independent cross-check, so no warning
                row["agree"] = False
                what = "ζ" if not agree_z else "fn"
                if not agree_z:
                    a, b, ca, cb = p.damping_ratio, q.damping_ratio, mine["damping_ratio_ci"], other["damping_ratio_ci"]
                else:
                    a, b = p.natural_frequency_hz, q.natural_frequency_hz
                    ca, cb = mine["natural_frequency_ci_hz"], other["natural_frequency_ci_hz"]
                fmt = _format_for(a, b, ca, cb)
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
                                              intervals="delta", seed=seed)
            except (PoleprintError, np.linalg.LinAlgError, ValueError) as exc:
                warnings.append(f"fit failed: {' '.join(str(exc).split())}; the matrix-pencil poles are the answer")
            else:
                fitted = _prune(fitted, t, y, fit_damped_sinusoids, drift, level, "delta", seed)
                methods["fit"] = fitted
                answer = fitted
                detected = (float(t[0]), float(t[-1]))
                for _ in range(EXTEND_ROUNDS):  # each refit extrapolates better: grow again
                    new_lo, new_hi = _extend_segment(t_all, y_all, lo, hi, lo_min, hi_max, fitted)
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
                if detected != (float(t_all[lo]), float(t_all[hi - 1])):
                    seg_info["detected_start_s"], seg_info["detected_end_s"] = detected
                    t, y = t_all[lo:hi], y_all[lo:hi]
                    y0 = y - pre.evaluate(t)
                    seg_info["start_s"], seg_info["end_s"] = float(t[0]), float(t[-1])
                    seg_info["chosen_by"] += ", extended while the fitted model explains the samples"
                    if method == "auto":  # the pencil as a cross-check on the same samples
                        try:
                            methods["pencil"] = run_pencil()
                            order_scan = tuple(methods["pencil"].details.get("order_scan", ()))
                        except PoleprintError:
                            pass
    if intervals == "bootstrap" and "fit" in methods:  # the segment is settled: resample once
        try:
            methods["fit"] = answer = fit_damped_sinusoids(t, y, methods["fit"].poles, drift=drift,
                                                           confidence=level, intervals="bootstrap", seed=seed)
        except (PoleprintError, np.linalg.LinAlgError, ValueError) as exc:
            warnings.append(f"bootstrap failed: {' '.join(str(exc).split())}; delta-method intervals given")
    fastest = max((p.natural_frequency_hz for p in answer.poles), default=0.0) if answer else 0.0
    if method in ("auto", "logdec", "halfpower"):
        if answer is None:
            from ._pencil import choose_decimation

            _, fastest = choose_decimation(y0, 1.0 / fs)
        single = answer is None or len(answer.poles) == 1
        if method in ("auto", "logdec"):
            if single:
                try:
                    from ._logdec import log_decrement

                    # peaks need >= 20 samples per period for the 3-point interpolation
                    tc, yc, q_cross = _block_copy(t, y0, fastest, 20.0, CROSS_CHECK_MAX_SAMPLES)
                    methods["logdec"] = log_decrement(tc, yc, confidence=level,
                                                      noise_std=None if q_cross > 1 else noise_pre)
                except Exception as exc:  # a failing cross-check must not sink the answer
                    if method == "logdec":
                        raise
                    methods["logdec"] = _not_used("logdec", _why(exc))
            else:
                methods["logdec"] = _not_used("logdec", "a single-mode method and the record holds several modes")
        if method in ("auto", "halfpower"):
            try:
                from ._halfpower import half_power

                freqs = None if answer is None else [p.natural_frequency_hz for p in answer.poles]
                # the spectrum needs the record's length, not its sample rate
                tc, yc, _ = _block_copy(t, y0, fastest, 6.0, HALFPOWER_MAX_SAMPLES)
                methods["halfpower"] = half_power(tc, yc, confidence=level, frequencies_hz=freqs)
            except Exception as exc:  # a failing cross-check must not sink the answer
                if method == "halfpower":
                    raise
                methods["halfpower"] = _not_used("halfpower", _why(exc))
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
