"""Check a saved result against a new record: :func:`check_against` → :class:`CheckResult`."""
from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

from .._errors import ParameterTypeError, RecordError
from ._compare import APPEARED, MISSING, compare_poles
from ._jobs import job_of_saved, run_job

__all__ = ["CheckResult", "check_against", "load_saved_result", "RECORD_SPECIFIC"]

#: Saved settings that describe the old record rather than the analysis (the sample rate
#: it was read at); they are not carried over to a new record unless given again.
RECORD_SPECIFIC = frozenset({"sample_rate_hz"})


@dataclass(frozen=True)
class CheckResult:
    """A saved result re-run on a new record, and how each pole moved.

    Parameters
    ----------
    source : str
        The new record.
    sha256 : str
        SHA-256 of the new record.
    saved_source : str
        The record the saved result came from.
    job : str
        ``"decay"``, ``"step"`` or ``"arx"``.
    changes : tuple of identify.check.PoleChange
        Matched poles with their moves and tests; saved poles not found; new poles.
    moved : bool
        True when any matched pole moved more than the intervals explain, or a saved
        pole was not found.
    result : job result
        The job re-run on the new record with the saved settings.
    validation : identify.validation.Validation or None
        The new model checked against the new record.
    confidence : float
        Level of the tests.
    warnings : tuple of str
        The new result's warnings, then the check's own.
    settings : dict
        The settings the job was re-run with.
    """

    source: str
    sha256: str
    saved_source: str
    job: str
    changes: tuple
    moved: bool
    result: object
    validation: object
    confidence: float
    warnings: tuple
    settings: dict

    @property
    def poles(self):
        return tuple(getattr(self.result, "poles", ()) or ())

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({
            "source": self.source, "sha256": self.sha256, "saved_source": self.saved_source,
            "job": self.job, "moved": self.moved, "confidence": self.confidence,
            "changes": [c.to_dict() for c in self.changes],
            "validation": None if self.validation is None else self.validation.to_dict(),
            "result": self.result, "warnings": list(self.warnings), "settings": self.settings,
        })


def load_saved_result(path) -> dict:
    """Read a saved result: a JSON file holding one result object (``--json`` output)."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise RecordError(f"cannot read the saved result: {exc.strerror or exc}", str(p)) from None
    lines = [ln for ln in text.splitlines() if ln.strip()]
    try:
        if len(lines) > 1 and all(ln.lstrip().startswith("{") for ln in lines):
            try:
                data = json.loads(text)
            except json.JSONDecodeError:
                objs = [json.loads(ln) for ln in lines]
                good = [o for o in objs if "error" not in o]
                if len(good) != 1:
                    raise RecordError(f"the saved result file holds {len(good)} results; "
                                      "give a file with exactly one", str(p)) from None
                data = good[0]
        else:
            data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise RecordError(f"the saved result is not valid JSON (line {exc.lineno}: {exc.msg})",
                          str(p)) from None
    if not isinstance(data, dict) or "poles" not in data:
        raise RecordError("the saved result is not a poleprint result (no 'poles')", str(p))
    if "error" in data:
        raise RecordError(f"the saved result is an error line: {data['error']}", str(p))
    return data


def check_against(saved_result, record_or_path, *, job=None, confidence=None,
                  match_tolerance: float = 0.2, **job_options) -> CheckResult:
    """Re-run a saved result's job on a new record and report how each pole moved.

    Parameters
    ----------
    saved_result : dict or path
        A result's ``to_dict()`` (as written by ``--json``), or the JSON file holding it.
    record_or_path : identify.Record or path
        Today's record.
    job : {"decay", "step", "arx"}, optional
        Default: the saved result's ``job`` key, else told from its fields.
    confidence : float, optional
        Level of the move tests; default the saved intervals' level.
    match_tolerance : float, default=0.2
        Largest relative frequency difference for two poles to be the same mode.
    **job_options
        Override saved settings (e.g. ``column="accel"``).

    Returns
    -------
    CheckResult

    Notes
    -----
    The job is re-run with the saved settings (overridden by ``job_options``; the old
    record's sample rate is not carried over), so the
    new poles come with intervals made the same way.  Poles are paired by natural
    frequency, and each pair is tested with a two-sample z-test on the difference using
    both intervals' standard errors (see :func:`identify.check.compare_poles`).
    """
    from ..validation import validate

    if isinstance(saved_result, (str, Path)):
        saved_result = load_saved_result(saved_result)
    if not isinstance(saved_result, dict):
        raise ParameterTypeError("saved_result must be a result dict (to_dict() output) or a "
                                 f"path to its JSON file; got {type(saved_result).__name__}")
    job = job or job_of_saved(saved_result)
    settings = {k: v for k, v in dict(saved_result.get("settings") or {}).items()
                if k not in RECORD_SPECIFIC}
    settings.update({k: v for k, v in job_options.items() if v is not None})
    result = run_job(job, record_or_path, **settings)
    changes = compare_poles(saved_result.get("poles") or [], getattr(result, "poles", ()) or (),
                            confidence=confidence, match_tolerance=match_tolerance)
    level = changes[0].level if changes else (confidence or 0.95)
    warnings = list(getattr(result, "warnings", ()) or ())
    for c in changes:
        if c.status == MISSING:
            warnings.append(f"pole missing: the saved pole at {c.saved.natural_frequency_hz:.5g} Hz "
                            "has no counterpart in this record")
        elif c.status == APPEARED:
            warnings.append(f"pole appeared: {c.new.natural_frequency_hz:.5g} Hz has no "
                            "counterpart in the saved result")
        elif c.moved:
            warnings.append(f"pole moved: {c.summary}")
    validation = None
    response = getattr(result, "response", None)
    if response is not None:
        validation = validate(response, confidence=level)
    moved = any(c.moved for c in changes) or any(c.status == MISSING for c in changes)
    return CheckResult(
        source=str(getattr(result, "source", record_or_path)),
        sha256=str(getattr(result, "sha256", "")),
        saved_source=str(saved_result.get("source", "")), job=job, changes=changes,
        moved=bool(moved), result=result, validation=validation, confidence=float(level),
        warnings=tuple(warnings), settings=settings)
