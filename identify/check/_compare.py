"""Match poles of two results by frequency and test whether each moved.

Notes
-----
Each interval is read back as a normal-theory interval: its standard error is
``se = (upper - lower) / (2·z)``, with ``z`` the two-sided normal quantile of its level.
For a matched pair the difference ``d = new - saved`` has ``se_d = √(se_saved² + se_new²)``
(the two records are independent), and ``z_d = d / se_d`` is compared with the normal
quantile of the saved result's confidence level: ``|z_d| > z`` (equivalently
``p = 2(1 - Φ(|z_d|)) < 1 - level``) means the pole moved more than the intervals explain.
This is the usual two-sample z-test on independent estimates (common practice, no source).
Each quantity of each pole is tested on its own: with several poles some flags at the
chosen level are to be expected by chance alone.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

from .._validate import check_confidence, check_positive
from ..poles import Pole, normal_quantile

__all__ = ["PoleChange", "QuantityChange", "compare_poles", "standard_error"]

MATCHED = "matched"
MISSING = "not found in the new record"
APPEARED = "new in this record"


def standard_error(interval, level: float) -> float | None:
    """Standard error implied by a two-sided normal interval ``(lower, upper)`` at ``level``."""
    if interval is None:
        return None
    lo, hi = float(interval[0]), float(interval[1])
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return None
    return (hi - lo) / (2.0 * normal_quantile(level))


@dataclass(frozen=True)
class QuantityChange:
    """How one quantity of one pole moved.

    Parameters
    ----------
    name : str
        ``"natural_frequency_hz"`` or ``"damping_ratio"``.
    saved, new : float
        The two estimates.
    saved_ci, new_ci : tuple or None
        Their intervals.
    change : float
        ``new - saved``.
    change_percent : float or None
        ``100·(new - saved)/saved``.
    z : float or None
        ``change / √(se_saved² + se_new²)``; None when neither estimate has an interval.
    p_value : float or None
        Two-sided normal p-value of ``z``.
    moved : bool or None
        True when ``p_value < 1 - level``; None when untestable.
    """

    name: str
    saved: float
    new: float
    saved_ci: tuple | None
    new_ci: tuple | None
    change: float
    change_percent: float | None
    z: float | None
    p_value: float | None
    moved: bool | None

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({"name": self.name, "saved": self.saved, "new": self.new,
                         "saved_ci": None if self.saved_ci is None else list(self.saved_ci),
                         "new_ci": None if self.new_ci is None else list(self.new_ci),
                         "change": self.change, "change_percent": self.change_percent,
                         "z": self.z, "p_value": self.p_value, "moved": self.moved})


@dataclass(frozen=True)
class PoleChange:
    """One saved pole and its counterpart in the new record.

    ``status`` is ``"matched"``, ``"not found in the new record"`` (``new`` is None) or
    ``"new in this record"`` (``saved`` is None).  ``moved`` is True when any tested
    quantity moved more than the intervals explain.
    """

    status: str
    saved: Pole | None
    new: Pole | None
    quantities: tuple
    moved: bool | None
    level: float

    @property
    def summary(self) -> str:
        """One line in words."""
        if self.status != MATCHED:
            pole = self.saved or self.new
            return f"{pole.natural_frequency_hz:.5g} Hz: {self.status}"
        parts = []
        for q in self.quantities:
            unit = " Hz" if q.name.endswith("_hz") else ""
            pct = f" ({q.change_percent:+.2f} %)" if q.change_percent is not None else ""
            flag = ("moved more than the intervals explain" if q.moved else
                    "within what the intervals explain" if q.moved is not None else
                    "no interval to judge by")
            parts.append(f"{q.name} {q.saved:.5g} → {q.new:.5g}{unit}{pct}: {flag}")
        return "; ".join(parts)

    def to_dict(self) -> dict:
        return {"status": self.status,
                "saved": None if self.saved is None else self.saved.to_dict(),
                "new": None if self.new is None else self.new.to_dict(),
                "quantities": [q.to_dict() for q in self.quantities],
                "moved": self.moved, "level": self.level, "summary": self.summary}


def _quantity(name, saved: Pole, new: Pole, level: float) -> QuantityChange:
    a, b = getattr(saved, name), getattr(new, name)
    ci_a = getattr(saved.ci, name) if saved.ci is not None else None
    ci_b = getattr(new.ci, name) if new.ci is not None else None
    se_a = standard_error(ci_a, saved.ci.level) if ci_a is not None else None
    se_b = standard_error(ci_b, new.ci.level) if ci_b is not None else None
    change = b - a
    pct = 100.0 * change / a if a else None
    z = p = moved = None
    if se_a is not None or se_b is not None:
        se = math.hypot(se_a or 0.0, se_b or 0.0)
        if se > 0:
            z = change / se
        elif change == 0:
            z = 0.0
        else:
            z = math.copysign(math.inf, change)
        p = 2.0 * (1.0 - NormalDist().cdf(abs(z))) if math.isfinite(z) else 0.0
        moved = bool(p < 1.0 - level)
    return QuantityChange(name, float(a), float(b), None if ci_a is None else tuple(ci_a),
                          None if ci_b is None else tuple(ci_b), float(change), pct, z, p, moved)


def compare_poles(saved_poles, new_poles, *, confidence: float | None = None,
                  match_tolerance: float = 0.2) -> tuple:
    """Pair saved and new poles by natural frequency and test how each moved.

    Parameters
    ----------
    saved_poles, new_poles : sequence of Pole (or ``Pole.to_dict()`` dicts)
    confidence : float, optional
        Level of the test; default the saved poles' interval level (else 0.95).
    match_tolerance : float, default=0.2
        Largest relative frequency difference ``|fn_new - fn_saved| / fn_saved`` for two
        poles to be called the same mode; pairs are made closest first, one to one.

    Returns
    -------
    tuple of PoleChange
        Matched pairs in the saved order, then saved poles not found, then new poles.
        Complex pairs are tested on natural frequency and damping ratio; real poles on
        natural frequency (= decay rate / 2π) only, their damping ratio being 1 by
        definition.
    """
    saved = [p if isinstance(p, Pole) else Pole.from_dict(p) for p in saved_poles]
    new = [p if isinstance(p, Pole) else Pole.from_dict(p) for p in new_poles]
    tol = check_positive("match_tolerance", match_tolerance)
    if confidence is None:
        level = next((p.ci.level for p in saved if p.ci is not None), 0.95)
    else:
        level = check_confidence(confidence)
    candidates = []
    for i, a in enumerate(saved):
        for j, b in enumerate(new):
            if a.is_real != b.is_real:
                continue
            fa = a.natural_frequency_hz
            rel = abs(b.natural_frequency_hz - fa) / fa if fa > 0 else math.inf
            if rel <= tol:
                candidates.append((rel, i, j))
    pairs, used_a, used_b = {}, set(), set()
    for rel, i, j in sorted(candidates):
        if i in used_a or j in used_b:
            continue
        pairs[i] = j
        used_a.add(i)
        used_b.add(j)
    out = []
    for i, a in enumerate(saved):
        if i not in pairs:
            continue
        b = new[pairs[i]]
        names = ("natural_frequency_hz",) if a.is_real else ("natural_frequency_hz", "damping_ratio")
        qs = tuple(_quantity(n, a, b, level) for n in names)
        tested = [q.moved for q in qs if q.moved is not None]
        moved = any(tested) if tested else None
        out.append(PoleChange(MATCHED, a, b, qs, moved, level))
    out += [PoleChange(MISSING, a, None, (), None, level) for i, a in enumerate(saved) if i not in pairs]
    out += [PoleChange(APPEARED, None, b, (), None, level) for j, b in enumerate(new) if j not in used_b]
    return tuple(out)
