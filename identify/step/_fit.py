"""Least-squares fits of the step-test structures: dead-time grid, then lmfit refinement.

For each structure the dead time is searched over whole samples first (the cost is flat
between samples for a naive shift and has many local minima in θ), with the offset and
gain solved linearly and the shape parameters (lags or ωn, ζ) optimised for every
candidate shift (variable projection).  The best grid point seeds an lmfit fit of all
parameters, the dead time now continuous (sub-sample, exact by the modified
z-transform in :mod:`._models`).  Information criteria use ``N ln(RSS/N)``:

    AICc = N ln(RSS/N) + 2p + 2p(p+1)/(N-p-1)      (Hurvich & Tsai 1989)
    BIC  = N ln(RSS/N) + p ln N                     (Schwarz 1978)

and residual whiteness is tested with Ljung & Box (1978) via statsmodels.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._models import SHAPE_PARAMETERS, STRUCTURES, unit_response

__all__ = ["CandidateFit", "FitSetup", "fit_structure", "refit", "ljung_box_p", "information_criteria"]

#: Ljung–Box lags: min(10, N/5).  Common practice, no source.
LJUNG_BOX_MAX_LAGS = 10


@dataclass(frozen=True)
class FitSetup:
    """The data a fit needs (all arrays on the analysed part of the record)."""

    y: np.ndarray          # measured output
    u_dev: np.ndarray      # input minus its pre-step level
    sample_time_s: float
    mask: np.ndarray       # samples that enter the cost (False where the output is missing)
    dead_time_max_s: float
    time_constant_max_s: float
    frequency_min_rad_per_s: float

    def __post_init__(self):
        from ._models import input_increments

        object.__setattr__(self, "increments", input_increments(self.u_dev))
        object.__setattr__(self, "all_samples", bool(np.all(self.mask)))

    @property
    def samples(self) -> int:
        return int(np.count_nonzero(self.mask))




@dataclass(frozen=True)
class CandidateFit:
    """One structure fitted to the record.

    ``values`` holds every parameter (``offset``, ``gain``, ``dead_time_s`` and the
    shape parameters of the structure); ``names`` the order of ``covariance``.
    ``degenerate`` says why the structure collapses into a simpler one (None if not).
    """

    structure: str
    values: dict
    names: tuple
    covariance: np.ndarray | None
    rss: float
    samples: int
    parameter_count: int
    aicc: float
    bic: float
    ljung_box_p: float
    fit_percent: float
    residual_rms: float
    fitted: np.ndarray
    degenerate: str | None

    def stderr(self, name: str) -> float:
        if self.covariance is None or name not in self.names:
            return float("nan")
        i = self.names.index(name)
        return float(math.sqrt(max(self.covariance[i, i], 0.0)))

    def to_row(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({"structure": self.structure, "parameters": dict(self.values),
                         "aicc": self.aicc, "bic": self.bic, "fit_percent": self.fit_percent,
                         "residual_rms": self.residual_rms, "ljung_box_p": self.ljung_box_p,
                         "parameter_count": self.parameter_count, "degenerate": self.degenerate})


def information_criteria(rss: float, n: int, p: int) -> tuple:
    """``(AICc, BIC)`` from the residual sum of squares (Hurvich & Tsai 1989; Schwarz 1978)."""
    v = max(rss / n, 1e-300)
    aic = n * math.log(v) + 2 * p
    aicc = aic + (2 * p * (p + 1) / (n - p - 1) if n - p - 1 > 0 else float("inf"))
    return aicc, n * math.log(v) + p * math.log(n)


def ljung_box_p(residual) -> float:
    """Ljung–Box p-value of the residuals at ``L = min(10, N/5)`` lags.

    Q = N(N+2) Σ_{k=1..L} r_k² / (N - k), compared with χ²(L) (Ljung & Box 1978).  The
    autocorrelations come from statsmodels' ``acf`` with FFT, so long records stay fast;
    the value equals statsmodels' ``acorr_ljungbox`` (checked in the tests).
    """
    from scipy.stats import chi2
    from statsmodels.tsa.stattools import acf

    r = np.asarray(residual, dtype=float)
    lags = int(min(LJUNG_BOX_MAX_LAGS, max(1, r.size // 5)))
    if r.size < 8 or np.std(r) == 0:
        return float("nan")
    n = r.size
    rho = acf(r, nlags=lags, fft=True)[1:lags + 1]
    q = n * (n + 2) * float(np.sum(rho ** 2 / (n - np.arange(1, lags + 1))))
    return float(chi2.sf(q, lags))


# -- shape parametrisation for the grid stage (unbounded, so MINPACK's LM can run) ---------
_ZETA_LO, _ZETA_HI = 0.02, 0.995


def _logistic(x):
    return 1.0 / (1.0 + math.exp(-min(max(x, -40.0), 40.0)))


def _logit(p):
    p = min(max(p, 1e-6), 1 - 1e-6)
    return math.log(p / (1 - p))


def _to_shape(structure, x, setup=None):
    lo = math.log(setup.sample_time_s / 20.0) if setup is not None else -50.0
    hi = math.log(setup.time_constant_max_s) if setup is not None else 50.0
    if structure == "first-order":
        return (math.exp(min(max(x[0], lo), hi)),)
    if structure == "two-lag":
        t1 = math.exp(min(max(x[0], lo), hi))
        return (t1, t1 * max(_logistic(x[1]), 1e-4))
    if structure == "underdamped":
        wlo = math.log(setup.frequency_min_rad_per_s) if setup is not None else -50.0
        whi = math.log(math.pi / setup.sample_time_s) if setup is not None else 50.0
        return (math.exp(min(max(x[0], wlo), whi)), _ZETA_LO + (_ZETA_HI - _ZETA_LO) * _logistic(x[1]))
    return ()


def _from_shape(structure, shape):
    if structure == "first-order":
        return np.array([math.log(shape[0])])
    if structure == "two-lag":
        t1, t2 = max(shape), min(shape)
        return np.array([math.log(t1), _logit(t2 / t1)])
    if structure == "underdamped":
        return np.array([math.log(shape[0]), _logit((shape[1] - _ZETA_LO) / (_ZETA_HI - _ZETA_LO))])
    return np.zeros(0)


def _linear_solve(unit, setup):
    """Offset and gain by linear least squares (2×2 normal equations) for a unit response."""
    m = setup.mask
    x = unit[m] if not setup.all_samples else unit
    y = setup.y[m] if not setup.all_samples else setup.y
    n = x.size
    sx, sy = float(x.sum()), float(y.sum())
    xc = x - sx / n
    sxx = float(xc @ xc)
    gain = float(xc @ (y - sy / n)) / sxx if sxx > 0 else 0.0
    offset = (sy - gain * sx) / n
    return offset, gain, y - offset - gain * x


def _profile(structure, x, theta, setup):
    unit = unit_response(structure, _to_shape(structure, x, setup), theta, setup.u_dev, setup.sample_time_s,
                         setup.increments)
    return _linear_solve(unit, setup)


def _grid_point(structure, k, x0, setup):
    """Best shape for a dead time of k samples: (cost, x)."""
    from scipy.optimize import least_squares

    theta = k * setup.sample_time_s
    x0 = np.asarray(x0, dtype=float)
    if structure == "integrating":
        r = _profile(structure, x0, theta, setup)[2]
        return float(r @ r), x0
    if x0.size == 1:  # one shape parameter: Brent's method on the profiled cost
        from scipy.optimize import minimize_scalar

        def cost(v):
            r = _profile(structure, np.array([v]), theta, setup)[2]
            return float(r @ r)
        lo = math.log(setup.sample_time_s / 20.0)
        hi = math.log(setup.time_constant_max_s)
        a, b = max(lo, x0[0] - 2.5), min(hi, x0[0] + 2.5)
        sol = minimize_scalar(cost, bounds=(a, b), method="bounded", options={"xatol": 1e-4})
        return float(sol.fun), np.array([sol.x])
    sol = least_squares(lambda x: _profile(structure, x, theta, setup)[2], x0, method="lm",
                        xtol=1e-6, ftol=1e-8, max_nfev=100 * x0.size)
    x = sol.x
    r = _profile(structure, x, theta, setup)[2]
    return float(r @ r), x


def _grid_search(structure, setup, seed_theta_s, starts):
    """Whole-sample dead-time search.

    A coarse grid over 0 … θmax with the shape held at each seed (offset and gain
    solved linearly) picks the three most promising shifts; the shape is optimised at
    each of them, and then halving steps around the best with the shape re-optimised
    end on a whole-sample local minimum.
    """
    ts = setup.sample_time_s
    kmax = max(int(setup.dead_time_max_s / ts), 0)
    kseed = int(min(max(round(seed_theta_s / ts), 0), kmax)) if math.isfinite(seed_theta_s) else 0
    step = max(1, kmax // 16)
    coarse = {}
    for k in sorted(set(range(0, kmax + 1, step)) | {kseed, kmax}):
        for i, x0 in enumerate(starts):
            r = _profile(structure, x0, k * ts, setup)[2]
            cost = float(r @ r)
            if k not in coarse or cost < coarse[k][0]:
                coarse[k] = (cost, np.asarray(x0, dtype=float))
    memo = {}

    def evaluate(k, x0):
        if k in memo or k < 0 or k > kmax:
            return
        memo[k] = _grid_point(structure, k, x0, setup)

    for k in sorted(coarse, key=lambda k: coarse[k][0])[:3]:
        evaluate(k, coarse[k][1])
    kb = min(memo, key=lambda k: memo[k][0])
    while True:
        step = max(1, step // 2)
        for k in (kb - step, kb + step):
            evaluate(k, memo[kb][1])
        new = min(memo, key=lambda k: memo[k][0])
        if new == kb and step == 1:
            break
        kb = new
    return kb, memo[kb][1]


#: records longer than this are decimated (every m-th sample) for the dead-time grid only;
#: the lmfit refinement always uses every sample
GRID_MAX_SAMPLES = 1500


def _decimated(setup):
    """A coarser copy of the data for the grid stage of a long record (every m-th sample)."""
    n = setup.y.size
    m = int(math.ceil(n / GRID_MAX_SAMPLES))
    if m <= 1:
        return setup
    return FitSetup(y=setup.y[::m], u_dev=setup.u_dev[::m], sample_time_s=setup.sample_time_s * m,
                    mask=setup.mask[::m], dead_time_max_s=setup.dead_time_max_s,
                    time_constant_max_s=setup.time_constant_max_s,
                    frequency_min_rad_per_s=setup.frequency_min_rad_per_s)


def _lmfit_parameters(structure, values, setup):
    import lmfit

    p = lmfit.Parameters()
    span = float(np.ptp(setup.y[setup.mask])) or 1.0
    p.add("offset", value=values["offset"])
    p.add("gain", value=values["gain"] if values["gain"] != 0 else 1e-6 * span)
    p.add("dead_time_s", value=min(max(values["dead_time_s"], 0.0), setup.dead_time_max_s),
          min=0.0, max=max(setup.dead_time_max_s, 1e-12))
    ts = setup.sample_time_s
    if structure == "first-order":
        p.add("time_constant_s", value=values["time_constant_s"], min=ts / 50.0,
              max=2.0 * setup.time_constant_max_s)
    elif structure == "two-lag":
        p.add("time_constant_1_s", value=values["time_constant_1_s"], min=ts / 50.0,
              max=2.0 * setup.time_constant_max_s)
        p.add("time_constant_2_s", value=values["time_constant_2_s"], min=ts / 50.0,
              max=2.0 * setup.time_constant_max_s)
    elif structure == "underdamped":
        p.add("natural_frequency_rad_per_s", value=values["natural_frequency_rad_per_s"],
              min=0.5 * setup.frequency_min_rad_per_s, max=math.pi / ts)
        p.add("damping_ratio", value=values["damping_ratio"], min=0.005, max=0.999)
    return p


def _residual_function(structure, setup, y=None):
    yy = setup.y if y is None else y
    m = setup.mask
    names = SHAPE_PARAMETERS[structure]

    def residual(params):
        v = params.valuesdict()
        shape = tuple(v[n] for n in names)
        unit = unit_response(structure, shape, v["dead_time_s"], setup.u_dev, setup.sample_time_s,
                             setup.increments)
        return (yy - (v["offset"] + v["gain"] * unit))[m]
    return residual


def refit(structure, values, setup, y=None):
    """lmfit refinement of all parameters from ``values``; returns the lmfit result."""
    import lmfit

    params = _lmfit_parameters(structure, values, setup)
    return lmfit.minimize(_residual_function(structure, setup, y), params, method="leastsq",
                          nan_policy="raise")


def _ordered(structure, values, names, cov):
    """Put the dominant lag first for two-lag fits (swapping covariance rows)."""
    if structure != "two-lag" or values["time_constant_1_s"] >= values["time_constant_2_s"]:
        return values, cov
    v = dict(values)
    v["time_constant_1_s"], v["time_constant_2_s"] = values["time_constant_2_s"], values["time_constant_1_s"]
    if cov is not None:
        i, j = names.index("time_constant_1_s"), names.index("time_constant_2_s")
        perm = list(range(len(names)))
        perm[i], perm[j] = j, i
        cov = cov[np.ix_(perm, perm)]
    return v, cov


def _degenerate(structure, values, setup):
    ts = setup.sample_time_s
    if structure == "first-order" and values["time_constant_s"] >= 0.5 * setup.time_constant_max_s:
        return "time constant far beyond the record: the response looks integrating"
    if structure == "two-lag":
        t1, t2 = values["time_constant_1_s"], values["time_constant_2_s"]
        if t2 < max(0.5 * ts, 0.02 * t1):
            return "second lag negligible: the same as first order"
        if t1 >= 0.5 * setup.time_constant_max_s:
            return "first lag far beyond the record: the response looks integrating"
    if structure == "underdamped" and values["damping_ratio"] >= 0.95:
        return "damping ratio at its limit: no oscillation seen"
    return None


def fit_structure(structure: str, setup: FitSetup, *, seed_theta_s: float, seed_tau_s: float,
                  seed_frequency_rad_per_s: float | None = None, seed_damping: float | None = None) -> CandidateFit:
    """Fit one structure: dead-time grid search, then lmfit refinement.

    Seeds come from the two-point estimates (and from the overshoot for the underdamped
    structure).  Returns a :class:`CandidateFit` with the covariance of every parameter
    (lmfit's, scaled by the residual variance).
    """
    from ..validation._metrics import fit_percent, rms

    if structure not in STRUCTURES:
        raise ValueError(f"unknown structure {structure!r}")
    ts = setup.sample_time_s
    tau = seed_tau_s if (math.isfinite(seed_tau_s) and seed_tau_s > ts / 10) else max(10 * ts, 1e-3)
    tau = min(tau, 0.5 * setup.time_constant_max_s)
    if structure == "first-order":
        starts = [_from_shape(structure, (tau,))]
    elif structure == "two-lag":
        starts = [_from_shape(structure, (0.8 * tau, 0.25 * tau)), _from_shape(structure, (0.55 * tau, 0.45 * tau))]
    elif structure == "underdamped":
        wn = seed_frequency_rad_per_s if seed_frequency_rad_per_s else 1.5 / tau
        wn = float(np.clip(wn, setup.frequency_min_rad_per_s * 1.01, 0.99 * math.pi / ts))
        zeta = seed_damping if seed_damping else 0.5
        starts = [_from_shape(structure, (wn, zeta))]
        if seed_damping is None:
            starts.append(_from_shape(structure, (wn, 0.2)))
    else:
        starts = [np.zeros(0)]
    grid_setup = _decimated(setup)
    k, x = _grid_search(structure, grid_setup, seed_theta_s if math.isfinite(seed_theta_s) else 0.0, starts)
    theta = k * grid_setup.sample_time_s
    offset, gain, _ = _profile(structure, x, theta, setup)
    values = {"offset": offset, "gain": gain, "dead_time_s": theta}
    values.update(dict(zip(SHAPE_PARAMETERS[structure], _to_shape(structure, x, setup))))
    result = refit(structure, values, setup)
    if result.success or np.isfinite(result.chisqr):
        new = {name: float(result.params[name].value) for name in values}
    else:
        new = values
    names = tuple(result.var_names)
    cov = None if result.covar is None else np.array(result.covar, dtype=float)
    new, cov = _ordered(structure, new, names, cov)
    shape = tuple(new[n] for n in SHAPE_PARAMETERS[structure])
    fitted = new["offset"] + new["gain"] * unit_response(structure, shape, new["dead_time_s"], setup.u_dev, ts,
                                                         setup.increments)
    resid = (setup.y - fitted)[setup.mask]
    rss = float(resid @ resid)
    n = setup.samples
    p = 3 + len(SHAPE_PARAMETERS[structure])
    aicc, bic = information_criteria(rss, n, p)
    return CandidateFit(
        structure=structure, values=new, names=names, covariance=cov, rss=rss, samples=n,
        parameter_count=p, aicc=aicc, bic=bic, ljung_box_p=ljung_box_p(resid),
        fit_percent=fit_percent(setup.y[setup.mask], fitted[setup.mask]),
        residual_rms=rms(resid), fitted=fitted, degenerate=_degenerate(structure, new, setup))


def dead_time_profile_interval(fit: CandidateFit, setup: FitSetup, level: float) -> tuple:
    """Profile-likelihood interval of the dead time (for an estimate at or near zero).

    The dead time is fixed at trial values and every other parameter refitted; the
    interval holds the values whose RSS stays within ``RSS_min + χ²₁(level)·s²``
    (s² = RSS_min/(N - p)), found by doubling steps and bisection.  Used when the
    delta interval would cross the bound θ = 0, where the normal approximation fails.
    """
    import lmfit
    from scipy.stats import chi2

    ts = setup.sample_time_s
    s2 = fit.rss / max(fit.samples - fit.parameter_count, 1)
    limit = fit.rss + float(chi2.ppf(level, 1)) * s2
    theta_hat = fit.values["dead_time_s"]
    residual = _residual_function(fit.structure, setup)

    def rss_at(theta):
        params = _lmfit_parameters(fit.structure, dict(fit.values, dead_time_s=theta), setup)
        params["dead_time_s"].set(value=theta, vary=False)
        res = lmfit.minimize(residual, params, method="leastsq")
        return float(res.chisqr)

    def bisect(inside, outside):
        for _ in range(30):
            if abs(outside - inside) <= 1e-3 * ts:
                break
            mid = 0.5 * (inside + outside)
            if rss_at(mid) <= limit:
                inside = mid
            else:
                outside = mid
        return 0.5 * (inside + outside)

    lower = 0.0 if theta_hat <= 0 or rss_at(0.0) <= limit else bisect(theta_hat, 0.0)
    step = max(fit.stderr("dead_time_s"), 0.5 * ts) if math.isfinite(fit.stderr("dead_time_s")) else 0.5 * ts
    hi = theta_hat + step
    while rss_at(hi) <= limit and hi < setup.dead_time_max_s:
        step *= 2.0
        hi = min(theta_hat + step, setup.dead_time_max_s)
    upper = bisect(theta_hat, hi) if hi < setup.dead_time_max_s or rss_at(hi) > limit else hi
    return lower, upper
