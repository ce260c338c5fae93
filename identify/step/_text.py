"""Plain-text rendering of a :class:`StepResult` (what ``poleprint step`` prints)."""
from __future__ import annotations

import math

__all__ = ["render"]


def _f(value, digits=4, unit=""):
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    text = f"{value:.{digits}g}"
    return f"{text} {unit}".rstrip() if unit else text


def _ci(pair, digits=4):
    if pair is None:
        return "-"
    return f"[{_f(pair[0], digits)}, {_f(pair[1], digits)}]"


def _table(headers, rows):
    cells = [list(map(str, headers))] + [[str(c) for c in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(headers))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in cells]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def _model_rows(m, out_unit=""):
    rows = [("gain", _f(m.gain), m.gain_unit or "-", _ci(m.ci.get("gain"))),
            ("dead time", _f(m.dead_time_s), "s", _ci(m.ci.get("dead_time_s")))]
    for i, tau in enumerate(m.time_constants_s, 1):
        ci = m.ci.get("time_constants_s", ())
        rows.append((f"time constant {i}", _f(tau), "s", _ci(ci[i - 1] if len(ci) >= i else None)))
    if m.natural_frequency_hz is not None:
        rows.append(("natural frequency", _f(m.natural_frequency_hz), "Hz", _ci(m.ci.get("natural_frequency_hz"))))
        rows.append(("damping ratio", _f(m.damping_ratio), "-", _ci(m.ci.get("damping_ratio"))))
    rows.append(("initial output", _f(m.offset), out_unit or "-", _ci(m.ci.get("offset"))))
    return rows


def render(result) -> str:
    m = result.model
    pct = f"{100 * m.level:g} %"
    out_u = result.settings.get("output_unit") or ""
    in_u = result.settings.get("input_unit") or ""
    out_q = f"({out_u})" if "/" in out_u else out_u
    kc_unit = f" {in_u or '1'}/{out_q}" if out_u else (f" {in_u}" if in_u else "")
    lines = [f"{result.source}: step test, {m.structure} model plus dead time "
             f"(chosen by {result.fit.get('criterion', 'BIC')})",
             f"step: {result.step.explanation}", ""]
    lines.append(_table(["parameter", "estimate", "unit", f"{pct} interval ({m.method})"], _model_rows(m, out_u)))
    lines.append(f"fit: {_f(result.fit['fit_percent'], 4)} % (NRMSE), residual rms {_f(result.fit['residual_rms'])} {out_u}".rstrip() + ", "
                 f"Ljung-Box p {_f(result.fit['ljung_box_p'], 2)}")
    if result.runner_up is not None:
        r = result.runner_up
        parts = [f"gain {_f(r.gain)} {r.gain_unit}".rstrip(), f"dead time {_f(r.dead_time_s)} s"]
        parts += [f"tau{i} {_f(x)} s" for i, x in enumerate(r.time_constants_s, 1)]
        if r.natural_frequency_hz is not None:
            parts += [f"fn {_f(r.natural_frequency_hz)} Hz", f"zeta {_f(r.damping_ratio)}"]
        note = next((c["degenerate"] for c in result.candidates if c["structure"] == r.structure), None)
        lines.append(f"runner-up: {r.structure} ({', '.join(parts)})" + (f"; {note}" if note else ""))
    lines.append("")
    rows = [(c["structure"], _f(c["bic"], 6), _f(c["aicc"], 6), _f(c["fit_percent"], 4),
             _f(c["ljung_box_p"], 2), c["degenerate"] or "") for c in result.candidates]
    lines.append(_table(["structure", "BIC", "AICc", "fit %", "Ljung-Box p", "note"], rows))
    lines.append("")
    lines.append("poles")
    prow = []
    for p in result.poles:
        d = p.to_dict()
        tc = d.get("time_constant_s")
        prow.append((_f(p.real), _f(p.imag), _f(tc) if tc is not None else "-", _f(p.natural_frequency_hz),
                     _f(p.damping_ratio), _ci(None if p.ci is None else p.ci.real), p.verdict))
    lines.append(_table(["Re s (1/s)", "Im s (rad/s)", "tau (s)", "fn (Hz)", "zeta", f"Re s {pct}", "reading"], prow))
    lines.append("")
    lines.append("step figures (times from the input step, so they include dead time)")
    frows = []
    for name, fig in result.metrics.items():
        frows.append((name, _f(fig.measured), _f(fig.model), fig.unit, fig.note or ""))
    lines.append(_table(["figure", "measured", "model", "unit", "note"], frows))
    for name, fig in result.metrics.items():
        lines.append(f"  {name}: {fig.definition}")
    lines.append("")
    trows = [(tp.method, _f(tp.gain), _f(tp.time_constant_s), _f(tp.dead_time_s)) for tp in result.twopoint]
    lines.append("two-point cross-check (first order plus dead time)")
    lines.append(_table(["method", "gain", "time constant (s)", "dead time (s)"], trows))
    lines.append("")
    tu = result.tuning
    if tu.controller == "none":
        lines.append(f"starting gains ({tu.rule}): none. {' '.join(tu.notes)}")
    else:
        part = f"Kc {_f(tu.gain)}{kc_unit}, integral time {_f(tu.integral_time_s)} s"
        if tu.derivative_time_s is not None:
            part += f", derivative time {_f(tu.derivative_time_s)} s"
        lines.append(f"starting gains ({tu.rule}, {tu.form}, tau_c {_f(tu.closed_loop_time_constant_s)} s): {part}")
        for alt in tu.alternatives:
            extra = f", derivative time {_f(alt['derivative_time_s'])} s" if alt.get("derivative_time_s") else ""
            lines.append(f"  also {alt['form']}: Kc {_f(alt['gain'])}{kc_unit}, integral time {_f(alt['integral_time_s'])} s{extra}")
        for note in tu.notes:
            lines.append(f"  note: {note}")
    lines.append(f"caution: {tu.caution}")
    return "\n".join(lines)
