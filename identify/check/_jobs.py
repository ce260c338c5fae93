"""Run a job by name with options (used by ``check``, ``report`` and ``demo``)."""
from __future__ import annotations

import importlib
import inspect

from .._errors import ParameterValueError
from .._validate import check_choice

__all__ = ["JOBS", "run_job", "job_of_saved", "accepted_options"]

#: job name -> (module, function)
JOBS = {
    "decay": ("identify.decay", "analyse_decay"),
    "step": ("identify.step", "analyse_step"),
    "arx": ("identify.arx", "analyse_arx"),
}


def _function(job: str):
    job = check_choice("job", job, tuple(JOBS))
    module, name = JOBS[job]
    try:
        return getattr(importlib.import_module(module), name)
    except (ImportError, AttributeError):
        raise ParameterValueError(f"the {job} job is not available in this installation "
                                  f"({module}.{name} not found)") from None


def accepted_options(func, options: dict) -> dict:
    """Keep the options ``func`` accepts by name (all of them if it takes ``**kwargs``)."""
    params = inspect.signature(func).parameters
    if any(p.kind is inspect.Parameter.VAR_KEYWORD for p in params.values()):
        return dict(options)
    names = {n for n, p in params.items()
             if p.kind in (inspect.Parameter.KEYWORD_ONLY, inspect.Parameter.POSITIONAL_OR_KEYWORD)}
    return {k: v for k, v in options.items() if k in names}


def run_job(job: str, source, **options):
    """Run ``analyse_<job>(source, **options)``, dropping options the job does not take.

    ``source`` is a path or a :class:`identify.Record`; options set to None are left out so
    the job's defaults apply.
    """
    func = _function(job)
    opts = accepted_options(func, {k: v for k, v in options.items() if v is not None})
    first = next(iter(inspect.signature(func).parameters))
    opts.pop(first, None)
    return func(source, **opts)


def job_of_saved(saved: dict) -> str:
    """The job that produced a saved result dict (its ``job`` key, else its fields)."""
    job = saved.get("job")
    if isinstance(job, str) and job in JOBS:
        return job
    if "methods" in saved or "segment" in saved:
        return "decay"
    if "metrics" in saved or "tuning" in saved:
        return "step"
    if "order_search" in saved or "validation" in saved:
        return "arx"
    model = saved.get("model")
    if isinstance(model, dict) and "na" in model:
        return "arx"
    if isinstance(model, dict) and "structure" in model:
        return "step"
    raise ParameterValueError("cannot tell which job produced the saved result "
                              "(no 'job' key and no job-specific fields); give job=")
