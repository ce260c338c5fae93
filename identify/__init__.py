"""Poleprint: poles with confidence intervals from measured responses.

Import name ``identify``; command ``poleprint``.  The public API, one line each
(heavy modules load on first use, so ``import identify`` stays fast):

Records and conditioning
    read_record          read a logger/oscilloscope CSV into a :class:`Record`
    Record, Channel      uniformly sampled, named, traceable channels
    identify.conditioning  offset/trend, free-decay segment and step detection

Jobs (each returns a frozen result with poles, intervals, warnings and ``to_dict()``)
    analyse_decay        free decay: modes by pencil → nonlinear fit, cross-checked
    analyse_step         step test: process model, step figures, starting gains
    analyse_arx          input/output or output-only records: least-squares ARX
    fit_arx              ARX on arrays

Validation, outputs and history
    validate, Validation   fit percent, R², residual whiteness, verdict in words
    write_report           one self-contained HTML report
    check_against, CheckResult   a saved result against a new record: how poles moved
    HistoryStore, analyse_trend, TrendResult   per-rig SQLite history and damping trends

Poles
    Pole, PoleIntervals, Interval   a pole, its intervals and derived quantities
    discrete_to_continuous, continuous_to_discrete, hz_to_rad_per_s, rad_per_s_to_hz

Errors and warnings
    PoleprintError (base), ParameterValueError, ParameterTypeError, RecordError,
    IdentificationError, HistoryError; PoleprintWarning, RecordWarning, EstimateWarning
"""
from __future__ import annotations

from ._lazy import lazy_exports


from ._errors import (EstimateWarning, HistoryError, IdentificationError, ParameterTypeError,
                      ParameterValueError, PoleprintError, PoleprintWarning, RecordError,
                      RecordWarning)
from ._version import __version__

#: public name -> module that defines it (imported on first access; ``import identify``
#: imports no numpy, so the command line can set numpy's thread defaults first)
_LAZY = {
    "Record": "identify.records", "Channel": "identify.records",
    "Pole": "identify.poles", "PoleIntervals": "identify.poles", "Interval": "identify.poles",
    "continuous_to_discrete": "identify.poles", "discrete_to_continuous": "identify.poles",
    "hz_to_rad_per_s": "identify.poles", "rad_per_s_to_hz": "identify.poles",
    "read_record": "identify._csv",
    "analyse_decay": "identify.decay", "DecayResult": "identify.decay",
    "analyse_step": "identify.step", "StepResult": "identify.step",
    "analyse_arx": "identify.arx", "ArxResult": "identify.arx", "fit_arx": "identify.arx",
    "validate": "identify.validation", "Validation": "identify.validation",
    "write_report": "identify.report",
    "check_against": "identify.check", "CheckResult": "identify.check",
    "HistoryStore": "identify.history", "analyse_trend": "identify.history",
    "TrendResult": "identify.history",
}

__all__ = [
    "__version__", "PoleprintError", "ParameterValueError", "ParameterTypeError", "RecordError",
    "IdentificationError", "HistoryError", "PoleprintWarning", "RecordWarning", "EstimateWarning",
    *_LAZY,
]

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
