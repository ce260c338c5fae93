"""Validate a fitted model against its record: :func:`validate` → :class:`Validation`.

Every job (decay, step, ARX) carries a :class:`identify._response.ModelResponse`: the
model simulated back on the record's own time base.  This module turns it into the
numbers that say whether the model reproduces the record, and a verdict in words.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .._errors import ParameterTypeError, ParameterValueError
from .._validate import check_confidence, check_int, check_nonnegative
from ._metrics import fit_percent, r_squared, rms

__all__ = ["Validation", "validate", "EXPLAINS", "STRUCTURE_LEFT", "RATIO_LIMIT"]

EXPLAINS = "the model explains the record"
STRUCTURE_LEFT = "structure left in the residuals"

#: Residual RMS above this multiple of the noise estimate means the model misses part of
#: the signal (common practice, no source: a well-fitted model leaves the noise, ratio ≈ 1).
RATIO_LIMIT = 1.5

#: Fewest residual samples for which a whiteness test is reported.
MIN_SAMPLES_WHITENESS = 8


@dataclass(frozen=True)
class Validation:
    """How well a model reproduces its record.

    Parameters
    ----------
    samples : int
        Number of samples compared.
    fit_percent : float
        NRMSE fit ``100·(1 - ‖y - ŷ‖ / ‖y - ȳ‖)`` over all samples, in percent.
    r_squared : float
        Coefficient of determination ``1 - SS_res / SS_tot``.
    residual_rms : float
        RMS of ``y - ŷ``, in the record's unit.
    noise_rms : float or None
        The job's estimate of the measurement noise RMS, in the record's unit, if given.
    residual_to_noise : float or None
        ``residual_rms / noise_rms`` (≈ 1 when the model leaves only the noise).
    ljung_box_lags : int or None
        Number of autocorrelation lags pooled in the Ljung–Box statistic.
    ljung_box_statistic : float or None
        Ljung–Box Q statistic of the residuals.
    ljung_box_p_value : float or None
        Its p-value (small: the residuals are not white).
    holdout_start_s : float or None
        Start of the held-out part, in seconds.
    holdout_samples : int
        Samples in the held-out part (0 when none).
    holdout_fit_percent : float or None
        NRMSE fit on the held-out part only, in percent.
    confidence : float
        Level at which the whiteness test is judged (p < 1 - confidence fails it).
    unit : str
        Unit of the residual and noise RMS.
    verdict : str
        ``"the model explains the record"`` or ``"structure left in the residuals"``.
    reasons : tuple of str
        Why the verdict is what it is, one line each.
    """

    samples: int
    fit_percent: float
    r_squared: float
    residual_rms: float
    noise_rms: float | None
    residual_to_noise: float | None
    ljung_box_lags: int | None
    ljung_box_statistic: float | None
    ljung_box_p_value: float | None
    holdout_start_s: float | None
    holdout_samples: int
    holdout_fit_percent: float | None
    confidence: float
    unit: str
    verdict: str
    reasons: tuple = field(default_factory=tuple)

    @property
    def explains_record(self) -> bool:
        """True when the verdict is that the model explains the record."""
        return self.verdict == EXPLAINS

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({
            "samples": self.samples,
            "fit_percent": self.fit_percent,
            "r_squared": self.r_squared,
            "residual_rms": self.residual_rms,
            "noise_rms": self.noise_rms,
            "residual_to_noise": self.residual_to_noise,
            "ljung_box": {"lags": self.ljung_box_lags, "statistic": self.ljung_box_statistic,
                          "p_value": self.ljung_box_p_value},
            "holdout": {"start_s": self.holdout_start_s, "samples": self.holdout_samples,
                        "fit_percent": self.holdout_fit_percent},
            "confidence": self.confidence,
            "unit": self.unit,
            "verdict": self.verdict,
            "reasons": list(self.reasons),
        })


def default_lags(samples: int) -> int:
    """Ljung–Box lags: ``min(10, N // 5)``, at least 1 (common practice, no source)."""
    return max(1, min(10, int(samples) // 5))


def ljung_box(residual, lags: int):
    """Ljung–Box Q statistic and p-value at ``lags`` (statsmodels ``acorr_ljungbox``).

    Notes
    -----
    ``Q = N(N+2) Σ_{k=1..h} r_k² / (N - k)``, compared with χ² on ``h`` degrees of
    freedom, where ``r_k`` is the lag-k sample autocorrelation of the residuals.

    References
    ----------
    Ljung, G. M. & Box, G. E. P. (1978). On a measure of lack of fit in time series
    models. Biometrika 65(2), 297–303.
    """
    from statsmodels.stats.diagnostic import acorr_ljungbox

    table = acorr_ljungbox(np.asarray(residual, dtype=float), lags=[int(lags)], return_df=True)
    return float(table["lb_stat"].iloc[-1]), float(table["lb_pvalue"].iloc[-1])


def _optional_float(value):
    if value is None:
        return None
    return float(value)


def validate(response, *, noise_rms=None, holdout_start_s=None, lags=None,
             confidence: float = 0.95) -> Validation:
    """Compare a model's simulated response with the measured record.

    Parameters
    ----------
    response : identify._response.ModelResponse
        Measured output and the model simulated on the same time base (any object with
        ``time_s``, ``measured`` and ``model`` arrays; ``unit`` and ``holdout_start_s``
        are read when present).
    noise_rms : float, optional
        The measurement-noise RMS estimated by the job, in the record's unit.  When
        given, the residual RMS is compared with it.
    holdout_start_s : float, optional
        Start of a held-out part (samples not used to fit).  Default: the response's
        own ``holdout_start_s``.
    lags : int, optional
        Lags of the Ljung–Box test; default ``min(10, N // 5)``.
    confidence : float, default=0.95
        The whiteness test fails when its p-value is below ``1 - confidence``.

    Returns
    -------
    Validation

    Notes
    -----
    Fit percent is the NRMSE fit ``100·(1 - ‖y - ŷ‖ / ‖y - ȳ‖)`` (100 % for an exact
    model, 0 % for the mean as the model, negative when worse than the mean);
    ``R² = 1 - Σ(y - ŷ)² / Σ(y - ȳ)²``.  The verdict is "structure left in the
    residuals" when the Ljung–Box test rejects whiteness at ``1 - confidence``, or when
    the residual RMS exceeds 1.5 times the noise estimate; otherwise "the model
    explains the record".

    References
    ----------
    Ljung, L. (1999). System Identification: Theory for the User, 2nd ed., ch. 16
    (model validation, residual analysis).  Ljung & Box (1978), Biometrika 65(2).
    """
    level = check_confidence(confidence)
    for name in ("time_s", "measured", "model"):
        if not hasattr(response, name):
            raise ParameterTypeError(
                f"response must have time_s, measured and model arrays (a ModelResponse); "
                f"got {type(response).__name__} without {name!r}")
    t = np.asarray(response.time_s, dtype=float)
    y = np.asarray(response.measured, dtype=float)
    yh = np.asarray(response.model, dtype=float)
    if not (t.size == y.size == yh.size):
        raise ParameterValueError(
            f"time_s, measured and model differ in length: {t.size}, {y.size}, {yh.size}")
    if y.size < 3:
        raise ParameterValueError(f"validation needs at least 3 samples; got {y.size}")
    finite = np.isfinite(y) & np.isfinite(yh) & np.isfinite(t)
    t, y, yh = t[finite], y[finite], yh[finite]
    if y.size < 3:
        raise ParameterValueError("validation needs at least 3 samples with finite values")
    noise = check_nonnegative("noise_rms", noise_rms, allow_none=True)
    if holdout_start_s is None:
        holdout_start_s = getattr(response, "holdout_start_s", None)
    holdout_start_s = _optional_float(holdout_start_s)
    residual = y - yh
    reasons = []

    res_rms = rms(residual)
    ratio = None
    if noise is not None and noise > 0:
        ratio = res_rms / noise
        if ratio > RATIO_LIMIT:
            reasons.append(f"residual RMS is {ratio:.2g} times the noise estimate "
                           f"(above {RATIO_LIMIT:g}): part of the signal is not modelled")

    n_lags = lb_stat = lb_p = None
    if residual.size >= MIN_SAMPLES_WHITENESS and np.ptp(residual) > 0:
        n_lags = default_lags(residual.size) if lags is None else check_int(
            "lags", lags, minimum=1, maximum=residual.size - 1)
        lb_stat, lb_p = ljung_box(residual, n_lags)
        if math.isfinite(lb_p) and lb_p < 1.0 - level:
            reasons.append(f"residuals are not white: Ljung-Box p = {lb_p:.2g} at {n_lags} lags "
                           f"(below {1.0 - level:.2g})")
    elif residual.size >= MIN_SAMPLES_WHITENESS:
        reasons.append("residuals are exactly constant: whiteness not tested")
    else:
        reasons.append(f"only {residual.size} samples: whiteness not tested")

    hold_n, hold_fit = 0, None
    if holdout_start_s is not None:
        part = t >= holdout_start_s
        hold_n = int(part.sum())
        if hold_n >= 3:
            hold_fit = fit_percent(y[part], yh[part])

    structure = any(r.startswith(("residual RMS", "residuals are not")) for r in reasons)
    verdict = STRUCTURE_LEFT if structure else EXPLAINS
    if not structure:
        reasons.append("residuals look like noise: no structure found by the tests made")
    return Validation(
        samples=int(y.size), fit_percent=fit_percent(y, yh), r_squared=r_squared(y, yh),
        residual_rms=res_rms, noise_rms=noise, residual_to_noise=ratio,
        ljung_box_lags=n_lags, ljung_box_statistic=lb_stat, ljung_box_p_value=lb_p,
        holdout_start_s=holdout_start_s, holdout_samples=hold_n, holdout_fit_percent=hold_fit,
        confidence=level, unit=str(getattr(response, "unit", "") or ""), verdict=verdict,
        reasons=tuple(reasons))
