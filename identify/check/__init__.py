"""Check a saved result against a new record: how each pole moved, with intervals.

    check_against     re-run the saved job on a new record and compare poles → CheckResult
    compare_poles     pair poles by frequency; z-test each move with both intervals
    CheckResult, PoleChange, QuantityChange
    load_saved_result read a result saved with --json
"""
from ._check import CheckResult, check_against, load_saved_result
from ._compare import PoleChange, QuantityChange, compare_poles, standard_error
from ._jobs import run_job

__all__ = ["check_against", "compare_poles", "CheckResult", "PoleChange", "QuantityChange",
           "load_saved_result", "standard_error", "run_job"]
