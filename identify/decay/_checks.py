"""The decay job's cross-method consensus and its warnings about the record and intervals.

Thresholds are common practice, no source; documented in docs/decay.md.
"""
from __future__ import annotations

import math

import numpy as np

from .._errors import PoleprintError
from ._common import MethodEstimate

MIN_CYCLES = 5.0            # cycles above the noise floor
MIN_SNR_DB = 20.0           # initial signal-to-noise ratio, 10·log10((A²/2)/σ²)
NYQUIST_FRACTION = 0.8      # a mode above this fraction of the Nyquist frequency
MAX_DRIFT_FRACTION = 0.1    # baseline change over the segment / largest amplitude
MAX_ZETA_REL_HALF_WIDTH = 0.5   # ζ interval half-width / ζ beyond which it is not useful
MAX_FN_REL_HALF_WIDTH = 0.02    # fn interval half-width / fn beyond which it is not useful
MATCH_TOLERANCE = 0.1       # relative frequency distance for matching modes across methods
#: a cross-check that issues one of these warnings says its own interval is not to be
#: trusted on this record: it stays in the consensus table but raises no disagreement
SELF_DOUBT_KEYS = frozenset({"few spectral lines", "record too short", "few cycles"})


def _why(exc):
    if isinstance(exc, PoleprintError):
        return exc.message
    return f"failed ({type(exc).__name__}: {exc})"


def _not_used(name, why):
    """A method that did not run on this record, with the reason (no poles)."""
    text = " ".join(str(why).split())
    return MethodEstimate(name, (), (f"not used: {text}",), {"used": False})


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
            own_doubt = sorted({w.split(":", 1)[0] for w in est.warnings} & SELF_DOUBT_KEYS)
            if own_doubt:
                other["own_warnings"] = own_doubt
            if not other["agree"] and name != "pencil" and not own_doubt:
                # the pencil seeds the fit on the same samples: shown in the table, but it is
                # not an independent cross-check, so no warning; nor is a method that says
                # its own interval is not to be trusted on this record
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
    # two poles closer than the Rayleigh resolution 1/T: a sum of exponentials can follow a
    # non-exponential envelope (friction, amplitude-dependent damping) this way
    osc = sorted((p for p in answer.poles if p.imag > 0), key=lambda p: p.damped_frequency_hz)
    if duration > 0:
        for a, b in zip(osc, osc[1:]):
            if b.damped_frequency_hz - a.damped_frequency_hz < 1.0 / duration:
                out.append(f"unresolved pair: modes at {a.natural_frequency_hz:.6g} Hz and "
                           f"{b.natural_frequency_hz:.6g} Hz are closer than the record's frequency "
                           f"resolution 1/T = {1.0 / duration:.3g} Hz; they may be one mode whose damping or "
                           f"frequency changes with amplitude (a nonlinear decay) rather than two modes")
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
