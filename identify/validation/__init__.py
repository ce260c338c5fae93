"""Goodness of fit and validation of models against records.

    validate        compare a job's ModelResponse with its record → Validation
    Validation      fit percent, R², residual vs noise RMS, Ljung–Box, hold-out, verdict
    fit_percent     NRMSE fit in percent (100 exact, 0 for the mean as the model)
    r_squared       coefficient of determination
    rms             root mean square
"""
from ._metrics import fit_percent, r_squared, rms
from ._validate import Validation, validate

__all__ = ["fit_percent", "r_squared", "rms", "validate", "Validation"]
