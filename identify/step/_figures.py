"""Step-response figures: rise time, overshoot, peak time, settling time, final value.

Each figure is measured from a response sampled on a time base, with times counted from
the input step instant (so they include any dead time).  The same function measures the
record and the model's simulated response, so the two columns share one definition.

Definitions (reference levels as in IEEE Std 181 for transitions):

* final value: the level the response settles to (measured: mean of the last part of
  the record; model: its steady state);
* rise time: from the first 10 % crossing to the first 90 % crossing of the change from
  the initial to the final value, linear interpolation between samples;
* overshoot: (peak - final) / (final - initial) · 100 %, the peak taken in the
  direction of the change (0 when the response never passes the final value);
* peak time: time of that peak after the step (3-point parabolic refinement);
* settling time: time after the step of the last sample outside ±band·|final - initial|
  around the final value (2 % band by default), interpolated to the band crossing.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["StepFigure", "DEFINITIONS", "measure_figures", "figures_table"]

DEFINITIONS = {
    "final_value": "level the response settles to (measured: mean of the last tenth of the "
                   "record; model: steady state)",
    "rise_time_s": "10 % to 90 % of the change from initial to final value (IEEE Std 181 "
                   "reference levels), first crossings, linear interpolation",
    "overshoot_percent": "(peak - final) / (final - initial) x 100, peak in the direction of "
                         "the change; 0 when the final value is never passed",
    "peak_time_s": "time of the peak after the input step (includes dead time)",
    "settling_time_s": "time after the input step of the last exit from the band "
                       "final +/- {band:g} % of the change (includes dead time)",
}


@dataclass(frozen=True)
class StepFigure:
    """One figure, measured from the record and predicted by the model."""

    name: str
    measured: float | None
    model: float | None
    unit: str
    definition: str
    note: str = ""

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({"measured": self.measured, "model": self.model, "unit": self.unit,
                         "definition": self.definition, "note": self.note or None})


def _first_crossing(t, x, level):
    idx = np.flatnonzero(x >= level)
    if idx.size == 0:
        return float("nan")
    i = int(idx[0])
    if i == 0:
        return float(t[0])
    x0, x1 = x[i - 1], x[i]
    frac = 0.0 if x1 == x0 else (level - x0) / (x1 - x0)
    return float(t[i - 1] + min(max(frac, 0.0), 1.0) * (t[i] - t[i - 1]))


def measure_figures(time_s, values, *, step_time_s, initial, final, settling_band=0.02) -> dict:
    """Measure the step figures of a response.

    Parameters
    ----------
    time_s, values : array_like
        The response on its time base.
    step_time_s : float
        The input step instant; samples before it are ignored and times are counted
        from it.
    initial, final : float
        Levels before the step and at the end (the change is ``final - initial``).
    settling_band : float, default=0.02
        Half-width of the settling band as a fraction of the change.

    Returns
    -------
    dict
        ``rise_time_s``, ``overshoot_percent``, ``peak_time_s``, ``settling_time_s``
        (NaN when not reached within the record) and ``final_value``.
    """
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(values, dtype=float)
    keep = t >= step_time_s
    t, y = t[keep] - step_time_s, y[keep]
    change = float(final) - float(initial)
    out = {"final_value": float(final), "rise_time_s": float("nan"), "overshoot_percent": float("nan"),
           "peak_time_s": float("nan"), "settling_time_s": float("nan")}
    if change == 0 or t.size < 3:
        return out
    x = (y - float(initial)) / change  # normalised: 0 before, 1 at the final value
    t10, t90 = _first_crossing(t, x, 0.1), _first_crossing(t, x, 0.9)
    out["rise_time_s"] = t90 - t10
    i = int(np.argmax(x))
    peak, tpk = float(x[i]), float(t[i])
    if 0 < i < x.size - 1:  # parabola through the three samples around the maximum
        a, b, c = x[i - 1], x[i], x[i + 1]
        den = a - 2 * b + c
        if den < 0:
            d = 0.5 * (a - c) / den
            peak = float(b - 0.25 * (a - c) * d)
            tpk = float(t[i] + d * (t[i + 1] - t[i]))
    if peak > 1.0:
        out["overshoot_percent"] = 100.0 * (peak - 1.0)
        out["peak_time_s"] = tpk
    else:
        out["overshoot_percent"] = 0.0
    outside = np.flatnonzero(np.abs(x - 1.0) > settling_band)
    if outside.size == 0:
        out["settling_time_s"] = 0.0
    elif outside[-1] < x.size - 1:
        j = int(outside[-1])
        e0, e1 = abs(x[j] - 1.0), abs(x[j + 1] - 1.0)
        frac = 1.0 if e0 == e1 else (e0 - settling_band) / (e0 - e1)
        out["settling_time_s"] = float(t[j] + min(max(frac, 0.0), 1.0) * (t[j + 1] - t[j]))
    return out


def figures_table(measured: dict, model: dict, *, unit: str, settling_band: float,
                  notes: dict | None = None) -> dict:
    """Combine measured and model figures into :class:`StepFigure` objects by name."""
    notes = notes or {}
    units = {"final_value": unit, "rise_time_s": "s", "overshoot_percent": "%",
             "peak_time_s": "s", "settling_time_s": "s"}
    out = {}
    for name, definition in DEFINITIONS.items():
        def clean(v):
            return None if v is None or (isinstance(v, float) and not math.isfinite(v)) else float(v)
        out[name] = StepFigure(name, clean(measured.get(name)), clean(model.get(name)), units[name],
                               definition.format(band=100 * settling_band), notes.get(name, ""))
    return out
