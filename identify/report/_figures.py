"""Which figures each job result gets (duck-typed: a missing attribute loses its plot)."""
from __future__ import annotations

from dataclasses import dataclass

__all__ = ["FigureEntry", "figures_for", "job_kind"]

_KINDS = {"DecayResult": "decay", "StepResult": "step", "ArxResult": "arx"}


@dataclass(frozen=True)
class FigureEntry:
    """One drawn figure: a short ``key`` (used in file names), a caption and the figure.

    ``error`` is set (and ``figure`` is None) when the data were there but drawing failed,
    so the report can say so instead of silently leaving the figure out.
    """

    key: str
    caption: str
    figure: object = None
    error: str | None = None


def job_kind(result) -> str:
    """``"decay"``, ``"step"``, ``"arx"`` or ``"result"`` from the result's class or fields."""
    kind = getattr(result, "job", None)
    if isinstance(kind, str) and kind:
        return kind
    name = type(result).__name__
    if name in _KINDS:
        return _KINDS[name]
    if hasattr(result, "methods") and hasattr(result, "segment"):
        return "decay"
    if hasattr(result, "metrics"):
        return "step"
    if hasattr(result, "order_scan") or hasattr(result, "order_search"):
        return "arx"
    return "result"


def _confidence(result) -> float:
    settings = getattr(result, "settings", None) or {}
    value = settings.get("confidence", 0.95) if isinstance(settings, dict) else 0.95
    try:
        value = float(value)
    except (TypeError, ValueError):
        return 0.95
    return value if 0.0 < value < 1.0 else 0.95


def _whole_record(result):
    """The whole analysed channel, re-read from the source file when it is still the same
    file (same SHA-256); ``(None, None)`` otherwise."""
    import os

    source = getattr(result, "source", None)
    column = getattr(result, "column", None)
    sha = getattr(result, "sha256", None)
    if not source or not sha or not os.path.isfile(str(source)):
        return None, None
    try:
        from .._csv import read_record

        record = read_record(str(source))
        if record.sha256 != sha:
            return None, None
        channel = record.channel(column) if column is not None else record.channels[0]
        if channel.values.size > 200_000:  # the segment alone is enough on huge records
            return None, None
        return record.time_s, channel.values
    except Exception:  # the plot then shows the analysed segment only
        return None, None


def _step_time(result):
    """The step instant: ``result.step.time_s`` when the job found one."""
    step = getattr(result, "step", None)
    value = getattr(step, "time_s", None)
    if value is None and isinstance(step, dict):
        value = step.get("time_s")
    return value


def _logdec_details(result):
    methods = getattr(result, "methods", None)
    if not isinstance(methods, dict):
        return None
    est = methods.get("logdec")
    details = getattr(est, "details", None) if est is not None else None
    if not isinstance(details, dict):
        return None
    if details.get("peak_times_s") is None or details.get("peak_amplitudes") is None:
        return None
    return est, details


def figures_for(result) -> list:
    """Draw every figure the result's data allow; returns a list of :class:`FigureEntry`."""
    from .. import plots

    kind = job_kind(result)
    response = getattr(result, "response", None)
    poles = tuple(getattr(result, "poles", ()) or ())
    order_scan = getattr(result, "order_scan", None)
    confidence = _confidence(result)
    todo = []
    if response is not None:
        if kind == "step":
            todo.append(("step", "Step response, measured and model, with the step figures",
                         lambda: plots.plot_step(response, getattr(result, "metrics", None),
                                                 step_time_s=_step_time(result),
                                                 title="Step response")))
        else:
            segment = getattr(result, "segment", None)
            full_t, full_y = _whole_record(result) if kind == "decay" else (None, None)
            todo.append(("record", "Record with the analysed segment and the model",
                         lambda: plots.plot_record(response, segment=segment, full_time_s=full_t,
                                                   full_measured=full_y)))
        todo.append(("residuals", "Residuals and their autocorrelation",
                     lambda: plots.plot_residuals(response, confidence=confidence)))
    if poles:
        todo.append(("splane", "Poles in the s-plane with their interval boxes",
                     lambda: plots.plot_splane(poles)))
    logdec = _logdec_details(result)
    if logdec is not None:
        est, details = logdec
        est_poles = getattr(est, "poles", ()) or ()
        sigma = est_poles[0].decay_rate_per_s if est_poles else None
        unit = getattr(response, "unit", "") if response is not None else ""
        todo.append(("lnamp", "Logarithmic decrement: ln-amplitude of the peaks against time",
                     lambda: plots.plot_ln_amplitude(details["peak_times_s"],
                                                     details["peak_amplitudes"],
                                                     used=details.get("used"),
                                                     decay_rate_per_s=sigma, unit=unit)))
    if order_scan:
        todo.append(("stability", "Pole stability across model orders",
                     lambda: plots.plot_order_stability(order_scan, selected=poles)))
    out = []
    for key, caption, draw in todo:
        try:
            out.append(FigureEntry(key, caption, draw()))
        except Exception as exc:  # reported in the page, never silently dropped
            out.append(FigureEntry(key, caption, None, f"{type(exc).__name__}: {exc}"))
    return out
