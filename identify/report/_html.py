"""One self-contained HTML report: tables, warnings, cautions, plots, settings, version.

Everything is inside the one file: CSS inline, figures as base64 PNG data URIs, no
scripts, no fonts or links to fetch, so it reads the same offline.
"""
from __future__ import annotations

import base64
import html
import json
import math
from dataclasses import dataclass
from pathlib import Path

from .._atomic import write_atomically

__all__ = ["write_report", "ReportOutput", "CAUTIONS", "render_report"]

CAUTIONS = (
    "These are estimates from measured records, each with its confidence interval; they "
    "are not clearances, and this report does not call any structure or plant fit for use.",
    "Decisions rest with the site's procedures, local codes and licensed engineers.",
    "Controller gains, where shown, are starting points to review before they are applied "
    "to a live plant; step tests on running plants need the site's approval.",
    "Extrapolated damping trends are indicative only; temperature, amplitude and "
    "configuration move damping too, so compare like with like.",
)

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;
color:#222;margin:0 auto;max-width:62rem;padding:1rem 1.5rem;line-height:1.4}
h1{font-size:1.5rem;margin-bottom:.2rem}h2{font-size:1.2rem;border-bottom:2px solid #2c5d8f;
padding-bottom:.2rem;margin-top:2.2rem}h3{font-size:1rem;margin-bottom:.3rem}
table{border-collapse:collapse;margin:.4rem 0 1rem 0;font-size:.88rem}
th,td{border:1px solid #ccd;padding:.2rem .5rem;text-align:left;vertical-align:top}
th{background:#eef2f6}td.num{text-align:right;font-variant-numeric:tabular-nums}
.cautions{background:#fff6e6;border-left:4px solid #e07b16;padding:.5rem 1rem;margin:1rem 0}
.warnings{background:#fbeaea;border-left:4px solid #b2182b;padding:.4rem 1rem}
.ok{background:#eaf3ea;border-left:4px solid #2c5d8f;padding:.4rem 1rem}
figure{margin:1rem 0}figure img{max-width:100%;height:auto;border:1px solid #e4e4e4}
figcaption{font-size:.85rem;color:#444}.meta{color:#555;font-size:.85rem}
pre{background:#f5f5f5;padding:.5rem;overflow-x:auto;font-size:.8rem}
"""


@dataclass(frozen=True)
class ReportOutput:
    """What :func:`write_report` wrote.

    Parameters
    ----------
    path : pathlib.Path
        The HTML file.
    figures : tuple of str
        ``"record-name: figure key"`` for every figure embedded, in page order.
    plot_files : tuple of pathlib.Path
        PNG files written to ``plots_dir`` (empty without it).
    records : int
        Number of job results in the report.
    """

    path: Path
    figures: tuple
    plot_files: tuple
    records: int

    def to_dict(self) -> dict:
        return {"path": str(self.path), "figures": list(self.figures),
                "plot_files": [str(p) for p in self.plot_files], "records": self.records}


# -- small formatting helpers ---------------------------------------------------------
def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _num(value, digits: int = 4) -> str:
    if value is None:
        return "-"
    try:
        value = float(value)
    except (TypeError, ValueError):
        return _e(value)
    if not math.isfinite(value):
        return "-"
    return f"{value:.{digits}g}"


def _interval(ci, digits: int = 4) -> str:
    if ci is None:
        return "-"
    try:
        lo, hi = ci[0], ci[1]
    except (TypeError, IndexError, KeyError):
        return "-"
    return f"[{_num(lo, digits)}, {_num(hi, digits)}]"


def _unit_of(key: str) -> str:
    for suffix, unit in (("_hz", "Hz"), ("_per_s", "1/s"), ("_percent", "%"), ("_s", "s"),
                         ("_per_day", "1/day"), ("_rad_per_s", "rad/s")):
        if key.endswith(suffix):
            return unit
    return ""


def _table(headers, rows, numeric=()) -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = []
        for i, cell in enumerate(row):
            cls = ' class="num"' if i in numeric else ""
            cells.append(f"<td{cls}>{cell}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _as_dict(obj):
    if obj is None:
        return None
    if isinstance(obj, dict):
        return obj
    if hasattr(obj, "to_dict"):
        return obj.to_dict()
    return None


def _json(value) -> str:
    from .._jsonable import jsonable

    return json.dumps(jsonable(value), ensure_ascii=False)


# -- sections ---------------------------------------------------------------------------
def _poles_table(poles) -> str:
    if not poles:
        return "<p>No pole reported.</p>"
    level = next((p.ci.level for p in poles if getattr(p, "ci", None) is not None), None)
    lvl = f"{level:.0%} interval" if level is not None else "interval"
    headers = ["#", "natural frequency (Hz)", lvl, "damping ratio ζ (-)", lvl,
               "decay rate σ (1/s)", "time constant τ (s)", "damped frequency (Hz)", "verdict"]
    rows = []
    for i, p in enumerate(poles, 1):
        ci = getattr(p, "ci", None)
        rows.append([
            str(i), _num(p.natural_frequency_hz, 5),
            _interval(ci.natural_frequency_hz if ci else None, 5),
            _num(p.damping_ratio), _interval(ci.damping_ratio if ci else None),
            _num(p.decay_rate_per_s),
            _num(p.time_constant_s) if p.is_real else "-",
            _num(p.damped_frequency_hz, 5), _e(p.verdict)])
    return _table(headers, rows, numeric=(1, 3, 5, 6, 7))


def _params_table(data: dict, title: str) -> str:
    """A model / tuning / metrics dict: scalars and short lists, with ``ci`` where given."""
    if not data:
        return ""
    ci = data.get("ci") if isinstance(data.get("ci"), dict) else {}
    rows = []
    for key, value in data.items():
        if key == "ci" or (key.endswith("_ci") and key[:-3] in data):
            continue
        interval = ci.get(key) if ci else None
        if interval is None and f"{key}_ci" in data:
            interval = data[f"{key}_ci"]
        if isinstance(value, dict):
            if all(not isinstance(v, (dict, list)) for v in value.values()):
                shown = ", ".join(f"{_e(k)} = {_num(v) if isinstance(v, (int, float)) else _e(v)}"
                                  for k, v in value.items())
            else:
                shown = _e(_json(value))
        elif isinstance(value, (list, tuple)):
            plain = "[" + ", ".join(_num(v) if isinstance(v, (int, float)) and not isinstance(v, bool)
                                    else json.dumps(v, ensure_ascii=False) for v in value) + "]"
            if len(plain) > 400:
                plain = plain[:400] + " …]"
            shown = _e(plain)
        elif isinstance(value, bool) or value is None or isinstance(value, str):
            shown = _e("-" if value is None else value)
        else:
            shown = _num(value)
        iv = "-"
        if isinstance(interval, dict):
            iv = _interval((interval.get("lower"), interval.get("upper")))
        elif isinstance(interval, (list, tuple)) and len(interval) == 2 and not isinstance(interval[0], (list, tuple)):
            iv = _interval(interval)
        elif isinstance(interval, (list, tuple)):
            iv = "; ".join(_interval(x) for x in interval)
        rows.append([_e(key), shown, iv, _e(_unit_of(key))])
    return f"<h3>{_e(title)}</h3>" + _table(["quantity", "value", "interval", "unit"], rows,
                                             numeric=(1,))


def _plain(data):
    from .._jsonable import jsonable

    return jsonable(data)


def _metrics_table(metrics: dict) -> str:
    """Step figures: measured and model side by side with unit and definition when given."""
    if not metrics:
        return ""
    if not all(isinstance(v, dict) and ("measured" in v or "model" in v) for v in metrics.values()):
        return _params_table(metrics, "Step figures")
    rows = []
    for key, fig in metrics.items():
        unit = fig.get("unit") or _unit_of(key)
        note = fig.get("note")
        definition = (fig.get("definition") or "") + (f" ({note})" if note else "")
        rows.append([_e(key), _num(fig.get("measured")), _num(fig.get("model")), _e(unit),
                     _e(definition)])
    return "<h3>Step figures</h3>" + _table(["figure", "measured", "model", "unit", "definition"],
                                            rows, numeric=(1, 2))


def _methods_table(methods) -> str:
    if not isinstance(methods, dict) or not methods:
        return ""
    rows = []
    for name, est in methods.items():
        # the method's own warnings, by their keys (the full lines are in the warnings list)
        own = sorted({str(w).split(":", 1)[0] for w in getattr(est, "warnings", ()) or ()})
        note = _e(", ".join(own)) if own else "-"
        for p in getattr(est, "poles", ()) or ():
            ci = getattr(p, "ci", None)
            rows.append([_e(name), _num(p.natural_frequency_hz, 5),
                         _interval(ci.natural_frequency_hz if ci else None, 5),
                         _num(p.damping_ratio), _interval(ci.damping_ratio if ci else None), note])
        if not getattr(est, "poles", None):
            rows.append([_e(name), "-", "-", "-", "-", note])
    return ("<h3>Each method's estimate (cross-checks)</h3>"
            + _table(["method", "natural frequency (Hz)", "interval", "damping ratio (-)",
                      "interval", "method's own warnings"], rows, numeric=(1, 3)))


def _validation_section(validation) -> str:
    if validation is None:
        return ""
    v = validation
    unit = f" {v.unit}" if v.unit else ""
    rows = [
        ["fit (NRMSE)", f"{_num(v.fit_percent)} %"],
        ["R²", _num(v.r_squared)],
        ["residual RMS", f"{_num(v.residual_rms)}{_e(unit)}"],
        ["noise RMS estimate", f"{_num(v.noise_rms)}{_e(unit)}" if v.noise_rms is not None else "-"],
        ["residual / noise", _num(v.residual_to_noise)],
        ["Ljung–Box p-value", f"{_num(v.ljung_box_p_value)} ({v.ljung_box_lags} lags)"
         if v.ljung_box_p_value is not None else "-"],
        ["hold-out fit (NRMSE)", f"{_num(v.holdout_fit_percent)} % over {v.holdout_samples} samples"
         if v.holdout_fit_percent is not None else "-"],
        ["verdict", f"<strong>{_e(v.verdict)}</strong>"],
    ]
    reasons = "".join(f"<li>{_e(r)}</li>" for r in v.reasons)
    cls = "ok" if v.explains_record else "warnings"
    return ("<h3>Validation against the record</h3>" + _table(["check", "value"], rows)
            + f'<div class="{cls}"><ul>{reasons}</ul></div>')


def _warnings_section(warnings) -> str:
    if not warnings:
        return '<h3>Warnings</h3><div class="ok"><p>No warning.</p></div>'
    items = "".join(f"<li>{_e(w)}</li>" for w in warnings)
    return f'<h3>Warnings</h3><div class="warnings"><ul>{items}</ul></div>'


def _settings_section(settings) -> str:
    if not settings:
        return "<h3>Settings used</h3><p>-</p>"
    rows = [[_e(k), _e(_json(v))] for k, v in sorted(dict(settings).items())]
    return "<h3>Settings used</h3>" + _table(["setting", "value"], rows)


def _png(fig) -> bytes:
    import io

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100, metadata={"Software": None})
    return buf.getvalue()


def _figure_html(png: bytes, caption: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return (f'<figure><img alt="{_e(caption)}" src="data:image/png;base64,{data}">'
            f"<figcaption>{_e(caption)}</figcaption></figure>")


def _slug(text: str) -> str:
    keep = "".join(c if c.isalnum() else "-" for c in str(text))
    return "-".join(part for part in keep.split("-") if part)[:60] or "record"


def _validate(result):
    from ..validation import validate

    response = getattr(result, "response", None)
    if response is None:
        return None, None
    noise = getattr(result, "noise_rms", None)
    fit = _as_dict(getattr(result, "fit", None))
    if noise is None and isinstance(fit, dict):
        noise = fit.get("noise_rms")
    from ._figures import _confidence

    try:
        return validate(response, noise_rms=noise, confidence=_confidence(result)), None
    except Exception as exc:  # shown in the page
        return None, f"validation could not be computed: {exc}"


def _result_section(index, result, figures_out, plots_dir, plot_files) -> str:
    from .._version import __version__
    from ._figures import figures_for, job_kind

    kind = job_kind(result)
    source = str(getattr(result, "source", "") or f"record {index}")
    name = Path(source).name or source
    parts = [f'<section id="record-{index}"><h2>{index}. {_e(name)} '
             f'<span class="meta">({_e(kind)} job)</span></h2>']
    sha = getattr(result, "sha256", "") or ""
    meta = [f"source: {_e(source)}"]
    if sha:
        meta.append(f"SHA-256: {_e(sha)}")
    segment = _as_dict(getattr(result, "segment", None))
    if segment and segment.get("start_s") is not None:
        meta.append(f"analysed segment: {_num(segment.get('start_s'))} s to {_num(segment.get('end_s'))} s")
    meta.append(f"poleprint {_e(__version__)}")
    parts.append(f'<p class="meta">{" · ".join(meta)}</p>')

    parts.append("<h3>Poles</h3>" + _poles_table(tuple(getattr(result, "poles", ()) or ())))
    model = _as_dict(getattr(result, "model", None))
    if isinstance(model, dict):
        model = _plain(model)
        parts.append(_params_table(model, "Model"))
    metrics = _as_dict(getattr(result, "metrics", None))
    if isinstance(metrics, dict):
        parts.append(_metrics_table(_plain(metrics)))
    tuning = _as_dict(getattr(result, "tuning", None))
    if isinstance(tuning, dict) and tuning:
        tuning = _plain(tuning)
        parts.append(_params_table(tuning, "Starting controller gains (starting points to review, "
                                           "not settings to apply)"))
    parts.append(_methods_table(getattr(result, "methods", None)))

    validation, vnote = _validate(result)
    warnings = list(getattr(result, "warnings", ()) or ())
    if vnote:
        warnings.append(vnote)
    parts.append(_warnings_section(warnings))
    parts.append(_validation_section(validation))

    entries = figures_for(result)
    parts.append("<h3>Plots</h3>")
    for entry in entries:
        if entry.figure is None:
            parts.append(f"<p class=\"warnings\">figure '{_e(entry.key)}' could not be drawn: "
                         f"{_e(entry.error)}</p>")
            continue
        png = _png(entry.figure)
        parts.append(_figure_html(png, entry.caption))
        figures_out.append(f"{name}: {entry.key}")
        if plots_dir is not None:
            target = Path(plots_dir) / f"{index:02d}-{_slug(Path(name).stem)}-{entry.key}.png"
            write_atomically(target, png)
            plot_files.append(target)
    parts.append(_settings_section(getattr(result, "settings", None)))
    parts.append("</section>")
    return "\n".join(p for p in parts if p)


def _history_section(history, start_index, figures_out, plots_dir, plot_files) -> str:
    """Optional trend section: each item a trend result (to_dict) of one rig."""
    if not history:
        return ""
    items = history if isinstance(history, (list, tuple)) else [history]
    parts = ['<section id="history"><h2>History and damping trends</h2>',
             '<p class="cautions">Extrapolated trends are indicative only; temperature, '
             "amplitude and configuration move damping too.</p>"]
    for j, trend in enumerate(items, start_index):
        data = _as_dict(trend) or {}
        rig = data.get("rig") or getattr(trend, "rig", "") or f"rig {j}"
        parts.append(f"<h3>Rig {_e(rig)}</h3>")
        modes = data.get("modes") or []
        rows = []
        for m in modes:
            slope = m.get("damping_ratio_slope_per_day")
            slope_value, slope_ci = slope, None
            if isinstance(slope, dict):
                slope_value, slope_ci = slope.get("value"), slope.get("ci")
            crossing = m.get("threshold_crossing")
            cross_txt = "-"
            if isinstance(crossing, dict):
                cross_txt = _e(crossing.get("date") or "-")
                cci = crossing.get("ci")
                if isinstance(cci, (list, tuple)) and len(cci) == 2:
                    cross_txt += f" [{_e(cci[0])}, {_e(cci[1])}]"
                cross_txt += " (indicative)"
            rows.append([_e(m.get("mode", "-")), _num(m.get("natural_frequency_hz"), 5),
                         _num(m.get("latest_damping_ratio")), _num(slope_value),
                         _interval(slope_ci), _e(m.get("level", "-")), cross_txt])
        if rows:
            parts.append(_table(["mode", "natural frequency (Hz)", "latest ζ (-)",
                                 "ζ slope (1/day)", "interval", "level",
                                 "projected threshold crossing"], rows, numeric=(1, 2, 3)))
        events = list(data.get("events", []) or [])
        warns = list(data.get("warnings", []) or [])
        if events or warns:
            parts.append('<div class="warnings"><ul>' + "".join(f"<li>{_e(w)}</li>" for w in warns + events)
                         + "</ul></div>")
        for c in data.get("cautions", []) or []:
            parts.append(f"<p class=\"meta\">{_e(c)}</p>")
        try:
            from ..plots import plot_damping_trend

            fig = plot_damping_trend(trend)
        except Exception as exc:  # shown, never silently dropped
            parts.append(f"<p class=\"warnings\">trend plot could not be drawn: {_e(exc)}</p>")
            continue
        png = _png(fig)
        caption = f"Damping ratio of each mode over time, rig {rig}"
        parts.append(_figure_html(png, caption))
        figures_out.append(f"history {rig}: trend")
        if plots_dir is not None:
            target = Path(plots_dir) / f"history-{_slug(rig)}-trend.png"
            write_atomically(target, png)
            plot_files.append(target)
    parts.append("</section>")
    return "\n".join(parts)


def render_report(results, *, title=None, plots_dir=None, history=None, failures=()):
    """Build the page; returns ``(html_text, figures, plot_files)`` (nothing written but PNGs)."""
    from .._version import __version__

    results = list(results)
    figures_out, plot_files = [], []
    if plots_dir is not None:
        Path(plots_dir).mkdir(parents=True, exist_ok=True)
    title = title or "Poleprint report"
    body = [f"<h1>{_e(title)}</h1>",
            f'<p class="meta">poleprint {_e(__version__)} · {len(results)} record(s)</p>',
            '<div class="cautions"><strong>Cautions</strong><ul>'
            + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS) + "</ul></div>"]
    if results:
        toc = "".join(f'<li><a href="#record-{i}">{_e(Path(str(getattr(r, "source", "") or i)).name)}</a></li>'
                      for i, r in enumerate(results, 1))
        body.append(f"<ol>{toc}</ol>")
    for source, message in failures or ():
        body.append(f'<div class="warnings"><p>{_e(source)}: not analysed: {_e(message)}</p></div>')
    for i, result in enumerate(results, 1):
        body.append(_result_section(i, result, figures_out, plots_dir, plot_files))
    body.append(_history_section(history, len(results) + 1, figures_out, plots_dir, plot_files))
    body.append(f'<p class="meta">Written by poleprint {_e(__version__)}. '
                "Estimates, not clearances.</p>")
    page = ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(title)}</title><style>{_CSS}</style></head><body>\n"
            + "\n".join(b for b in body if b) + "\n</body></html>\n")
    return page, tuple(figures_out), tuple(plot_files)


def write_report(results, path, *, plots_dir=None, title=None, history=None,
                 failures=()) -> ReportOutput:
    """Write one self-contained HTML report for job results.

    Parameters
    ----------
    results : sequence of job results
        Decay, step or ARX results (anything with ``poles``, ``warnings``, ``settings``,
        ``response``...; a missing attribute just loses its table or plot).
    path : str or pathlib.Path
        The HTML file to write (written to a temporary file beside it, then renamed, so
        a reader never sees half a report).
    plots_dir : str or pathlib.Path, optional
        Also write every figure there as a PNG file.
    title : str, optional
    history : trend result or sequence of them, optional
        Adds a history section with each rig's trend table and plot.
    failures : sequence of (source, message), optional
        Records that could not be analysed, listed at the top.

    Returns
    -------
    ReportOutput
    """
    results = list(results)
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    page, figures, plot_files = render_report(results, title=title, plots_dir=plots_dir,
                                              history=history, failures=failures)
    write_atomically(target, page)
    return ReportOutput(target, figures, plot_files, len(results))
