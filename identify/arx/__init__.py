"""Input/output identification by least-squares ARX (and output-only autoregression).

    analyse_arx      the whole job on a record or CSV file → :class:`ArxResult`
    ArxResult        poles with intervals, model, order search, validation, warnings
    fit_arx          array-level least-squares ARX fit with poles and intervals → :class:`ArxFit`
    ArxFit           one fitted model: coefficients, covariance, poles, zeros, DC gain
    refine_iv        instrumental-variable refinement of an :class:`ArxFit`
    search_orders    information-criterion table over orders and delays (common sample)
    simulate         simulation of an ARX model from its input (not one-step prediction)

See docs/arx.md for the method, equations, assumptions and warnings.
"""
from __future__ import annotations

from ._analyse import analyse_arx
from ._fit import ArxFit, fit_arx
from ._iv import refine_iv
from ._orders import search_orders
from ._result import ArxResult
from ._simulate import simulate

__all__ = ["analyse_arx", "ArxResult", "fit_arx", "ArxFit", "refine_iv", "search_orders", "simulate"]
