"""Free-decay (ring-down) identification: poles of a record's modes with intervals.

    analyse_decay          one record (or CSV path) → :class:`DecayResult` (the ``decay`` job)
    DecayResult            poles, each method's estimates, consensus, fit, warnings
    MethodEstimate         one method's poles with intervals, warnings and details
    matrix_pencil          matrix pencil (Hua & Sarkar 1990), order selection, stability scan
    fit_damped_sinusoids   nonlinear least squares (lmfit) seeded by pencil poles
    log_decrement          logarithmic decrement by weighted regression (single mode)
    half_power             half-power bandwidth from the spectrum (cross-check)

Heavy modules load on first use.
"""
from __future__ import annotations

from .._lazy import lazy_exports
from ._common import MethodEstimate

_LAZY = {
    "analyse_decay": "._analyse",
    "DecayResult": "._result",
    "matrix_pencil": "._pencil",
    "fit_damped_sinusoids": "._nls",
    "log_decrement": "._logdec",
    "half_power": "._halfpower",
}

__all__ = ["MethodEstimate", *_LAZY]

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
