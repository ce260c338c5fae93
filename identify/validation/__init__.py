"""Goodness of fit and validation of models against records."""
from ._metrics import fit_percent, r_squared, rms

__all__ = ["fit_percent", "r_squared", "rms"]
