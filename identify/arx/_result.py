"""What the ARX job returns: :class:`ArxResult`."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["ArxResult", "CAUTION", "CONTRACT_VERSION", "ORDER_SEARCH_ROWS"]

#: Shown under every text report and carried in the JSON.
CAUTION = ("estimates, not clearances: the poles and intervals describe this record under the "
           "model's assumptions; defer to the site's procedures, local codes and licensed engineers")

#: Version of the ARX job's JSON shape (docs/json-contract.md, "ARX job").
CONTRACT_VERSION = 1

#: Rows of the order-search table written to JSON (best first); the count of all
#: candidates is given beside them.
ORDER_SEARCH_ROWS = 25


@dataclass(frozen=True)
class ArxResult:
    """Result of :func:`analyse_arx` for one record.

    Parameters
    ----------
    source : str
        File (or ``"<array>"``) the record came from.
    sha256 : str
        SHA-256 of the source.
    poles : tuple of identify.poles.Pole
        Continuous poles ``s = ln z / Ts`` (rad/s) with delta-method intervals, sorted by
        natural frequency.
    discrete_poles : tuple of complex
        The matching discrete poles z (``Im z >= 0``).
    zeros : tuple of complex
        Discrete zeros of B (delay zeros at the origin omitted).
    model : ArxFit
        The final fit (least squares, or instrumental variables with ``refine="iv"``):
        orders, delay, coefficients and their covariance, DC gain and its interval.
    order_search : tuple of dict
        Every candidate tried, best first (``na``, ``nb``, ``delay_samples``,
        ``parameters``, ``loss``, ``aic``, ``aicc``, ``bic``, ``fpe``, ``selected``);
        empty when both orders and delay were given.
    order_scan : tuple of dict
        ``{"order": n, "poles": [[re, im], ...]}`` per order (rad/s), for a pole-stability
        plot across orders.
    validation : dict
        ``method`` (``"simulation"`` or ``"one-step prediction"`` for an
        autoregression), ``fit_percent`` on the hold-out part, ``fit_percent_estimation``,
        ``holdout_fraction``, ``holdout_samples``, ``holdout_start_s``,
        ``estimation_samples``.
    residual_tests : dict
        ``whiteness`` (Ljung–Box), ``input_correlation`` (residual–input
        cross-correlation, input only), ``noise_bias`` (least squares against
        instrumental variables, input only) and ``residuals`` (which residuals were tested).
    least_squares : ArxFit or None
        The least-squares fit the refinement started from (``refine="iv"`` only).
    warnings : tuple of str
        One-line warnings, each ``"key: text"``.
    settings : dict
        Options as used, with the decimation factor and analysed sample time.
    response : identify._response.ModelResponse
        Measured output against the simulated model output on the analysed time base,
        with the input and ``holdout_start_s``.
    """

    source: str
    sha256: str
    poles: tuple
    discrete_poles: tuple
    zeros: tuple
    model: object
    order_search: tuple
    order_scan: tuple
    validation: dict
    residual_tests: dict
    least_squares: object
    warnings: tuple
    settings: dict
    response: object = field(repr=False, default=None)

    @property
    def job(self) -> str:
        return "arx"

    @property
    def caution(self) -> str:
        return CAUTION

    def to_dict(self) -> dict:
        """JSON-safe dictionary (see docs/json-contract.md, "ARX job")."""
        from .._jsonable import jsonable

        return jsonable({
            "job": "arx",
            "contract_version": CONTRACT_VERSION,
            "source": self.source,
            "sha256": self.sha256,
            "poles": [p.to_dict() for p in self.poles],
            "model": self.model.to_dict(),
            "order_search": list(self.order_search[:ORDER_SEARCH_ROWS]),
            "order_search_candidates": len(self.order_search),
            "order_scan": list(self.order_scan),
            "validation": dict(self.validation),
            "residual_tests": dict(self.residual_tests),
            "least_squares_poles": (None if self.least_squares is None
                                    else [p.to_dict() for p in self.least_squares.poles]),
            "warnings": list(self.warnings),
            "settings": dict(self.settings),
            "response": None if self.response is None else self.response.to_dict(),
            "caution": CAUTION,
        })

    def summary(self) -> str:
        """Plain-text report: model, poles with intervals, gain, validation, warnings."""
        from ._text import render_text

        return render_text(self)

    def __repr__(self) -> str:
        m = self.model
        return (f"ArxResult(source={self.source!r}, na={m.na}, nb={m.nb}, delay_samples={m.delay_samples}, "
                f"poles={len(self.poles)}, fit_percent={self.validation.get('fit_percent')!r})")


def as_complex_tuple(values) -> tuple:
    return tuple(complex(v) for v in np.asarray(values, dtype=complex).ravel())
