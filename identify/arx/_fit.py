"""Array-level ARX fit: :func:`fit_arx` and its result :class:`ArxFit`."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._errors import IdentificationError, ParameterValueError
from .._validate import check_array_1d, check_confidence, check_int, check_positive

__all__ = ["ArxFit", "fit_arx", "check_signals"]


@dataclass(frozen=True)
class ArxFit:
    """One ARX estimate in physical units.

    Parameters
    ----------
    na, nb, delay_samples : int
        Orders of A and B and the input delay nk (samples).
    a : numpy.ndarray
        ``[1, a1, ..., a_na]``: A(q) as a polynomial in q⁻¹.
    b : numpy.ndarray
        ``[b1, ..., b_nb]``: the coefficients of ``u(t-nk) ... u(t-nk-nb+1)``.
    constant : float or None
        The fitted constant ``c`` (``None`` when none was fitted).
    theta, cov : numpy.ndarray
        ``[a1..a_na, b1..b_nb, (c)]`` and its covariance.
    residuals : numpy.ndarray
        Equation errors ``y(t) - φ(t)ᵀθ`` on the rows used.
    sigma2 : float
        Residual variance ``RSS/(N - p)``.
    loss : float
        ``RSS/N``.
    rows : int
        Number of equations N.
    first_row : int
        Index of the sample of the first equation.
    sample_time_s : float
    poles : tuple of identify.poles.Pole
        Continuous poles ``s = ln z / Ts`` with delta-method intervals.
    discrete_poles : numpy.ndarray
        The matching discrete poles (``Im z >= 0``).
    zeros : numpy.ndarray
        Discrete zeros of B (delay zeros at the origin omitted).
    dc_gain : float
        ``B(1)/A(1)`` (``nan`` without input).
    dc_gain_ci : identify.poles.Interval or None
    confidence : float
    method : str
        ``"least squares"`` or ``"instrumental variables"``.
    """

    na: int
    nb: int
    delay_samples: int
    a: np.ndarray
    b: np.ndarray
    constant: float | None
    theta: np.ndarray
    cov: np.ndarray
    residuals: np.ndarray
    sigma2: float
    loss: float
    rows: int
    first_row: int
    sample_time_s: float
    poles: tuple
    discrete_poles: np.ndarray
    zeros: np.ndarray
    dc_gain: float
    dc_gain_ci: object
    confidence: float
    method: str = "least squares"

    @property
    def parameters(self) -> int:
        return int(self.theta.size)

    @property
    def standard_errors(self) -> np.ndarray:
        return np.sqrt(np.clip(np.diag(self.cov), 0.0, None))

    @property
    def cov_a(self) -> np.ndarray:
        return self.cov[: self.na, : self.na]

    def to_dict(self) -> dict:
        """The public ``model`` shape (see docs/json-contract.md, "ARX job")."""
        from .._jsonable import jsonable
        from ._simulate import numerator

        se = self.standard_errors
        return jsonable({
            "na": self.na, "nb": self.nb, "delay_samples": self.delay_samples,
            "delay_s": self.delay_samples * self.sample_time_s,
            "a": self.a.tolist(), "b": numerator(self.b, self.delay_samples).tolist() if self.nb else [],
            "a_std": [0.0] + se[: self.na].tolist(),
            "b_std": ([0.0] * self.delay_samples + se[self.na: self.na + self.nb].tolist()) if self.nb else [],
            "constant": self.constant,
            "sample_time_s": self.sample_time_s,
            "dc_gain": self.dc_gain,
            "dc_gain_ci": None if self.dc_gain_ci is None else self.dc_gain_ci.as_list(),
            "noise_std": float(np.sqrt(self.sigma2)),
            "samples_used": self.rows,
            "parameters": self.parameters,
            "method": self.method,
            "discrete_poles": [[z.real, z.imag] for z in self.discrete_poles],
            "zeros": [[z.real, z.imag] for z in self.zeros],
        })


def check_signals(y, u, na, nb, delay):
    """Validate signals and orders; return ``(y, u, na, nb, delay)`` as arrays and ints.

    Raises the errors every ARX entry point shares: input and output of different
    lengths, a constant input or output, a bad order.
    """
    y = check_array_1d("output", y, min_length=3)
    na = check_int("na", na, minimum=0)
    delay = check_int("delay", delay, minimum=0)
    if u is None:
        if nb:
            raise ParameterValueError(f"without an input the model is an autoregression: nb must be 0; got {nb!r}")
        nb = 0
    else:
        u = check_array_1d("input", u, min_length=3)
        if u.size != y.size:
            raise ParameterValueError(
                f"input and output differ in length: {u.size} and {y.size} samples")
        nb = check_int("nb", nb, minimum=1)
        if np.ptp(u) == 0:
            raise IdentificationError(
                f"the input is constant (every sample is {u[0]:g}): it excites nothing; "
                "give a varying input, or none for an output-only autoregression")
    if np.ptp(y) == 0:
        raise IdentificationError(f"the output is constant (every sample is {y[0]:g}): there is nothing to fit")
    if na + nb == 0:
        raise ParameterValueError("na and nb are both 0: the model has no dynamics to estimate")
    return y, u, na, nb, delay


def fit_arx(y, u=None, na: int = 2, nb: int = 0, delay: int = 1, sample_time_s: float = 1.0,
            confidence: float = 0.95, *, constant: bool = False, start: int | None = None) -> ArxFit:
    """Fit ``A(q) y = B(q) u + e`` by least squares, with poles and intervals.

    Parameters
    ----------
    y : array_like
        Output samples.
    u : array_like, optional
        Input samples, the same length as ``y``; ``None`` (with ``nb=0``) fits a pure
        autoregression.
    na, nb : int
        Orders of A and B.
    delay : int, default=1
        Input delay nk in samples (``b1`` multiplies ``u(t-nk)``).
    sample_time_s : float, default=1.0
        Ts, for the continuous poles ``s = ln z / Ts``.
    confidence : float, default=0.95
        Confidence level of the pole and gain intervals.
    constant : bool, default=False
        Fit a constant ``c`` (otherwise centre the data first).
    start : int, optional
        First equation row (default: the first with every lag available); a common
        start lets different orders be compared on the same sample.

    Returns
    -------
    ArxFit

    Raises
    ------
    ParameterValueError
        Input and output of different lengths, bad orders.
    IdentificationError
        A constant input or output, more parameters than samples, dependent regressors.

    Notes
    -----
    ``θ = [a1..a_na, b1..b_nb, (c)]`` minimises ``Σ (y(t) - φ(t)ᵀθ)²`` with
    ``φ(t) = [-y(t-1).. -y(t-na), u(t-nk).. u(t-nk-nb+1), (1)]``; its covariance is
    ``s²(ΦᵀΦ)⁻¹``, ``s² = RSS/(N-p)``.  Consistent when e is white (equation error);
    biased when the noise enters at the output (use :func:`refine_iv`).
    Poles: roots of ``z^na + a1 z^(na-1) + ... + a_na``; ``s = ln z / Ts``.

    References
    ----------
    Ljung, L., *System Identification: Theory for the User*, 2nd ed., 1999, §4.2, §7.3, §9.3.
    Söderström, T. and Stoica, P., *System Identification*, 1989, ch. 4.
    Guillaume, P., Schoukens, J., Pintelon, R. and Kollár, I., IEEE Trans. Instrum. Meas.
    38(6), 1989 (root sensitivity for the pole intervals).
    """
    from ._lsq import least_squares
    from ._regressors import max_lag, regressors

    y, u, na, nb, delay = check_signals(y, u, na, nb, delay)
    ts = check_positive("sample_time_s", sample_time_s)
    level = check_confidence(confidence)
    first = max_lag(na, nb, delay) if start is None else max(int(start), max_lag(na, nb, delay))
    p = na + nb + (1 if constant else 0)
    if y.size - first <= p:
        raise IdentificationError(
            f"the model has {p} parameters but only {max(y.size - first, 0)} usable samples "
            f"(record of {y.size} samples, {first} needed as history); lower the orders or give a longer record")
    phi, target = regressors(y, u, na, nb, delay, start=first, constant=constant)
    ls = least_squares(phi, target)
    return assemble_fit(ls.theta, ls.cov, ls.residuals, ls.sigma2, ls.loss, ls.rows, first,
                        na, nb, delay, ts, level, constant, "least squares")


def assemble_fit(theta, cov, residuals, sigma2, loss, rows, first, na, nb, delay, ts, level,
                 constant, method) -> ArxFit:
    """Poles, zeros and gain from θ and its covariance (shared by LS and IV)."""
    from ._poles import continuous_poles, dc_gain, model_zeros

    theta = np.asarray(theta, dtype=float)
    a = np.concatenate([[1.0], theta[:na]])
    b = theta[na: na + nb].copy()
    poles, discrete = continuous_poles(a, cov[:na, :na], ts, level) if na else ((), np.empty(0, complex))
    if nb:
        gain, gain_ci = dc_gain(a, b, cov[: na + nb, : na + nb], level)
        zeros = model_zeros(b)
    else:
        gain, gain_ci, zeros = float("nan"), None, np.empty(0, dtype=complex)
    return ArxFit(na=na, nb=nb, delay_samples=delay, a=a, b=b,
                  constant=float(theta[-1]) if constant else None, theta=theta, cov=cov,
                  residuals=np.asarray(residuals, dtype=float), sigma2=float(sigma2), loss=float(loss),
                  rows=int(rows), first_row=int(first), sample_time_s=ts, poles=poles,
                  discrete_poles=discrete, zeros=zeros, dc_gain=gain, dc_gain_ci=gain_ci,
                  confidence=level, method=method)
