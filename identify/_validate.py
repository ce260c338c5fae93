"""Validators shared by every public function.

Each names the parameter, says what is allowed and echoes what was received.
"""
from __future__ import annotations

import math
from numbers import Integral, Real

import numpy as np

from ._errors import ParameterTypeError, ParameterValueError

__all__ = [
    "all_finite",
    "check_confidence",
    "check_positive",
    "check_nonnegative",
    "check_choice",
    "check_int",
    "check_fraction",
    "check_array_1d",
]


def _is_real(value) -> bool:
    return isinstance(value, Real) and not isinstance(value, bool)


def check_confidence(confidence) -> float:
    """Validate a confidence level given as a probability in (0, 1)."""
    if not _is_real(confidence):
        raise ParameterTypeError(
            f"confidence must be a number between 0 and 1 (e.g. 0.95); got {confidence!r}")
    value = float(confidence)
    if not (0.0 < value < 1.0) or math.isnan(value):
        hint = " (give a probability: 0.95, not 95)" if 1.0 < value <= 100.0 else ""
        raise ParameterValueError(
            f"confidence must lie strictly between 0 and 1; got {confidence!r}{hint}")
    return value


def check_positive(name: str, value, *, allow_none: bool = False):
    """Validate a finite number > 0."""
    if value is None and allow_none:
        return None
    if not _is_real(value):
        raise ParameterTypeError(f"{name} must be a positive number; got {value!r}")
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ParameterValueError(f"{name} must be a finite number > 0; got {value!r}")
    return value


def check_nonnegative(name: str, value, *, allow_none: bool = False):
    """Validate a finite number >= 0."""
    if value is None and allow_none:
        return None
    if not _is_real(value):
        raise ParameterTypeError(f"{name} must be a number >= 0; got {value!r}")
    value = float(value)
    if not (math.isfinite(value) and value >= 0):
        raise ParameterValueError(f"{name} must be a finite number >= 0; got {value!r}")
    return value


def check_fraction(name: str, value, *, low: float = 0.0, high: float = 1.0):
    """Validate a number strictly between ``low`` and ``high``."""
    if not _is_real(value):
        raise ParameterTypeError(f"{name} must be a number between {low} and {high}; got {value!r}")
    value = float(value)
    if not (low < value < high):
        raise ParameterValueError(
            f"{name} must lie strictly between {low} and {high}; got {value!r}")
    return value


def check_choice(name: str, value, allowed):
    """Validate that ``value`` is one of ``allowed`` (strings compared case-insensitively)."""
    allowed = tuple(allowed)
    if isinstance(value, str):
        for option in allowed:
            if isinstance(option, str) and option.lower() == value.lower():
                return option
    elif value in allowed:
        return value
    shown = ", ".join(repr(a) for a in allowed)
    raise ParameterValueError(f"{name} must be one of {shown}; got {value!r}")


def check_int(name: str, value, *, minimum: int | None = None, maximum: int | None = None,
              allow_none: bool = False):
    """Validate an integer within optional bounds."""
    if value is None and allow_none:
        return None
    if isinstance(value, bool) or not isinstance(value, Integral):
        raise ParameterTypeError(f"{name} must be a whole number; got {value!r}")
    value = int(value)
    if minimum is not None and value < minimum:
        raise ParameterValueError(f"{name} must be >= {minimum}; got {value!r}")
    if maximum is not None and value > maximum:
        raise ParameterValueError(f"{name} must be <= {maximum}; got {value!r}")
    return value


def all_finite(values: np.ndarray) -> bool:
    """True when every value of the float array is finite.

    One sum settles the usual case without a temporary array (a NaN or infinity makes
    the sum non-finite); only a non-finite sum, from such a value or from overflow, is
    checked value by value.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        total = float(np.add.reduce(values, axis=None))
    return math.isfinite(total) or bool(np.isfinite(values).all())


def check_array_1d(name: str, values, *, min_length: int = 1, finite: bool = True) -> np.ndarray:
    """Return ``values`` as a 1-D float array, checking length and finiteness."""
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ParameterTypeError(f"{name} must be a sequence of numbers; got {type(values).__name__}") from None
    if arr.ndim != 1:
        raise ParameterValueError(f"{name} must be one-dimensional; got shape {arr.shape}")
    if arr.size < min_length:
        raise ParameterValueError(f"{name} needs at least {min_length} samples; got {arr.size}")
    if finite and not all_finite(arr):
        bad = int(np.flatnonzero(~np.isfinite(arr))[0])
        raise ParameterValueError(f"{name} holds a non-finite value at index {bad}: {arr[bad]!r}")
    return arr


def check_time_series(time_s, values, *, min_length: int = 1, values_name: str = "values"):
    """``time_s`` and ``values`` as 1-D float arrays (:func:`check_array_1d` on each) of one length."""
    t = check_array_1d("time_s", time_s, min_length=min_length)
    x = check_array_1d(values_name, values, min_length=min_length)
    if t.size != x.size:
        raise ParameterValueError(
            f"time_s and {values_name} must have the same length; got {t.size} and {x.size}")
    return t, x
