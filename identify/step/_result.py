"""What a step test gives: :class:`ProcessModel` and :class:`StepResult`."""
from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["ProcessModel", "StepResult", "CONTRACT_VERSION", "RESULT_CAUTION"]

#: version of the step job's JSON contract (docs/json-contract.md)
CONTRACT_VERSION = 1

RESULT_CAUTION = ("estimates from one step test, not clearances; controller gains are a starting point "
                  "to review before use on a live plant; step tests on running plants need the site's "
                  "approval; defer to the site's procedures, local codes and licensed engineers")


@dataclass(frozen=True)
class ProcessModel:
    """A fitted step-test model with an interval on every parameter.

    Parameters
    ----------
    structure : str
        ``"first-order"``, ``"two-lag"``, ``"underdamped"`` or ``"integrating"``.
    gain : float
        Process gain K: output change per input change (for ``"integrating"``: output
        rate per input change, in output units per input unit per second).
    dead_time_s : float
        Dead time θ.
    time_constants_s : tuple of float
        Lags, dominant first (empty for underdamped and integrating).
    natural_frequency_hz, damping_ratio : float or None
        For the underdamped structure (computed through :class:`identify.poles.Pole`).
    offset : float
        Output level before the step (the model's initial value).
    ci : dict
        Parameter name → ``(lower, upper)``; ``time_constants_s`` → tuple of pairs.
    level : float
        Confidence level of ``ci``.
    method : str
        How the intervals were obtained (``"delta"`` or ``"bootstrap"``).
    gain_unit : str
        Unit of the gain, e.g. ``"degC/%"`` or ``"m/s per %"``.
    """

    structure: str
    gain: float
    dead_time_s: float
    time_constants_s: tuple
    natural_frequency_hz: float | None
    damping_ratio: float | None
    offset: float
    ci: dict
    level: float
    method: str
    gain_unit: str = ""

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        ci = {"level": self.level, "method": self.method}
        for name, value in self.ci.items():
            if name == "time_constants_s":
                ci[name] = [list(v) for v in value]
            else:
                ci[name] = list(value)
        return jsonable({
            "structure": self.structure, "gain": self.gain, "gain_unit": self.gain_unit,
            "dead_time_s": self.dead_time_s, "time_constants_s": list(self.time_constants_s),
            "natural_frequency_hz": self.natural_frequency_hz, "damping_ratio": self.damping_ratio,
            "offset": self.offset, "ci": ci})


@dataclass(frozen=True)
class StepResult:
    """The result of :func:`identify.step.analyse_step`.

    Parameters
    ----------
    source, sha256 : str
        The record's identity.
    model : ProcessModel
        The chosen structure, with intervals.
    runner_up : ProcessModel or None
        The next-best structure (None when one structure was asked for).
    candidates : tuple of dict
        Every structure fitted: parameters, AICc, BIC, fit %, residual rms, Ljung–Box p,
        and why it collapses into a simpler one (``degenerate``).
    poles : tuple of identify.poles.Pole
        Poles of the chosen model with intervals (the ``poles`` shape of every job).
    metrics : dict
        Step figures (:class:`identify.step.StepFigure`), measured and model, each with
        its definition.
    twopoint : tuple
        Two-point FOPDT estimates (Smith 1972; Sundaresan & Krishnaswamy 1978): the
        cross-check column.
    tuning : identify.step.Tuning
        SIMC starting gains: a starting point to review.
    fit : dict
        ``residual_rms``, ``fit_percent``, ``ljung_box_p``, ``samples``, ``criterion``.
    warnings : tuple of str
        One line each, ``"key: text"``.
    settings : dict
        Every option as used.
    step : identify.conditioning.StepEvent
        The step found in the input (or the one given).
    response : identify._response.ModelResponse
        The measured output beside the model driven by the measured input.
    """

    source: str
    sha256: str
    model: ProcessModel
    runner_up: ProcessModel | None
    candidates: tuple
    poles: tuple
    metrics: dict
    twopoint: tuple
    tuning: object
    fit: dict
    warnings: tuple
    settings: dict
    step: object
    response: object = field(repr=False, default=None)

    def to_dict(self) -> dict:
        """The JSON contract of the step job (see docs/json-contract.md)."""
        from .._jsonable import jsonable

        return jsonable({
            "job": "step", "contract_version": CONTRACT_VERSION,
            "source": self.source, "sha256": self.sha256,
            "model": self.model.to_dict(),
            "runner_up": None if self.runner_up is None else self.runner_up.to_dict(),
            "candidates": list(self.candidates),
            "poles": [p.to_dict() for p in self.poles],
            "metrics": {k: v.to_dict() for k, v in self.metrics.items()},
            "twopoint": [t.to_dict() for t in self.twopoint],
            "tuning": self.tuning.to_dict(),
            "fit": dict(self.fit),
            "warnings": list(self.warnings),
            "settings": dict(self.settings),
            "step": self.step.to_dict(),
            "response": None if self.response is None else self.response.to_dict(),
            "caution": RESULT_CAUTION,
        })

    def summary(self) -> str:
        """Plain-text report (what ``poleprint step`` prints)."""
        from ._text import render

        return render(self)
