"""Step-test identification: process models with intervals, step figures, starting gains.

    analyse_step           the whole step-test job as one call → StepResult
    StepResult             frozen result: model, runner-up, candidates, poles, metrics, ...
    ProcessModel           a fitted structure with an interval on every parameter
    StepFigure             one step figure, measured and model, with its definition
    measure_figures        rise time, overshoot, peak time, settling time of a response
    TwoPointEstimate       a two-point FOPDT estimate
    two_point_estimates    Smith (1972) and Sundaresan & Krishnaswamy (1978)
    smith, sundaresan_krishnaswamy   the two rules on given crossing times
    Tuning, simc           SIMC starting PI / PID gains (Skogestad 2003)
    step_response, unit_response     the models, simulated on a record's time base
    STRUCTURES             "first-order", "two-lag", "underdamped", "integrating"
"""
from __future__ import annotations

from .._lazy import lazy_exports


_LAZY = {
    "analyse_step": "._analyse",
    "StepResult": "._result", "ProcessModel": "._result",
    "StepFigure": "._figures", "measure_figures": "._figures",
    "TwoPointEstimate": "._twopoint", "two_point_estimates": "._twopoint",
    "smith": "._twopoint", "sundaresan_krishnaswamy": "._twopoint",
    "Tuning": "._tuning", "simc": "._tuning",
    "step_response": "._models", "unit_response": "._models", "STRUCTURES": "._models",
}

__all__ = list(_LAZY)

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
