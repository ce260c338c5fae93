"""Trend of each tracked mode over time: slopes with intervals, step changes, projections.

For each mode the damping ratio ζ (and the decay rate σ = −Re s and the natural
frequency fn) of every test is regressed on the test time in days by weighted least
squares.  Each test's weight is ``1 / (s_i² + τ²)``: ``s_i`` is the standard error of
that test's estimate (from its interval) and ``τ²`` the extra scatter between tests
(temperature, amplitude, mounting...) that the per-test intervals do not show,
estimated by the Paule–Mandel method.  The slope interval uses the Knapp–Hartung
scale and a Student t quantile with n − 2 degrees of freedom.

A single step change (for instance after a repair or a loosened joint) is tested for
with a sup-F statistic over every split into two segments (same slope, different
levels), its p-value from seeded Monte Carlo simulation of the straight-line model.
The date at which the fitted ζ reaches the threshold is projected with a Fieller
(inverse-regression) interval; it is **indicative only**.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone

import numpy as np

from .._validate import (check_confidence, check_fraction, check_int, check_nonnegative,
                         check_positive)
from ..poles import GROWING, normal_quantile

__all__ = ["LineFit", "ModeTrend", "TrendResult", "analyse_trend", "fit_line", "step_change_test",
           "CAUTIONS", "LEVELS"]

#: the plain-words levels, from most to least urgent
LEVELS = ("growing", "at or below the threshold", "approaching the threshold", "declining",
          "steady", "increasing", "too few tests", "real pole")

#: printed with every trend
CAUTIONS = (
    "indicative only: projected dates extrapolate the fitted straight line; damping need not "
    "keep changing at the same rate",
    "compare like with like: temperature, excitation amplitude and configuration move damping "
    "too; filter tests by tags (e.g. --tag temperature=20C)",
    "estimates, not clearances: defer to the site's procedures, local codes and licensed "
    "engineers for any decision",
)

_SECONDS_PER_DAY = 86400.0


def _t_quantile(confidence: float, dof: int) -> float:
    from scipy.special import stdtrit  # Student t inverse CDF (lighter than scipy.stats)

    return float(stdtrit(dof, 0.5 + confidence / 2.0))


@dataclass(frozen=True)
class LineFit:
    """Weighted straight line ``y = intercept + slope_per_day · t`` (t in days from the origin).

    Parameters
    ----------
    intercept, slope_per_day : float
        Coefficients.
    covariance : tuple
        ``((v_aa, v_ab), (v_ab, v_bb))`` of (intercept, slope), Knapp–Hartung scaled.
    dof : int
        Degrees of freedom n − 2.
    t_quantile : float
        Student t quantile for the two-sided ``confidence``.
    confidence : float
        Level of the intervals.
    between_test_sd : float
        τ, the scatter between tests beyond the per-test intervals (Paule–Mandel).
    weights : tuple
        ``1 / (s_i² + τ²)`` of each point.
    """

    intercept: float
    slope_per_day: float
    covariance: tuple
    dof: int
    t_quantile: float
    confidence: float
    between_test_sd: float
    weights: tuple = ()

    @property
    def slope_ci(self) -> tuple:
        half = self.t_quantile * math.sqrt(max(self.covariance[1][1], 0.0))
        return (self.slope_per_day - half, self.slope_per_day + half)

    def mean_at(self, days):
        """Fitted value and its interval at ``days``: ``(value, lower, upper)`` arrays."""
        d = np.asarray(days, dtype=float)
        (vaa, vab), (_, vbb) = self.covariance
        value = self.intercept + self.slope_per_day * d
        half = self.t_quantile * np.sqrt(np.maximum(vaa + 2 * d * vab + d * d * vbb, 0.0))
        return value, value - half, value + half

    def crossing(self, level: float):
        """Days at which the line reaches ``level`` and the Fieller interval, or ``None``.

        ``None`` when the slope's interval includes zero (the interval is then unbounded).
        """
        (vaa, vab), (_, vbb) = self.covariance
        a, b, q2 = self.intercept - level, self.slope_per_day, self.t_quantile ** 2
        qa = b * b - q2 * vbb
        if not (qa > 0) or b == 0:
            return None
        qb = 2.0 * (a * b - q2 * vab)
        qc = a * a - q2 * vaa
        disc = qb * qb - 4 * qa * qc
        if disc < 0:  # cannot happen when qa > 0 (the point estimate satisfies the inequality)
            return None
        root = math.sqrt(disc)
        lo, hi = (-qb - root) / (2 * qa), (-qb + root) / (2 * qa)
        return -a / b, (min(lo, hi), max(lo, hi))

    def to_dict(self) -> dict:
        return {"intercept": self.intercept, "slope_per_day": self.slope_per_day,
                "slope_ci": list(self.slope_ci), "covariance": [list(r) for r in self.covariance],
                "dof": self.dof, "confidence": self.confidence,
                "between_test_sd": self.between_test_sd}


def fit_line(days, values, standard_errors=None, *, confidence: float = 0.95) -> LineFit:
    """Weighted least-squares line with between-test scatter (Paule–Mandel, Knapp–Hartung).

    Parameters
    ----------
    days : array_like
        Times in days from an origin.
    values : array_like
        Observations (ζ, σ or fn).
    standard_errors : array_like, optional
        Per-observation standard errors ``s_i`` (NaN or missing → 0, i.e. only τ).
    confidence : float, default=0.95
        Level of the slope interval.

    Notes
    -----
    With ``w_i = 1/(s_i² + τ²)`` and ``β̂ = (XᵀWX)⁻¹XᵀWy``, ``τ² >= 0`` solves
    ``Σ w_i (y_i − x_iβ̂)² = n − 2`` (Paule & Mandel 1982), or is 0 when the left side is
    already below ``n − 2`` at ``τ² = 0``.  ``Cov β̂ = max(1, Q/(n−2))·(XᵀWX)⁻¹`` with ``Q``
    the weighted residual sum (Knapp & Hartung 2003, truncated form), and intervals use
    ``t_{n−2}``.

    References
    ----------
    Paule, R. C. and Mandel, J. (1982). Consensus values and weighting factors. J. Res.
    Natl. Bur. Stand. 87(5), 377–385.
    Knapp, G. and Hartung, J. (2003). Improved tests for a random effects
    meta-regression with a single covariate. Statistics in Medicine 22, 2693–2710.
    """
    level = check_confidence(confidence)
    t = np.asarray(days, dtype=float)
    y = np.asarray(values, dtype=float)
    if t.size < 3:
        raise ValueError("a trend needs at least 3 tests")
    X = np.column_stack([np.ones(t.size), t])
    tau2, w, cov, dof = _paule_mandel(X, y, standard_errors)
    beta = _beta(X, y, w)
    return LineFit(float(beta[0]), float(beta[1]),
                   ((float(cov[0, 0]), float(cov[0, 1])), (float(cov[1, 0]), float(cov[1, 1]))),
                   dof, _t_quantile(level, dof), level, math.sqrt(tau2), tuple(float(v) for v in w))


def _beta(X, y, w):
    return np.linalg.solve(X.T @ (w[:, None] * X), X.T @ (w * y))


def _paule_mandel(X, y, standard_errors):
    """τ², weights, Knapp–Hartung covariance and dof of a weighted linear model."""
    n, p = X.shape
    dof = n - p
    s = np.zeros(n) if standard_errors is None else np.nan_to_num(np.asarray(standard_errors, float), nan=0.0)
    s2 = np.square(s)

    def solve(tau2):
        w = 1.0 / (s2 + tau2)
        xtwx = X.T @ (w[:, None] * X)
        beta = np.linalg.solve(xtwx, X.T @ (w * y))
        r = y - X @ beta
        return w, xtwx, float(np.sum(w * r * r))

    beta_ols, *_ = np.linalg.lstsq(X, y, rcond=None)
    rss_ols = float(np.sum((y - X @ beta_ols) ** 2))
    positive = bool(np.all(s2 > 0))
    if positive and solve(0.0)[2] <= dof:
        tau2 = 0.0
    elif rss_ols <= 0 and not np.any(s2 > 0):  # an exact line and no stated errors
        return 0.0, np.ones(n), np.zeros((p, p)), dof
    elif rss_ols <= 0:
        tau2 = float(np.max(s2)) * 1e-12
    else:
        lo, hi = 0.0, rss_ols
        while solve(hi)[2] > dof:  # Q(τ²) <= RSS_ols/τ², so this stops at once or soon
            hi *= 2.0
        if not positive:
            lo = hi * 1e-12
        for _ in range(80):
            mid = 0.5 * (lo + hi)
            if solve(mid)[2] > dof:
                lo = mid
            else:
                hi = mid
            if hi - lo <= 1e-10 * hi:
                break
        tau2 = hi
    w, xtwx, q = solve(tau2)
    cov = np.linalg.inv(xtwx) * max(1.0, q / dof)
    return tau2, w, cov, dof


def _residual_maker(Xw):
    q, _ = np.linalg.qr(Xw)
    return np.eye(Xw.shape[0]) - q @ q.T


def step_change_test(days, values, weights, *, standard_errors=None, min_segment: int = 3,
                     n_simulations: int = 999, seed: int = 0, confidence: float = 0.95) -> dict:
    """Test a straight line against a line with one level shift (sup-F, Monte Carlo p-value).

    Parameters
    ----------
    days, values : array_like
        Times (days) and observations, in time order.
    weights : array_like
        Weights ``1/(s_i² + τ²)`` from :func:`fit_line` (the straight-line model).
    standard_errors : array_like, optional
        Per-test standard errors ``s_i``; the step size's interval re-estimates τ² under
        the step model with them (Paule–Mandel, Knapp–Hartung).
    min_segment : int, default=3
        Fewest tests on each side of a step.
    n_simulations : int, default=999
        Monte Carlo draws of the null distribution (seeded).
    seed : int, default=0
        Seed of ``numpy.random.default_rng``.
    confidence : float, default=0.95
        Level of the interval on the step size.

    Returns
    -------
    dict
        ``tested`` (bool), ``p_value``, ``statistic`` (sup F), ``index`` (first test after
        the step), ``size`` and ``size_ci`` (level shift, same unit as ``values``).

    Notes
    -----
    For each split k, ``F_k = (RSS₀ − RSS_k) / (RSS_k / (n − 3))`` on the whitened data
    ``√w·y``; the statistic is ``max_k F_k`` (Andrews 1993).  Under the straight-line model
    with Gaussian errors the whitened residuals are exchangeable N(0, σ²) draws and the
    statistic does not depend on the line or on σ, so its null distribution is simulated
    exactly (given the weights) from standard normal vectors;
    ``p = (1 + #{F* >= F}) / (B + 1)``.  The size interval is conditional on the chosen
    split, so it is optimistic.

    References
    ----------
    Andrews, D. W. K. (1993). Tests for parameter instability and structural change with
    unknown change point. Econometrica 61(4), 821–856.
    """
    t = np.asarray(days, dtype=float)
    y = np.asarray(values, dtype=float)
    w = np.asarray(weights, dtype=float)
    n = t.size
    m = check_int("min_segment", min_segment, minimum=1)
    b = check_int("n_simulations", n_simulations, minimum=19)
    if n < 2 * m or n - 3 < 1:
        return {"tested": False, "reason": f"needs at least {max(2 * m, 4)} tests", "p_value": None,
                "statistic": None, "index": None, "size": None, "size_ci": None}
    sw = np.sqrt(w)
    X0 = sw[:, None] * np.column_stack([np.ones(n), t])
    yw = sw * y
    M0 = _residual_maker(X0)
    splits = list(range(m, n - m + 1))
    makers = []
    for k in splits:
        step = (np.arange(n) >= k).astype(float)
        makers.append(_residual_maker(np.column_stack([X0, sw * step])))

    def sup_f(Y):
        rss0 = np.sum((M0 @ Y) ** 2, axis=0)
        stats = []
        for M in makers:
            rss1 = np.sum((M @ Y) ** 2, axis=0)
            stats.append((rss0 - rss1) / np.maximum(rss1 / (n - 3), 1e-300))
        stats = np.array(stats)
        return stats.max(axis=0), stats.argmax(axis=0)

    observed, where = sup_f(yw[:, None])
    observed, k_best = float(observed[0]), splits[int(where[0])]
    rng = np.random.default_rng(seed)
    sims, _ = sup_f(rng.standard_normal((n, b)))
    p_value = float((1 + np.sum(sims >= observed)) / (b + 1))
    step = (np.arange(n) >= k_best).astype(float)
    X1 = np.column_stack([np.ones(n), t, step])
    _, w1, cov1, dof1 = _paule_mandel(X1, y, standard_errors)
    size = float(_beta(X1, y, w1)[2])
    half = _t_quantile(check_confidence(confidence), dof1) * math.sqrt(max(cov1[2, 2], 0.0))
    return {"tested": True, "p_value": p_value, "statistic": observed, "index": int(k_best),
            "size": size, "size_ci": [size - half, size + half]}


def _se_from_interval(interval, level) -> float:
    if interval is None:
        return float("nan")
    lo, hi = float(interval[0]), float(interval[1])
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return float("nan")
    return 0.5 * (hi - lo) / normal_quantile(level)


def _date(origin: datetime, days: float) -> str:
    return (origin + timedelta(days=float(days))).date().isoformat()


def _interval_dict(value, ci, level) -> dict | None:
    if value is None or not math.isfinite(value):
        return None
    return {"value": float(value), "ci": [float(ci[0]), float(ci[1])], "level": level}


@dataclass(frozen=True)
class ModeTrend:
    """The trend of one tracked mode.

    Parameters
    ----------
    mode : str
        Label from mode tracking (``"mode 1"``...).
    natural_frequency_hz : float
        Weighted mean natural frequency over the tests.
    oscillatory : bool
        Complex pair (true) or real pole.
    test_ids, test_times : tuple
        The tests where the mode was found (ISO-8601 UTC times).
    days : tuple of float
        Test times in days from the trend's origin.
    damping_ratio, damping_ratio_ci : tuple
        ζ of each test and its interval ``(lower, upper)`` (``None`` when unknown).
    damping_fit, decay_rate_fit, frequency_fit : LineFit or None
        Straight lines for ζ, σ = −Re s (1/s) and fn (Hz); ``None`` with fewer than 3 tests.
    level : str
        One of :data:`LEVELS`.
    threshold_crossing : dict or None
        ``{"date", "ci": [date, date], "days_after_last_test", "label": "indicative"}``.
    step_change : dict
        Result of :func:`step_change_test` plus ``detected`` and the dates around the step.
    latest_verdict : str
        The pole verdict of the latest test (``"decaying"``, ``"growing"``...).
    """

    mode: str
    natural_frequency_hz: float
    oscillatory: bool
    test_ids: tuple
    test_times: tuple
    days: tuple
    damping_ratio: tuple
    damping_ratio_ci: tuple
    damping_fit: LineFit | None
    decay_rate_fit: LineFit | None
    frequency_fit: LineFit | None
    level: str
    threshold_crossing: dict | None
    step_change: dict
    latest_verdict: str

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        def slope(fit):
            return None if fit is None else _interval_dict(fit.slope_per_day, fit.slope_ci, fit.confidence)

        return jsonable({
            "mode": self.mode,
            "natural_frequency_hz": self.natural_frequency_hz,
            "oscillatory": self.oscillatory,
            "n_tests": len(self.test_ids),
            "first_test_time": self.test_times[0] if self.test_times else None,
            "last_test_time": self.test_times[-1] if self.test_times else None,
            "latest_damping_ratio": self.damping_ratio[-1] if self.damping_ratio else None,
            "latest_verdict": self.latest_verdict,
            "damping_ratio_slope_per_day": slope(self.damping_fit),
            "decay_rate_slope_per_s_per_day": slope(self.decay_rate_fit),
            "natural_frequency_slope_hz_per_day": slope(self.frequency_fit),
            "between_test_sd_damping_ratio": None if self.damping_fit is None else self.damping_fit.between_test_sd,
            "level": self.level,
            "threshold_crossing": self.threshold_crossing,
            "step_change": self.step_change,
            "points": [{"test_id": i, "test_time": tt, "damping_ratio": z,
                        "damping_ratio_ci": None if ci is None else list(ci)}
                       for i, tt, z, ci in zip(self.test_ids, self.test_times, self.damping_ratio,
                                               self.damping_ratio_ci)],
        })


@dataclass(frozen=True)
class TrendResult:
    """Per-mode trends of one rig's history.

    Parameters
    ----------
    rig : str
        Rig name (may be empty when unknown).
    origin_time : str
        ISO-8601 UTC time of the first test: ``days`` count from here.
    threshold_damping : float
        Damping ratio whose projected crossing is reported.
    confidence : float
        Level of every interval.
    modes : tuple of ModeTrend
    events : tuple of str
        Modes that appeared, were missing or disappeared.
    n_tests : int
        Tests used (after the tag filter).
    cautions : tuple of str
        Printed with every trend (:data:`CAUTIONS`).
    warnings : tuple of str
        One-line warnings (mixed tags, test times taken from file dates...).
    settings : dict
        Options used.
    """

    rig: str
    origin_time: str
    threshold_damping: float
    confidence: float
    modes: tuple
    events: tuple
    n_tests: int
    cautions: tuple = CAUTIONS
    warnings: tuple = ()
    settings: dict = field(default_factory=dict)

    @property
    def origin(self) -> datetime:
        return datetime.fromisoformat(self.origin_time)

    @property
    def principal_modes(self) -> tuple:
        """Modes found in at least half of the tests (and in 3 or more).

        Sporadic modes (a job's spurious poles, or a mode excited only sometimes) stay in
        :attr:`modes` and in the events; tables and plots show these principal ones
        first.  When no mode qualifies, every mode with a trend line is returned.
        """
        need = max(3, math.ceil(self.n_tests / 2))
        chosen = tuple(m for m in self.modes if len(m.test_ids) >= need)
        return chosen or tuple(m for m in self.modes if m.damping_fit is not None or m.decay_rate_fit is not None)

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        principal = {m.mode for m in self.principal_modes}
        return {"rig": self.rig, "origin_time": self.origin_time,
                "threshold_damping": self.threshold_damping, "confidence": self.confidence,
                "n_tests": self.n_tests,
                "modes": [{**m.to_dict(), "principal": m.mode in principal} for m in self.modes],
                "events": list(self.events), "cautions": list(self.cautions),
                "warnings": list(self.warnings), "settings": jsonable(self.settings)}


def _level(latest_pole, latest_zeta, fit, crossing, threshold, horizon_days) -> str:
    if latest_pole is not None and latest_pole.verdict == GROWING:
        return "growing"
    if latest_zeta is not None and latest_zeta <= threshold:
        return "at or below the threshold"
    if fit is None:
        return "too few tests"
    lo, hi = fit.slope_ci
    if hi < 0:
        if crossing is not None and crossing["days_after_last_test"] <= horizon_days:
            return "approaching the threshold"
        return "declining"
    if lo > 0:
        return "increasing"
    return "steady"


def analyse_trend(tests, *, rig: str = "", threshold_damping: float = 0.01,
                  confidence: float = 0.95, tags=None, horizon_days: float = 365.0,
                  step_alpha: float = 0.01, n_simulations: int = 999, seed: int = 0,
                  frequency_tolerance: float = 0.02) -> TrendResult:
    """Trend of every tracked mode of one rig's tests.

    Parameters
    ----------
    tests : sequence of StoredTest
        The rig's tests (any order); see :meth:`HistoryStore.get`.
    rig : str, optional
        Name shown in the result.
    threshold_damping : float, default=0.01
        Damping ratio whose projected crossing date is reported.
    confidence : float, default=0.95
        Level of the slope, step-size and crossing intervals.
    tags : dict, optional
        Keep only tests with all these ``key=value`` tags.
    horizon_days : float, default=365
        A declining mode whose projected crossing is within this many days after the
        latest test is "approaching the threshold".
    step_alpha : float, default=0.01
        A step change is reported when its Monte Carlo p-value is below this.
    n_simulations : int, default=999
        Monte Carlo draws of the step test.
    seed : int, default=0
        Seed of the step test.
    frequency_tolerance : float, default=0.02
        Relative tolerance of mode tracking (:func:`track_modes`).

    Returns
    -------
    TrendResult

    Notes
    -----
    Levels, in order of precedence: ``growing`` (latest pole's real-part interval above
    zero); ``at or below the threshold`` (latest ζ <= threshold); ``too few tests`` (< 3);
    ``approaching the threshold`` (slope interval below zero and projected crossing within
    ``horizon_days``); ``declining`` (slope interval below zero); ``increasing`` (slope
    interval above zero); ``steady`` (slope interval includes zero).  A real pole (step
    jobs) has no damping ratio to trend: its level is ``real pole`` (or ``growing``) and
    only the decay-rate line σ(t) is fitted.  The crossing date
    solves ``a + b·t = threshold``; its interval is the set of t where the line's
    interval contains the threshold (Fieller 1954), bounded only when the slope interval
    excludes zero.

    References
    ----------
    Fieller, E. C. (1954). Some problems in interval estimation. J. R. Stat. Soc. B
    16(2), 175–185.
    """
    from ._tracking import track_modes

    level_ = check_confidence(confidence)
    threshold = check_positive("threshold_damping", threshold_damping)
    horizon = check_nonnegative("horizon_days", horizon_days)
    alpha = check_fraction("step_alpha", step_alpha)
    want = {str(k).strip(): str(v).strip() for k, v in (tags or {}).items()}
    chosen = sorted((t for t in tests if all(t.tags.get(k) == v for k, v in want.items())),
                    key=lambda t: (t.test_time, t.id))
    settings = {"tags": want, "horizon_days": horizon, "step_alpha": alpha,
                "n_simulations": int(n_simulations), "seed": int(seed),
                "frequency_tolerance": frequency_tolerance, "weighting": "Paule-Mandel + Knapp-Hartung",
                "step_test": "sup-F, Monte Carlo", "crossing_interval": "Fieller"}
    warnings = []
    if not chosen:
        return TrendResult(rig, "", threshold, level_, (), (), 0, CAUTIONS,
                           ("no tests: nothing matches the rig and tag filter",), settings)
    origin = datetime.fromisoformat(chosen[0].test_time).astimezone(timezone.utc)
    # compare like with like: say when tags differ and no filter fixes them
    keys = sorted({k for t in chosen for k in t.tags})
    for k in keys:
        values = sorted({t.tags.get(k, "(none)") for t in chosen})
        if len(values) > 1 and k not in want:
            warnings.append(f"mixed tags: tests differ in {k} ({', '.join(values)}); filter with "
                            f"--tag {k}=VALUE to compare like with like")
    n_file_time = sum(t.time_source.startswith("file modification") for t in chosen)
    if n_file_time:
        warnings.append(f"file dates: {n_file_time} test time(s) come from the file's modification "
                        "time; give --when when adding if that is not when the test was made")
    tracking = track_modes(chosen, frequency_tolerance=frequency_tolerance)

    def day_of(iso):
        return (datetime.fromisoformat(iso) - origin).total_seconds() / _SECONDS_PER_DAY

    last_test_day = day_of(chosen[-1].test_time)
    modes = []
    for k, tracked in enumerate(tracking.modes):
        obs = tracked.observations
        days = np.array([day_of(o.test_time) for o in obs])
        zeta = np.array([o.pole.damping_ratio for o in obs])
        zeta_ci = tuple(None if o.pole.ci is None else tuple(o.pole.ci.damping_ratio) for o in obs)
        z_se = np.array([_se_from_interval(ci, o.pole.ci.level) if ci is not None else np.nan
                         for ci, o in zip(zeta_ci, obs)])
        sigma = np.array([o.pole.decay_rate_per_s for o in obs])
        s_se = np.array([_se_from_interval(o.pole.ci.real, o.pole.ci.level) if o.pole.ci else np.nan
                         for o in obs])
        fn = np.array([o.pole.natural_frequency_hz for o in obs])
        f_se = np.array([_se_from_interval(o.pole.ci.natural_frequency_hz, o.pole.ci.level)
                         if o.pole.ci else np.nan for o in obs])
        dfit = sfit = ffit = None
        crossing = None
        step = {"tested": False, "detected": False, "reason": "needs at least 6 tests"}
        distinct_days = np.unique(days).size
        if tracked.oscillatory and len(obs) >= 3 and distinct_days < 3:
            warnings.append(f"same dates: {tracked.mode} has {len(obs)} tests on only {distinct_days} "
                            "distinct date(s); a trend needs 3 or more (check the test times, e.g. "
                            "give --when when adding)")
        if len(obs) >= 3 and distinct_days >= 3 and tracked.oscillatory:
            dfit = fit_line(days, zeta, z_se, confidence=level_)
            sfit = fit_line(days, sigma, s_se, confidence=level_)
            ffit = fit_line(days, fn, f_se, confidence=level_)
            found = dfit.crossing(threshold)
            if found is not None and dfit.slope_ci[1] < 0:
                t_star, (lo, hi) = found
                crossing = {"date": _date(origin, t_star), "ci": [_date(origin, lo), _date(origin, hi)],
                            "days": t_star, "days_ci": [lo, hi],
                            "days_after_last_test": t_star - last_test_day, "label": "indicative"}
            step = step_change_test(days, zeta, dfit.weights, standard_errors=z_se,
                                    n_simulations=n_simulations,
                                    seed=int(seed) + k, confidence=level_)
            step["detected"] = bool(step["tested"] and step["p_value"] < alpha)
            if step["tested"]:
                i = step["index"]
                step["after_test_time"] = obs[i - 1].test_time
                step["before_test_time"] = obs[i].test_time
                step["between"] = [obs[i - 1].test_time[:10], obs[i].test_time[:10]]
        elif not tracked.oscillatory:
            step = {"tested": False, "detected": False, "reason": "real pole: no damping ratio to trend"}
            if len(obs) >= 3 and distinct_days >= 3:
                sfit = fit_line(days, sigma, s_se, confidence=level_)
        latest = obs[-1].pole
        if tracked.oscillatory:
            level = _level(latest, float(zeta[-1]), dfit, crossing, threshold, horizon)
            if crossing is not None and level == "at or below the threshold":
                crossing = None
        else:
            level = "growing" if latest.verdict == GROWING else "real pole"
        modes.append(ModeTrend(tracked.mode, tracked.natural_frequency_hz, tracked.oscillatory,
                               tuple(o.test_id for o in obs), tuple(o.test_time for o in obs),
                               tuple(float(d) for d in days), tuple(float(z) for z in zeta), zeta_ci,
                               dfit, sfit, ffit, level, crossing, step, latest.verdict))
    return TrendResult(rig, origin.isoformat(timespec="seconds"), threshold, level_, tuple(modes),
                       tracking.events, len(chosen), CAUTIONS, tuple(warnings), settings)
