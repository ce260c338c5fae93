"""Nonlinear least squares: a sum of damped sinusoids plus offset (and drift), with lmfit.

The model, on ``τ = t - t_ref``::

    y(τ) = Σ_i e^(-σ_i τ) (c_i cos ω_i τ + d_i sin ω_i τ) + b0 [+ b1 τ]

Each mode is a conjugate pole pair ``s_i = -σ_i ± jω_i``.  The fit is seeded by poles
only (from the matrix pencil); the linear coefficients ``c, d, b0, b1`` start at their
least-squares values for the seed poles.
"""
from __future__ import annotations

import math

import numpy as np

from .._errors import IdentificationError, ParameterValueError
from .._validate import check_choice, check_confidence, check_int, check_time_series
from ._common import MethodEstimate

__all__ = ["fit_damped_sinusoids", "model_basis", "model_values", "model_values_on_grid", "model_jacobian",
           "linearised_covariance", "linear_coefficients"]

#: records longer than this are fitted on an anti-alias-filtered, decimated copy when
#: they are heavily oversampled (speed; see docs/decay.md).  Common practice, no source.
MAX_FIT_SAMPLES = 50_000
MIN_FIT_SAMPLES_PER_PERIOD = 8
#: fits on more samples than this first refine the seeds on the first fifth of the record
PROGRESSIVE_SAMPLES = 20_000


# -- the model and its Jacobian (shared with the pencil's linearised intervals) -------
#: uniform grids at least this long are evaluated as row-by-column products
#: (:func:`_damped_parts`); shorter ones, and any other time base, term by term
GRID_MIN_SAMPLES = 4096


def _uniform_grid(tau):
    """``(tau0, step, B, rows)`` when ``tau`` is a uniform grid of ``GRID_MIN_SAMPLES`` or
    more points (every point within 1e-9 of a step of ``tau0 + k·step``), else None."""
    n = tau.size
    if n < GRID_MIN_SAMPLES:
        return None
    tau0 = float(tau[0])
    step = (float(tau[-1]) - tau0) / (n - 1)
    if not step > 0:
        return None
    ideal = np.arange(n, dtype=float)
    ideal *= step
    ideal += tau0
    ideal -= tau
    if not float(np.max(np.abs(ideal))) <= 1e-9 * step:
        return None
    return (tau0, step) + _grid_shape(n)


