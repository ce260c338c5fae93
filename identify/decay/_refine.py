"""Which samples the decay job analyses, and which modes it keeps.

    _segment          detected (or given) ring-down, lengthened when too short
    _clipping         clipped samples at the channel's extremes (analysis starts after them)
    _linear_model     a pole set's offset, drift and mode coefficients by linear least squares
    _extend_segment   grow the segment while a free-decay model explains the samples
    _second_look      pencil and fit again from the trigger (a mode that died out early)
    _prune            drop fitted modes of negligible energy, refit the rest
    _block_copy       block-averaged copies of long records for the cross-checks

Thresholds are common practice, no source; documented in docs/decay.md.
"""
from __future__ import annotations

import math

import numpy as np

from .._errors import IdentificationError, ParameterValueError, PoleprintError, RecordError
from ._common import MethodEstimate

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
    """Clipping warning for the analysed part and the index of its last clipped sample."""
    from .._quality import clipping_warning

    text = clipping_warning(y, name)
    if text is None:
        return None, None
    mask = _clip_mask(y)
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
    # samples before the segment that sit at the baseline (a quiet stretch the detector did
    # not call pre-trigger) hide no mode: nothing to look at
    step = _stride(lo_cur - lo)
    before = y_all[lo:lo_cur:step] - (d["offset"] + (d["drift_per_s"] or 0.0) * (t_all[lo:lo_cur:step] - d["t_ref_s"]))
    if float(np.sqrt(np.mean(before ** 2))) <= 1.5 * d["residual_std"] * math.sqrt(d["decimation_factor"]):
        return None
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


def _linear_model(t, y, poles, drift):
    """The free-decay model of ``poles`` on the samples ``(t, y)``: offset, drift and each
    mode's ``c, d`` by linear least squares at the fixed poles (on a strided subset of
    about 50,000 samples: the model holds at every sample, so a subset fits it without
    bias), in the layout of the fit's ``details`` (``t_ref_s``, ``terms``, ``offset``,
    ``drift_per_s``).  None without an oscillatory pole."""
    from ._nls import linear_coefficients

    osc = [p for p in poles if p.imag > 0]
    if not osc:
        return None
    step = _stride(t.size)
    ts, ys = t[::step], y[::step]
    sg = [p.decay_rate_per_s for p in osc]
    om = [p.imag for p in osc]
    c, d, b0, b1 = linear_coefficients(ts - ts[0], ys, sg, om, drift)
    return {"t_ref_s": float(ts[0]), "offset": b0, "drift_per_s": b1,
            "terms": [{"real": -a, "imag": b, "c": float(ci), "d": float(di)}
                      for a, b, ci, di in zip(sg, om, c, d)]}


def _extend_segment(t_all, y_all, lo, hi, lo_min, hi_max, model):
    """Grow ``[lo, hi)`` outwards (to ``lo_min`` / ``hi_max``) while a free-decay model
    explains the samples: blocks of about one period whose residual RMS stays within
    ``EXTEND_RMS`` noise std and no sample beyond ``EXTEND_PEAK``; in the first failing
    block the samples are kept up to the first one beyond ``EXTEND_PEAK`` noise std, or the
    first of two in a row beyond ``EXTEND_EDGE``.  ``model`` is a fit's ``details`` or
    :func:`_linear_model`'s dict; the noise std is its residual's over ``[lo, hi)``."""
    from ._nls import model_values_on_grid

    d = model
    terms = d.get("terms")
    if not terms or (lo <= lo_min and hi >= hi_max):
        return lo, hi
    sg = [-x["real"] for x in terms]
    om = [x["imag"] for x in terms]
    cc = [x["c"] for x in terms]
    dd = [x["d"] for x in terms]

    ts_grid = float(t_all[-1] - t_all[0]) / max(t_all.size - 1, 1)  # the record's uniform grid

    def resid(a, b, step=1):
        y = y_all[a:b:step]
        return y - model_values_on_grid(float(t_all[a]) - d["t_ref_s"], step * ts_grid, y.size, sg, om, cc, dd,
                                        d["offset"], d["drift_per_s"] or 0.0)

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
