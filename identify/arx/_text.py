"""Plain-text rendering of an :class:`ArxResult` (what the command line prints)."""
from __future__ import annotations

__all__ = ["render_text"]


def _fmt(value, digits=4, unit=""):
    from ..cli._common import fmt

    return fmt(value, digits, unit)


def _ci(ci, digits=4):
    from ..cli._common import fmt_interval

    return fmt_interval(ci, digits)


def render_text(result) -> str:
    """Model line, pole table with intervals and units, DC gain, order search, validation."""
    from ..cli._common import table

    from ._result import CAUTION

    m = result.model
    s = result.settings
    level = int(round(100 * m.confidence))
    lines = [f"{result.source}: ARX ({m.method}), na = {m.na}, nb = {m.nb}, "
             f"delay = {m.delay_samples} samples ({_fmt(m.delay_samples * m.sample_time_s)} s), "
             f"Ts = {_fmt(m.sample_time_s)} s"
             + (f" (decimated by {s['decimation_factor']})" if s.get("decimation_factor", 1) > 1 else "")]
    rows = []
    for p in result.poles:
        ci = p.ci
        rows.append([
            _fmt(p.natural_frequency_hz), _ci(ci.natural_frequency_hz) if ci else "-",
            _fmt(p.damping_ratio), _ci(ci.damping_ratio) if ci else "-",
            _fmt(p.real), _fmt(p.imag),
            _fmt(p.time_constant_s) if p.is_real else "-", p.verdict])
    if rows:
        lines.append(table(["fn (Hz)", f"fn {level} % CI", "zeta", f"zeta {level} % CI",
                            "Re s (1/s)", "Im s (rad/s)", "tau (s)", "verdict"], rows))
    else:
        lines.append("no poles (na = 0)")
    if m.nb:
        unit_out, unit_in = s.get("output_unit") or "", s.get("input_unit") or ""
        unit = f"{unit_out}/{unit_in}" if (unit_out or unit_in) else ""
        gain_ci = _ci(m.dc_gain_ci.as_list()) if m.dc_gain_ci is not None else "-"
        lines.append(f"DC gain: {_fmt(m.dc_gain, 4, unit)}  {level} % CI {gain_ci}")
    if result.order_search:
        head = result.order_search[:5]
        crit = s.get("criterion", "aic")
        lines.append(f"order search ({crit.upper()}, {len(result.order_search)} candidates on a common sample; best 5):")
        lines.append(table(["na", "nb", "delay", "params", "loss", crit.upper()],
                           [[r["na"], r["nb"], r["delay_samples"], r["parameters"], _fmt(r["loss"]),
                             _fmt(r[crit], 6)] for r in head]))
    v = result.validation
    lines.append(f"validation: {v['method']} fit {_fmt(v['fit_percent'], 3)} % on the final "
                 f"{v['holdout_samples']} samples (estimation part {_fmt(v['fit_percent_estimation'], 3)} %)")
    w = result.residual_tests.get("whiteness")
    if w:
        lines.append(f"residual whiteness (Ljung-Box, {w['lags']} lags): p = {_fmt(w['p_value'], 3)}")
    lines.append(f"caution: {CAUTION}")
    return "\n".join(lines)