def _grid_shape(n):
    """``(B, rows)``: rows of ``B ≈ √n`` samples holding a grid of ``n`` points."""
    block = int(math.ceil(math.sqrt(n)))
    return block, -(-n // block)


def _damped_parts(tau, sigma, omega, grid=False):
    """``(e^(-στ)cos ωτ, e^(-στ)sin ωτ)`` for each mode.

    On a uniform grid (``grid``, from :func:`_uniform_grid`; found here when False) the
    pair is the real and imaginary part of ``e^(sτ_k) = e^(s(tau0 + jBΔ))·e^(s·iΔ)``,
    ``k = jB + i``, ``s = −σ + jω``: one complex product per sample from ``2√n``
    exponentials, instead of an exponential, a cosine and a sine per sample (the same
    values to about 1e-15 relative to the envelope, derived; tested against the direct
    formulas).  The parts are then views of one complex array.
    """
    tau = np.asarray(tau, dtype=float)
    if grid is False:
        grid = _uniform_grid(tau)
    out = []
    for sg, om in zip(sigma, omega):
        if grid is None:
            env = np.exp(-sg * tau)
            out.append((env * np.cos(om * tau), env * np.sin(om * tau)))
            continue
        tau0, step, block, rows = grid
        s = complex(-sg, om)
        e = np.multiply.outer(np.exp(s * (tau0 + np.arange(rows) * (block * step))),
                              np.exp(s * (np.arange(block) * step))).ravel()[:tau.size]
        out.append((e.real, e.imag))
    return out


def model_basis(tau, sigma, omega, drift):
    """Columns ``e^(-στ)cos ωτ, e^(-στ)sin ωτ`` per mode, then ``1`` (and ``τ``)."""
    tau = np.asarray(tau, dtype=float)
    cols = []
    for ec, es in _damped_parts(tau, sigma, omega):
        cols.append(ec)
        cols.append(es)
    cols.append(np.ones_like(tau))
    if drift:
        cols.append(tau)
    return np.column_stack(cols)


def model_values(tau, sigma, omega, c, d, offset=0.0, drift_per_s=0.0):
    """Evaluate the model on ``tau`` (seconds from the reference time)."""
    tau = np.asarray(tau, dtype=float)
    y = np.full(tau.shape, float(offset)) + float(drift_per_s) * tau
    for (ec, es), ci, di in zip(_damped_parts(tau, sigma, omega), c, d):
        y += ci * ec + di * es
    return y


def model_values_on_grid(tau0, step, n, sigma, omega, c, d, offset=0.0, drift_per_s=0.0):
    """:func:`model_values` on the uniform grid ``τ_k = tau0 + k·step`` (k < n), fast.

    Each mode is ``Re((c − jd)·e^(sτ))`` with ``s = −σ + jω``.  On a grid,
    ``e^(sτ_k) = e^(s(tau0 + jBΔ))·e^(s·iΔ)`` for ``k = jB + i``: with rows of ``B ≈ √n``
    samples, every term (offset and drift included) is a sum of products of a row factor
    and a column factor, so the whole model is one matrix product ``R @ C`` of
    ``(rows × p)`` by ``(p × B)`` with ``p = 2·modes + 2``: ``2√n`` complex exponentials,
    and no exponential, cosine or sine per sample (the same values to rounding, about
    1e-15 relative to the largest term, derived; checked against :func:`model_values`).
    """
    n = int(n)
    if n < GRID_MIN_SAMPLES:
        return model_values(tau0 + step * np.arange(n), sigma, omega, c, d, offset, drift_per_s)
    block, rows = _grid_shape(n)
    i = np.arange(block) * step
    j = tau0 + np.arange(rows) * (block * step)
    m = len(sigma)
    left, right = np.empty((rows, 2 * m + 2)), np.empty((2 * m + 2, block))
    for k, (sg, om, ci, di) in enumerate(zip(sigma, omega, c, d)):
        s = complex(-sg, om)
        head = np.exp(s * i)
        jump = complex(ci, -di) * np.exp(s * j)
        # Re(jump·head) = Re(jump)Re(head) − Im(jump)Im(head)
        left[:, 2 * k], left[:, 2 * k + 1] = jump.real, -jump.imag
        right[2 * k], right[2 * k + 1] = head.real, head.imag
    # offset + drift·(j + i) = (offset + drift·j)·1 + drift·i
    left[:, 2 * m], right[2 * m] = float(offset) + float(drift_per_s) * j, 1.0
    left[:, 2 * m + 1], right[2 * m + 1] = float(drift_per_s), i
    return (left @ right).ravel()[:n]


def model_jacobian(tau, sigma, omega, c, d, drift):
    """Jacobian in the parameter order ``(σ_i, ω_i, c_i, d_i)`` per mode, ``b0`` [, ``b1``]."""
    tau = np.asarray(tau, dtype=float)
    cols = []
    for (ec, es), ci, di in zip(_damped_parts(tau, sigma, omega), c, d):
        cols.append(-tau * (ci * ec + di * es))              # ∂/∂σ
        cols.append(tau * (di * ec - ci * es))               # ∂/∂ω
        cols.append(ec)                                      # ∂/∂c
        cols.append(es)                                      # ∂/∂d
    cols.append(np.ones_like(tau))
    if drift:
        cols.append(tau)
    return np.column_stack(cols)


def linear_coefficients(tau, values, sigma, omega, drift):
    """Least-squares ``c, d`` per mode and ``b0`` (``b1``) for fixed poles."""
    basis = model_basis(tau, sigma, omega, drift)
    scale = np.linalg.norm(basis, axis=0)
    scale[scale == 0] = 1.0
    coef, *_ = np.linalg.lstsq(basis / scale, values, rcond=None)
    coef = coef / scale
    m = len(sigma)
    c, d = coef[0:2 * m:2], coef[1:2 * m:2]
    offset = coef[2 * m]
    slope = coef[2 * m + 1] if drift else 0.0
    return c, d, float(offset), float(slope)


def linearised_covariance(jacobian, residual_variance):
    """``s²(JᵀJ)⁻¹`` computed on column-scaled J (Kay 1993, ch. 3: the CRB at the estimate)."""
    scale = np.linalg.norm(jacobian, axis=0)
    scale[scale == 0] = 1.0
    js = jacobian / scale
    # SVD-based inverse: rank-deficient directions become huge variances, not a crash.
    # J = QR, so the singular values and right vectors of J are those of the small R
    _, sv, vt = np.linalg.svd(np.linalg.qr(js, mode="r") if js.shape[0] > js.shape[1] else js,
                              full_matrices=False)
    tol = sv[0] * 1e-12 * max(js.shape)
    inv_sv2 = np.where(sv > tol, 1.0 / np.maximum(sv, tol) ** 2, 1e30)
    cov_s = (vt.T * inv_sv2) @ vt
    return residual_variance * cov_s / np.outer(scale, scale)


def _pole_covariance(cov, i):
    """Covariance of (Re s, Im s) = (-σ_i, ω_i) from the full parameter covariance."""
    k = 4 * i
    block = cov[k:k + 2, k:k + 2].copy()
    block[0, 1] = block[1, 0] = -block[0, 1]
    return block


def _seed_values(seeds):
    out = []
    for s in seeds:
        if hasattr(s, "real") and hasattr(s, "imag") and not isinstance(s, (complex, float, int)):
            s = complex(s.real, s.imag)
        s = complex(s)
        if not (math.isfinite(s.real) and math.isfinite(s.imag)):
            raise ParameterValueError(f"seeds must be finite poles; got {s!r}")
        if s.imag <= 0:
            raise ParameterValueError(f"seeds must be oscillatory poles with imag > 0 (rad/s); got {s!r}")
        out.append(s)
    if not out:
        raise ParameterValueError("seeds must hold at least one pole (from the matrix pencil)")
    return sorted(out, key=lambda z: z.imag)


# -- lmfit plumbing -------------------------------------------------------------------
def _build_params(lmfit, seeds, c, d, offset, slope, drift, nyquist_rad_per_s, scale):
    params = lmfit.Parameters()
    omegas = [s.imag for s in seeds]
    for i, s in enumerate(seeds):
        om, sg = s.imag, -s.real
        # frequency bounded between neighbours (keeps modes from swapping); decay rate
        # allowed slightly negative so an interval can include zero honestly
        lo = 0.5 * (om + omegas[i - 1]) if i > 0 else 0.5 * om
        hi = 0.5 * (om + omegas[i + 1]) if i + 1 < len(seeds) else min(1.5 * om, nyquist_rad_per_s)
        lo = max(lo, om - max(0.5 * om, 0.0))
        hi = max(hi, om * (1 + 1e-9))
        sg_lo = -0.2 * om
        sg_hi = 3.0 * om
        params.add(f"sigma{i}", value=float(np.clip(sg, sg_lo + 1e-12 * om, sg_hi)), min=sg_lo, max=sg_hi)
        params.add(f"omega{i}", value=float(np.clip(om, lo, hi)), min=lo, max=hi)
        params.add(f"c{i}", value=float(c[i]) / scale)
        params.add(f"d{i}", value=float(d[i]) / scale)
    params.add("offset", value=offset / scale)
    if drift:
        params.add("drift", value=slope / scale)
    return params


def _unpack(values_dict, m, drift):
    sigma = np.array([values_dict[f"sigma{i}"] for i in range(m)])
    omega = np.array([values_dict[f"omega{i}"] for i in range(m)])
    c = np.array([values_dict[f"c{i}"] for i in range(m)])
    d = np.array([values_dict[f"d{i}"] for i in range(m)])
    return sigma, omega, c, d, values_dict["offset"], values_dict["drift"] if drift else 0.0


def _lmfit_once(lmfit, tau, y, seeds, drift, nyquist):
    """One bounded Levenberg–Marquardt fit on scaled amplitude; returns the parameters."""
    m = len(seeds)
    scale = float(np.max(np.abs(y - np.median(y)))) or 1.0
    c, d, offset, slope = linear_coefficients(tau, y, [-s.real for s in seeds], [s.imag for s in seeds], drift)
    params = _build_params(lmfit, seeds, c, d, offset, slope, drift, nyquist, scale)
    ys = y / scale

    cache = {}
    grid = _uniform_grid(tau)

    def parts(sg, om):  # e^(-στ)cos ωτ and e^(-στ)sin ωτ, reused by the Jacobian at the same point
        key = (tuple(sg), tuple(om))
        if cache.get("key") != key:
            cache["key"] = key
            cache["parts"] = _damped_parts(tau, sg, om, grid)
        return cache["parts"]

    def residual(p):
        v = p.valuesdict()
        sg, om, cc, dd, b0, b1 = _unpack(v, m, drift)
        out = b0 + b1 * tau - ys
        for (ec, es), ci, di in zip(parts(sg, om), cc, dd):
            out += ci * ec + di * es
        return out

    def jacobian(p):  # analytic, in lmfit's variable order (lmfit applies the bounds' chain rule)
        v = p.valuesdict()
        sg, om, cc, dd, _, _ = _unpack(v, m, drift)
        jac = np.empty((tau.size, 4 * m + 1 + int(drift)))
        for i, ((ec, es), ci, di) in enumerate(zip(parts(sg, om), cc, dd)):
            jac[:, 4 * i] = -tau * (ci * ec + di * es)
            jac[:, 4 * i + 1] = tau * (di * ec - ci * es)
            jac[:, 4 * i + 2] = ec
            jac[:, 4 * i + 3] = es
        jac[:, 4 * m] = 1.0
        if drift:
            jac[:, 4 * m + 1] = tau
        return jac

    result = lmfit.minimize(residual, params, method="leastsq", nan_policy="raise", Dfun=jacobian,
                            xtol=1e-10, ftol=1e-12, max_nfev=200 * (4 * m + 2))
    sg, om, cc, dd, b0, b1 = _unpack(result.params.valuesdict(), m, drift)
    return sg, om, cc * scale, dd * scale, b0 * scale, b1 * scale, bool(result.success), int(result.nfev)


def _decimate_for_fit(time_s, values, seeds):
    """Filtered, decimated copy for heavily oversampled long records (or the input)."""
    from ._pencil import block_decimate

    n = values.size
    if n <= MAX_FIT_SAMPLES:
        return time_s, values, 1, 0
    ts = float(time_s[1] - time_s[0])
    fastest_hz = max(abs(s) for s in seeds) / (2 * math.pi)
    # about MAX_FIT_SAMPLES samples, but never fewer than MIN_FIT_SAMPLES_PER_PERIOD samples
    # per period of the fastest mode (the block mean keeps the poles exactly; it keeps a
    # fraction sinc²(π/8) ≈ 1 − (π/8)²/3 ≈ 0.95 of a mode's power at 8 samples per
    # period while the noise variance falls by the factor exactly, derived)
    factor = min(int(1.0 / (ts * MIN_FIT_SAMPLES_PER_PERIOD * fastest_hz)), -(-n // MAX_FIT_SAMPLES))
    if factor < 2:
        return time_s, values, 1, 0
    t_d, y_d = block_decimate(time_s, values, factor)
    return t_d, y_d, factor, n - y_d.size * factor


def fit_damped_sinusoids(time_s, values, seeds, *, drift=False, confidence=0.95,
                         intervals="delta", n_boot=200, seed=0) -> MethodEstimate:
    """Fit a sum of damped sinusoids plus offset (and linear drift) by nonlinear least squares.

    Parameters
    ----------
    time_s : array_like
        Uniform sample times in seconds.
    values : array_like
        The free-decay record (same length as ``time_s``).
    seeds : sequence of complex or Pole
        Starting poles ``s = -σ + jω`` (rad/s, imag > 0), one per mode, normally the
        matrix-pencil poles.  Never a user's guess.
    drift : bool, default=False
        Add a linear drift ``b1·τ`` to the offset.
    confidence : float, default=0.95
        Confidence level of the intervals, as a probability.
    intervals : {"delta", "bootstrap"}, default="delta"
        ``"delta"``: linearised covariance ``s²(JᵀJ)⁻¹`` carried to fn and ζ by the delta
        method.  ``"bootstrap"``: residual bootstrap with ``n_boot`` refits, percentile
        intervals.
    n_boot : int, default=200
        Bootstrap refits (``intervals="bootstrap"`` only).
    seed : int, default=0
        Seed of the bootstrap's random generator.

    Returns
    -------
    MethodEstimate
        ``method="fit"``; ``details`` holds the fitted terms (``c, d`` per mode), the
        offset and drift, the residual RMS, the number of samples fitted and the
        decimation factor used (1 when the raw record was fitted).

    Notes
    -----
    Model on ``τ = t - t_0``: ``y = Σ e^(-σ_i τ)(c_i cos ω_i τ + d_i sin ω_i τ) + b0 + b1 τ``.
    Under white Gaussian noise the least-squares estimate is the maximum-likelihood
    estimate, and ``s²(JᵀJ)⁻¹`` with ``s² = RSS/(N - p)`` is its asymptotic covariance —
    the Cramér–Rao bound evaluated at the estimate.  The (Re s, Im s) = (-σ, ω) block of
    each mode goes to :func:`identify.poles.pole_with_delta_intervals`.

    Records longer than 50,000 samples are fitted on a block-mean decimated copy of about
    50,000 samples (never fewer than 8 samples per period of the fastest mode).  The
    block mean is an FIR anti-alias filter that preserves each pole exactly; amplitudes
    are corrected for its gain.  ``details`` says so (``decimation_factor``,
    ``samples_fitted``, ``note``).

    References
    ----------
    Kay, S. M. (1993). *Fundamentals of Statistical Signal Processing: Estimation
    Theory*, ch. 3 and 7.  Newville, M. et al., LMFIT (non-linear least squares for
    Python).
    """
    t, y = check_time_series(time_s, values, min_length=8)
    level = check_confidence(confidence)
    intervals = check_choice("intervals", intervals, ("delta", "bootstrap"))
    n_boot = check_int("n_boot", n_boot, minimum=20)
    seeds = _seed_values(seeds)
    drift = bool(drift)
    # the decimated copy first: the command line may still be importing lmfit in another
    # thread (identify/cli/_warmup.py), and this needs only numpy
    t_fit, y_fit, factor, trimmed = _decimate_for_fit(t, y, seeds)
    m = len(seeds)
    n_par = 4 * m + 1 + int(drift)
    if y_fit.size <= n_par + 2:
        raise IdentificationError(f"{y_fit.size} samples are too few to fit {m} mode(s) ({n_par} parameters)")
    try:
        import lmfit
    except ImportError as exc:  # pragma: no cover - lmfit is a dependency
        raise ImportError("fit_damped_sinusoids needs lmfit: pip install lmfit") from exc
    t_ref = float(t_fit[0])
    tau = t_fit - t_ref
    ts_fit = float(t_fit[1] - t_fit[0])
    nyquist = math.pi / ts_fit
    nfev = 0
    if y_fit.size > PROGRESSIVE_SAMPLES:  # long record: refine the seeds on its first part
        k = max(PROGRESSIVE_SAMPLES // 4, y_fit.size // 5)
        try:
            sg0, om0, *_, n0 = _lmfit_once(lmfit, tau[:k], y_fit[:k], seeds, drift, nyquist)
            refined = sorted((complex(-a, b) for a, b in zip(sg0, om0)), key=lambda z: z.imag)
            if all(np.isfinite([z.real for z in refined])) and len({round(z.imag, 9) for z in refined}) == m:
                seeds, nfev = refined, n0
        except (ValueError, FloatingPointError):
            pass
    sg, om, cc, dd, b0, b1, converged, n1 = _lmfit_once(lmfit, tau, y_fit, seeds, drift, nyquist)
    nfev += n1
    model = model_values(tau, sg, om, cc, dd, b0, b1)
    resid = y_fit - model
    dof = y_fit.size - n_par
    s2 = float(resid @ resid) / dof
    jac = model_jacobian(tau, sg, om, cc, dd, drift)
    cov = linearised_covariance(jac, s2)
    if factor > 1:  # undo the block mean's gain and refer the terms to the first raw sample
        from ._pencil import block_gain

        ts_raw = float(t[1] - t[0])
        for i in range(m):
            s_i = complex(-sg[i], om[i])
            a = complex(cc[i], -dd[i]) / block_gain(s_i, factor, ts_raw) * np.exp(-s_i * (t_ref - t[0]))
            cc[i], dd[i] = a.real, -a.imag
        b0 = b0 - b1 * (t_ref - t[0])
        t_ref = float(t[0])

    warnings = []
    if not converged:
        warnings.append("fit not converged: the least-squares fit stopped before its tolerance; "
                        "the poles are the last iterate")
    poles = []
    boot_poles = None
    if intervals == "bootstrap":
        rng = np.random.default_rng(seed)
        boot_poles = [[] for _ in range(m)]
        centred = resid - resid.mean()
        fitted_seeds = [complex(-a, b) for a, b in zip(sg, om)]
        for _ in range(n_boot):
            y_star = model + rng.choice(centred, size=centred.size, replace=True)
            try:
                bs, bo, *_ = _lmfit_once(lmfit, tau, y_star, fitted_seeds, drift, nyquist)
            except (ValueError, FloatingPointError):
                continue
            for i in range(m):
                boot_poles[i].append(complex(-bs[i], bo[i]))
    from ..poles import pole_with_delta_intervals, pole_with_sample_intervals

    for i in range(m):
        s = complex(-sg[i], om[i])
        amp = math.hypot(cc[i], dd[i])
        if boot_poles is not None and len(boot_poles[i]) >= 20:
            poles.append(pole_with_sample_intervals(s, boot_poles[i], level, amplitude=amp))
        else:
            poles.append(pole_with_delta_intervals(s, _pole_covariance(cov, i), level, amplitude=amp))
    sd = np.sqrt(np.maximum(np.diag(cov), 0.0))
    details = {
        "t_ref_s": t_ref,
        "terms": [{"real": float(-sg[i]), "imag": float(om[i]), "c": float(cc[i]), "d": float(dd[i]),
                   "phase_rad": float(math.atan2(-dd[i], cc[i]))} for i in range(m)],
        "offset": float(b0),
        "offset_std": float(sd[4 * m]),
        "drift_per_s": float(b1) if drift else None,
        "drift_std_per_s": float(sd[4 * m + 1]) if drift else None,
        "drift_fitted": drift,
        "residual_rms": float(np.sqrt(np.mean(resid * resid))),
        "residual_std": math.sqrt(s2),
        "samples_fitted": int(y_fit.size),
        "parameters": n_par,
        "decimation_factor": int(factor),
        "tail_samples_dropped": int(trimmed),
        "converged": converged,
        "evaluations": nfev,
        "intervals": intervals,
        "bootstrap_refits": None if boot_poles is None else min(len(b) for b in boot_poles),
    }
    if factor > 1:
        details["note"] = (f"fitted on a copy filtered and decimated by {factor} "
                           f"({y_fit.size} of {y.size} samples) for speed")
    return MethodEstimate("fit", tuple(poles), tuple(warnings), details)
