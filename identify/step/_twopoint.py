"""Two-point first-order-plus-dead-time estimates: seeds and a cross-check column.

Smith (1972): τ = 1.5·(t63.2 - t28.3), θ = t63.2 - τ.
Sundaresan & Krishnaswamy (1978): τ = 0.67·(t85.3 - t35.3), θ = 1.3·t35.3 - 0.29·t85.3.

``tp`` is the time, after the input step, at which the response reaches the fraction
``p`` of its total change.  For an exact FOPDT response tp = θ - τ·ln(1 - p), so both
rules return τ and θ within their rounded constants (the exact constants are
1/(ln(1/0.368) - ln(1/0.717)) = 1.4993 for Smith and 1/(ln(1/0.147) - ln(1/0.647)) =
0.6748 for Sundaresan & Krishnaswamy).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["TwoPointEstimate", "crossing_time", "smith", "sundaresan_krishnaswamy", "two_point_estimates"]


@dataclass(frozen=True)
class TwoPointEstimate:
    """A two-point FOPDT estimate.

    Parameters
    ----------
    method : str
        ``"smith-1972"`` or ``"sundaresan-krishnaswamy-1978"``.
    gain : float
        Total output change over input change.
    time_constant_s, dead_time_s : float
        The rule's τ and θ (NaN when a crossing was not reached).
    times_s : dict
        The two crossing times used, measured from the input step.
    """

    method: str
    gain: float
    time_constant_s: float
    dead_time_s: float
    times_s: dict

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({"method": self.method, "gain": self.gain,
                         "time_constant_s": self.time_constant_s,
                         "dead_time_s": self.dead_time_s, "times_s": self.times_s})


def crossing_time(time_s, values, fraction, *, initial, final, step_time_s=0.0) -> float:
    """First time after ``step_time_s`` at which the response passes ``fraction`` of its change.

    Linear interpolation between the two samples around the crossing; NaN when the
    level is never reached.  Returned relative to ``step_time_s``.
    """
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(values, dtype=float)
    change = float(final) - float(initial)
    if change == 0:
        return float("nan")
    level = (y - float(initial)) / change  # normalised 0 → 1
    after = t >= float(step_time_s)
    idx = np.flatnonzero(after & (level >= fraction))
    if idx.size == 0:
        return float("nan")
    i = int(idx[0])
    if i == 0 or not after[i - 1]:
        return float(t[i] - step_time_s)
    l0, l1 = level[i - 1], level[i]
    frac = 0.0 if l1 == l0 else (fraction - l0) / (l1 - l0)
    return float(t[i - 1] + min(max(frac, 0.0), 1.0) * (t[i] - t[i - 1]) - step_time_s)


def smith(t283_s: float, t632_s: float) -> tuple:
    """Smith (1972): ``(τ, θ)`` from the 28.3 % and 63.2 % times."""
    tau = 1.5 * (t632_s - t283_s)
    return tau, t632_s - tau


def sundaresan_krishnaswamy(t353_s: float, t853_s: float) -> tuple:
    """Sundaresan & Krishnaswamy (1978): ``(τ, θ)`` from the 35.3 % and 85.3 % times."""
    return 0.67 * (t853_s - t353_s), 1.3 * t353_s - 0.29 * t853_s


def _smoothed(y, width):
    if width <= 1 or y.size < 3 * width:
        return y
    kernel = np.ones(width) / width
    pad = np.concatenate([np.full(width, y[0]), y, np.full(width, y[-1])])
    return np.convolve(pad, kernel, mode="same")[width:-width]


def two_point_estimates(time_s, values, *, step_time_s, initial, final, step_size,
                        smooth_samples: int = 1) -> tuple:
    """Both two-point estimates from a response (optionally smoothed by a moving mean).

    ``initial`` and ``final`` are the output levels before and after; the gain is
    ``(final - initial) / step_size``.  A centred moving mean of ``smooth_samples``
    tames noise before the crossings are read.
    """
    y = _smoothed(np.asarray(values, dtype=float), int(smooth_samples))
    gain = (float(final) - float(initial)) / float(step_size)
    times = {p: crossing_time(time_s, y, p, initial=initial, final=final, step_time_s=step_time_s)
             for p in (0.283, 0.632, 0.353, 0.853)}
    out = []
    tau, theta = smith(times[0.283], times[0.632])
    out.append(TwoPointEstimate("smith-1972", gain, tau, theta,
                                {"t28.3": times[0.283], "t63.2": times[0.632]}))
    tau, theta = sundaresan_krishnaswamy(times[0.353], times[0.853])
    out.append(TwoPointEstimate("sundaresan-krishnaswamy-1978", gain, tau, theta,
                                {"t35.3": times[0.353], "t85.3": times[0.853]}))
    return tuple(out)


def exact_constants() -> dict:
    """The rules' constants derived exactly for an FOPDT response (see module notes)."""
    a = 1.0 / (math.log(1 / (1 - 0.632)) - math.log(1 / (1 - 0.283)))
    b = 1.0 / (math.log(1 / (1 - 0.853)) - math.log(1 / (1 - 0.353)))
    return {"smith_tau_factor": a, "sk_tau_factor": b}
