"""One error and warning hierarchy for the whole package.

Every exception Poleprint raises on purpose derives from :class:`PoleprintError`;
every warning it issues derives from :class:`PoleprintWarning`.  Wrong types raise
:class:`ParameterTypeError` (also a ``TypeError``), wrong values
:class:`ParameterValueError` (also a ``ValueError``), so callers can catch either the
project's base class or the built-in one.
"""
from __future__ import annotations

__all__ = [
    "PoleprintError",
    "ParameterValueError",
    "ParameterTypeError",
    "RecordError",
    "IdentificationError",
    "HistoryError",
    "PoleprintWarning",
    "RecordWarning",
    "EstimateWarning",
]


class PoleprintError(Exception):
    """Base class of every error raised on purpose by Poleprint.

    Parameters
    ----------
    message : str
        What is wrong, in one line.
    source : str, optional
        The file (or other input) the problem belongs to; the command line prints
        ``poleprint: error: SOURCE: message``.
    """

    def __init__(self, message: str, source: str | None = None):
        super().__init__(message)
        self.message = str(message)
        self.source = None if source is None else str(source)

    def __str__(self) -> str:  # one line, never a traceback
        text = " ".join(self.message.split())
        return f"{self.source}: {text}" if self.source else text

    def with_source(self, source) -> "PoleprintError":
        """Return the same error attributed to ``source`` (kept if already set)."""
        if self.source is None:
            self.source = str(source)
        return self


class ParameterValueError(PoleprintError, ValueError):
    """An argument has an allowed type but a value outside what is allowed."""


class ParameterTypeError(PoleprintError, TypeError):
    """An argument has a type that is not allowed."""


class RecordError(PoleprintError, ValueError):
    """A file or record cannot be read or used as given (malformed, NaN, bad time base...)."""


class IdentificationError(PoleprintError, ValueError):
    """The data do not support an estimate (no oscillation, no step, too few samples...)."""


class HistoryError(PoleprintError):
    """The history database cannot be used (corrupted, foreign, newer schema...)."""


class PoleprintWarning(UserWarning):
    """Base class of every warning issued by Poleprint."""


class RecordWarning(PoleprintWarning):
    """Something was repaired or noticed while reading a record (jitter, clipping...)."""


class EstimateWarning(PoleprintWarning):
    """An estimate is less trustworthy than usual (few cycles, low SNR, disagreement...)."""
