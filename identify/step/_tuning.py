"""Starting PI / PID gains by the SIMC rules (Skogestad 2003).

First order plus dead time ``K e^(-θs)/(τ1 s + 1)``, PI:

    Kc = τ1 / (K (τc + θ)),   τI = min(τ1, 4 (τc + θ))

Two lags ``K e^(-θs)/((τ1 s + 1)(τ2 s + 1))``: the same Kc and τI with τD = τ2 for a PID
in series (cascade) form; a PI by the half rule (τ1 + τ2/2, θ + τ2/2).
Integrating ``K' e^(-θs)/s``, PI:

    Kc = 1 / (K' (τc + θ)),   τI = 4 (τc + θ)

τc, the desired closed-loop time constant, defaults to θ ("tight control" in the
paper).  The rules assume real lags: no gains are given for the underdamped structure.
The results are starting points to review, never settings to apply unreviewed.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

__all__ = ["Tuning", "simc", "CAUTION"]

CAUTION = ("starting point to review before use on a live plant; step tests on running plants "
           "need the site's approval; defer to the site's procedures and licensed engineers")


@dataclass(frozen=True)
class Tuning:
    """Controller starting gains for one model.

    Parameters
    ----------
    rule : str
        ``"SIMC (Skogestad 2003)"``.
    controller : str
        ``"PI"``, ``"PID"`` or ``"none"`` when the rule does not apply.
    gain : float or None
        Controller gain Kc, in input units per output unit.
    integral_time_s, derivative_time_s : float or None
        τI and τD (PID in series form).
    closed_loop_time_constant_s : float or None
        The τc used.
    form : str
        ``"PI"``, ``"series PID"`` (Kc (1 + 1/(τI s)) (1 + τD s)).
    alternatives : tuple of dict
        Other settings from the same rule (the half-rule PI for two lags; the ideal-form
        equivalent of a series PID).
    caution : str
        Always :data:`CAUTION`.
    notes : tuple of str
        Why τc was chosen, or why no gains are given.
    """

    rule: str
    controller: str
    gain: float | None
    integral_time_s: float | None
    derivative_time_s: float | None
    closed_loop_time_constant_s: float | None
    form: str
    alternatives: tuple = ()
    caution: str = CAUTION
    notes: tuple = field(default_factory=tuple)

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({"rule": self.rule, "controller": self.controller, "gain": self.gain,
                         "integral_time_s": self.integral_time_s,
                         "derivative_time_s": self.derivative_time_s,
                         "closed_loop_time_constant_s": self.closed_loop_time_constant_s,
                         "form": self.form, "alternatives": list(self.alternatives),
                         "caution": self.caution, "label": "starting point to review",
                         "notes": list(self.notes)})


RULE = "SIMC (Skogestad 2003)"


def _pi(gain, tau1, theta, tau_c):
    kc = tau1 / (gain * (tau_c + theta))
    return kc, min(tau1, 4.0 * (tau_c + theta))


def simc(structure: str, *, gain: float, dead_time_s: float, time_constants_s=(),
         closed_loop_time_constant_s: float | None = None, sample_time_s: float | None = None) -> Tuning:
    """SIMC starting gains for a fitted structure.

    Parameters
    ----------
    structure : {"first-order", "two-lag", "integrating", "underdamped"}
    gain : float
        Process gain K (output per input; for ``"integrating"`` output per input per second).
    dead_time_s : float
        θ.
    time_constants_s : sequence of float
        τ1 (and τ2), dominant first.
    closed_loop_time_constant_s : float, optional
        τc; default θ.  When θ is below one sample interval and no τc is given, one
        sample interval is used (τc = θ = 0 would ask for infinite gain) and said in
        ``notes``.
    sample_time_s : float, optional
        The record's sample interval (for that floor).

    References
    ----------
    S. Skogestad, "Simple analytic rules for model reduction and PID controller
    tuning", J. Process Control 13 (2003) 291-309.
    """
    notes = []
    theta = max(float(dead_time_s), 0.0)
    if closed_loop_time_constant_s is None:
        tau_c = theta
        notes.append("tau_c = dead time (SIMC tight control)")
        floor = sample_time_s or 0.0
        if tau_c <= 0.0 or tau_c < floor:
            tau_c = max(floor, tau_c)
            notes.append(f"dead time below one sample interval: tau_c = {tau_c:.4g} s used; choose it "
                         "with closed_loop_time_constant_s (--tau-c)")
    else:
        tau_c = float(closed_loop_time_constant_s)
        notes.append("tau_c chosen by the user")
    if structure == "underdamped":
        return Tuning(RULE, "none", None, None, None, None, "none", (), CAUTION,
                      tuple(["SIMC rules assume real lags; no starting gains for an underdamped "
                             "model (oscillating plant): tune with care from the model"]))
    if tau_c + theta <= 0 or gain == 0 or not math.isfinite(gain):
        return Tuning(RULE, "none", None, None, None, tau_c, "none", (), CAUTION,
                      tuple(notes + ["no finite gain: tau_c + dead time is zero or the gain is zero"]))
    if structure == "integrating":
        kc = 1.0 / (gain * (tau_c + theta))
        return Tuning(RULE, "PI", kc, 4.0 * (tau_c + theta), None, tau_c, "PI", (), CAUTION, tuple(notes))
    if structure == "first-order":
        kc, ti = _pi(gain, float(time_constants_s[0]), theta, tau_c)
        return Tuning(RULE, "PI", kc, ti, None, tau_c, "PI", (), CAUTION, tuple(notes))
    if structure == "two-lag":
        t1, t2 = float(time_constants_s[0]), float(time_constants_s[1])
        kc, ti = _pi(gain, t1, theta, tau_c)
        td = t2
        ideal = {"form": "ideal PID", "gain": kc * (1 + td / ti), "integral_time_s": ti + td,
                 "derivative_time_s": ti * td / (ti + td)}
        kc_pi, ti_pi = _pi(gain, t1 + t2 / 2.0, theta + t2 / 2.0, tau_c)
        half = {"form": "PI (half rule: tau1 + tau2/2, theta + tau2/2)", "gain": kc_pi,
                "integral_time_s": ti_pi, "derivative_time_s": None}
        return Tuning(RULE, "PID", kc, ti, td, tau_c, "series PID", (ideal, half), CAUTION, tuple(notes))
    raise ValueError(f"unknown structure {structure!r}")
