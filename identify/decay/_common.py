"""What every free-decay method returns: :class:`MethodEstimate`."""
from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["MethodEstimate"]


@dataclass(frozen=True)
class MethodEstimate:
    """One method's answer for one record segment.

    Parameters
    ----------
    method : str
        ``"logdec"``, ``"pencil"``, ``"fit"`` or ``"halfpower"``.
    poles : tuple of identify.poles.Pole
        Poles with ``imag >= 0``, sorted by natural frequency, each with intervals
        (``ci``) where the method gives them.
    warnings : tuple of str
        One-line warnings, each starting with a short lower-case key and a colon,
        e.g. ``"few cycles: only 2.1 cycles above the noise floor (5 or more advised)"``.
    details : dict
        Method-specific, JSON-safe numbers (chosen order, number of cycles used, ...).
    """

    method: str
    poles: tuple
    warnings: tuple = ()
    details: dict = field(default_factory=dict)

    def __post_init__(self):
        object.__setattr__(self, "poles", tuple(sorted(self.poles, key=lambda p: p.natural_frequency_hz)))
        object.__setattr__(self, "warnings", tuple(self.warnings))

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return {"method": self.method, "poles": [p.to_dict() for p in self.poles],
                "warnings": list(self.warnings), "details": jsonable(self.details)}
