"""Logarithmic decrement: one mode's decay rate and frequency from the extrema of a ring-down.

    log_decrement   σ, ωd (hence ζ, fn) with regression intervals, method ``"logdec"``
"""
from __future__ import annotations

import math

import numpy as np

from .._errors import IdentificationError
from .._validate import check_confidence, check_nonnegative, check_time_series
from ._common import MethodEstimate

__all__ = ["log_decrement", "damping_from_decrement", "extrema"]

#: Extrema smaller than this many noise standard deviations are not used: near the
#: noise floor the largest noisy sample overstates the peak, which biases ζ low
#: (REFERENCES.md, log decrement: truncate at ~3–5 noise std).
NOISE_FLOOR_FACTOR = 5.0
#: Hysteresis of the zero-crossing detector that separates the lobes, in noise std.
HYSTERESIS_FACTOR = 3.0
#: Usable whole cycles below which a warning is given (and below 2 an error).
FEW_CYCLES = 3.0
MIN_CYCLES = 2.0
#: Lack-of-fit ratio (residual variance over the variance expected from the noise)
#: above which, together with structured residuals, the record is called multi-mode.
#: Common practice, no source; chosen by simulation so that single-mode records at
#: 20–60 dB and ≥ 8 samples per period do not trigger it.
LACK_OF_FIT_RATIO = 6.0
SEVERAL_MODES_P = 0.001


def damping_from_decrement(delta):
    """Exact damping ratio from the logarithmic decrement, ``ζ = δ / √(4π² + δ²)``.

    Notes
    -----
    Over one damped period ``Td = 2π/ωd`` the envelope falls by ``exp(σ·Td)``, so
    ``δ = σ·Td = 2πζ/√(1 − ζ²)``; solving for ζ gives the form above (Thomson,
    *Theory of Vibration with Applications*, §2.7).  It is odd and increasing in δ.
    """
    d = np.asarray(delta, dtype=float)
    z = d / np.sqrt(4.0 * math.pi ** 2 + d * d)
    return float(z) if z.ndim == 0 else z


def _parabolic(y_m, y_0, y_p):
    """Vertex offset (in samples) and value of the parabola through three samples."""
    denom = y_m - 2.0 * y_0 + y_p
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.where(denom != 0.0, 0.5 * (y_m - y_p) / denom, 0.0)
    u = np.clip(u, -0.5, 0.5)
    return u, y_0 - 0.25 * (y_m - y_p) * u


def extrema(time_s, values, center, hysteresis):
    """Extrema of both signs about ``center``, one per half-cycle lobe.

    Lobes are separated by a zero-crossing detector with hysteresis (a lobe starts
    when ``values - center`` passes ``±hysteresis``); each lobe's largest sample is
    refined by a 3-point parabola.  Extrema on the first or last sample are dropped
    (they are record edges, not turning points).

    Returns
    -------
    times, values, signs, indices : numpy.ndarray
        Interpolated times (s), interpolated values (in the signal's unit, *not*
        offset-corrected), the sign (+1 maximum, −1 minimum) and the index of the
        largest sample of each extremum.
    """
    t = np.asarray(time_s, dtype=float)
    x = np.asarray(values, dtype=float)
    dev = x - center
    state = np.where(dev > hysteresis, 1, np.where(dev < -hysteresis, -1, 0))
    idx = np.where(state != 0, np.arange(state.size), 0)
    np.maximum.accumulate(idx, out=idx)
    filled = state[idx]  # forward-filled lobe sign; leading samples inside the band stay 0
    change = np.flatnonzero(np.diff(filled)) + 1
    bounds = np.concatenate(([0], change, [filled.size]))
    dt = (t[-1] - t[0]) / (t.size - 1) if t.size > 1 else 1.0
    out_t, out_v, out_s, out_k = [], [], [], []
    for a, b in zip(bounds[:-1], bounds[1:]):
        sign = filled[a]
        if sign == 0:
            continue
        k = a + int(np.argmax(sign * dev[a:b]))
        if k == 0 or k == x.size - 1:
            continue
        u, v = _parabolic(dev[k - 1], dev[k], dev[k + 1])
        out_t.append(t[k] + float(u) * dt)
        out_v.append(float(v) + center)
        out_s.append(int(sign))
        out_k.append(k)
    return np.array(out_t), np.array(out_v), np.array(out_s, dtype=int), np.array(out_k, dtype=int)


def _local_sinusoid(x, indices, omega_d, sigma, dt, center, half_width):
    """Least squares of a damped sinusoid of known pole on each lobe window.

    On the window ``indices ± half_width`` samples, ``x − center`` is fitted by
    ``e^(−στ)·(β cos(ωd τ) + γ sin(ωd τ))`` (τ = time from the lobe's largest
    sample), which is exact for a noise-free decay once σ and ωd are right.

    Returns
    -------
    beta, gamma : numpy.ndarray
        The coefficients of each lobe.
    basis : numpy.ndarray, shape (2q+1, 2)
        The window's damped cosine and sine columns.
    """
    k = np.arange(-half_width, half_width + 1)
    tau = k * dt
    damp = np.exp(-sigma * tau)
    basis = np.column_stack([damp * np.cos(omega_d * tau), damp * np.sin(omega_d * tau)])
    windows = x[indices[:, None] + k[None, :]] - center
    coef = windows @ np.linalg.pinv(basis).T
    return coef[:, 0], coef[:, 1], basis, windows


def _fit_decay(times, peaks, signs, center0, start=None):
    """Least squares of ``p_k = c + s_k·exp(β − σ(t_k − t̄))`` by Gauss–Newton.

    Started from the weighted ln-amplitude regression with the offset held at
    ``center0`` (or from a previous fit ``start = (c, β, σ, t̄)``).  Returns ``(c, β, σ, t̄, (JᵀJ)⁻¹,
    residuals, J)``.
    """
    t_ref = float(np.mean(times))
    tc = times - t_ref
    if start is None:
        amp = np.maximum(signs * (peaks - center0), 1e-300)
        sw = amp  # weights a_k² → square root a_k
        design = np.column_stack([np.ones_like(tc), -tc])
        beta, sigma = np.linalg.lstsq(design * sw[:, None], np.log(amp) * sw, rcond=None)[0]
        c = float(center0)
    else:
        c, beta, sigma, start_ref = start
        beta = beta - sigma * (t_ref - start_ref)
    jac = np.empty((tc.size, 3))
    jac[:, 0] = 1.0
    for _ in range(50):
        model_amp = np.exp(beta - sigma * tc)
        resid = peaks - (c + signs * model_amp)
        jac[:, 1] = signs * model_amp
        jac[:, 2] = -signs * model_amp * tc
        step = np.linalg.solve(jac.T @ jac, jac.T @ resid)
        c, beta, sigma = c + step[0], beta + step[1], sigma + step[2]
        if abs(step[0]) <= 1e-10 * (abs(c) + np.max(model_amp)) and abs(step[1]) <= 1e-10 \
                and abs(step[2]) * (np.ptp(tc) + 1e-300) <= 1e-10:
            break
    model_amp = np.exp(beta - sigma * tc)
    resid = peaks - (c + signs * model_amp)
    jac[:, 1] = signs * model_amp
    jac[:, 2] = -signs * model_amp * tc
    jtj_inv = np.linalg.pinv(jac.T @ jac)
    return float(c), float(beta), float(sigma), t_ref, jtj_inv, resid, jac


def _wls_line(x, y, w):
    """Weighted straight line y = a + b·x; returns (a, b, cov of (a, b), residuals, rss_w)."""
    sw = np.sqrt(w)
    design = np.column_stack([np.ones_like(x), x])
    coef = np.linalg.lstsq(design * sw[:, None], y * sw, rcond=None)[0]
    resid = y - design @ coef
    rss = float(np.sum(w * resid ** 2))
    dof = max(x.size - 2, 1)
    cov = rss / dof * np.linalg.pinv((design * w[:, None]).T @ design)
    return float(coef[0]), float(coef[1]), cov, resid, rss


def _runs_p_value(resid):
    """Two-sided p-value of the Wald–Wolfowitz runs test on the residual signs."""
    signs = resid > 0
    n1 = int(signs.sum())
    n2 = int(signs.size - n1)
    if n1 == 0 or n2 == 0 or signs.size < 8:
        return 1.0
    runs = 1 + int(np.count_nonzero(signs[1:] != signs[:-1]))
    n = n1 + n2
    mean = 2.0 * n1 * n2 / n + 1.0
    var = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n * n * (n - 1.0))
    if var <= 0:
        return 1.0
    zval = (runs - mean) / math.sqrt(var)
    return math.erfc(abs(zval) / math.sqrt(2.0))


def log_decrement(time_s, values, *, confidence: float = 0.95, noise_std=None) -> MethodEstimate:
    """Estimate one mode's pole from the logarithmic decrement of a free decay.

    Parameters
    ----------
    time_s : array_like
        Uniformly spaced time stamps of the ring-down segment (s).
    values : array_like
        The ring-down samples; a constant offset is allowed.
    confidence : float, default=0.95
        Confidence level of the intervals, as a probability.
    noise_std : float, optional
        Standard deviation of the additive noise.  Estimated robustly from the record
        (third difference, tail and upper periodogram, the smallest) when not given.

    Returns
    -------
    MethodEstimate
        ``method="logdec"``, one pole with ``ci.method == "regression"``; ``details``
        holds ``delta`` (decrement per cycle), ``cycles_used``, ``peak_times_s``
        (crest times of the lobes), ``peak_amplitudes`` (lobe amplitudes, offset
        removed), ``used`` (which lobes entered the regression), ``slope_per_s`` (of
        ln-amplitude, = −σ), ``intercept`` (ln of the envelope at the first used
        lobe), ``offset``, ``noise_std``, ``half_period_s`` and the lack-of-fit figures.

    Raises
    ------
    IdentificationError
        No oscillation above the noise, or fewer than 2 usable cycles.

    Notes
    -----
    The extrema of ``x(t) = c + A·e^(−σt)·cos(ωd t + φ)`` fall exactly every half
    damped period and their distances from ``c`` form a geometric sequence, ratio
    ``e^(−σπ/ωd)`` per half-cycle.  The method therefore

    1. finds the extrema of both signs (hysteresis zero-crossing detector, 3-point
       parabolic interpolation of each lobe's largest sample) — a first estimate of
       the half period;
    2. refines each lobe by linear least squares of the damped sinusoid
       ``e^(−στ)(β cos ωdτ + γ sin ωdτ)`` on a window of just under half a period
       around it (windows of neighbouring lobes do not overlap, so their errors are
       independent): the lobe amplitude is the envelope at the window centre — once
       the crest phase is known from the timing regression (step 5), a one-term fit
       along it, which is linear and unbiased — and ``atan2(γ, β)/ωd`` the crest time.
       The largest noisy sample and its parabola, used directly, overstate small peaks
       (by 17 % at 5 noise std and 20 samples per period) and bias ζ low;
    3. keeps the contiguous run of lobes from the largest one on while the fitted
       envelope exceeds ``NOISE_FLOOR_FACTOR`` noise standard deviations (REFERENCES:
       truncate at ~3–5 noise std; cutting on the fitted envelope rather than the
       noisy values avoids a selection bias at the cut);
    4. removes the offset *jointly*: it regresses ``ln|p_k − c| = β − σ·t_k`` with
       weights ``a_k²`` (REFERENCES: under additive noise ``var ln a_k ≈ s²/a_k²``)
       and the offset ``c`` as a third, linearised parameter, iterated to
       convergence — which is exactly least squares of the lobe values
       ``p_k = c + s_k·e^(β − σ t_k)``, the signs ``s_k = ±1`` alternating.  Using
       both signs makes the offset identifiable, so a DC offset causes no bias
       (peak-to-peak amplitudes would cancel it too, but neighbouring peak-to-peak
       values share an extremum and are correlated).  The lobe fits take the offset
       as given, so the offset is iterated to its fixed point;
    5. regresses the crest times on their half-cycle index with the same weights
       (timing errors scale as ``s/a_k``): the slope is the half period ``π/ωd``;
       σ and ωd are fed back into the lobe windows until they settle;
    6. gives ``δ = σ·Td = 2πσ/ωd`` and the exact ``ζ = δ/√(4π² + δ²)``.

    Intervals: the residual variance of each regression is estimated from its own
    residuals (``RSS/(n − p)``), so no noise model has to be trusted; t-intervals
    (``n − 3`` degrees of freedom for the decay, ``n − 2`` for the frequency) on σ,
    ωd and δ (``se_δ² = Td² se_σ² + (2σ)² se_{Td/2}²``), the δ interval mapped through
    the monotone ζ(δ); fn from ``ωn = √(σ² + ωd²)`` by the delta method.  Their
    coverage is checked by a seeded Monte-Carlo test (tests/test_logdec_coverage.py).

    It is a single-mode method: a lack-of-fit ratio (residual variance of the
    lobe values over the variance expected from the noise) together with structured
    residuals (runs test on their signs, or a significant curvature of ln-amplitude),
    a lack of fit twice as large on its own, or irregular half periods give the
    warning ``"several modes: ..."``.

    References
    ----------
    Thomson, W. T., *Theory of Vibration with Applications*, §2.7 (logarithmic
    decrement, exact ζ(δ)).
    """
    from scipy import stats

    level = check_confidence(confidence)
    t, x = check_time_series(time_s, values, min_length=3)
    noise_given = noise_std is not None
    if noise_given:
        noise = check_nonnegative("noise_std", noise_std)
    else:
        from ..conditioning._trend import robust_noise_std

        noise = robust_noise_std(x)
    span = float(np.max(x) - np.min(x))
    if span <= 0.0:
        raise IdentificationError("no oscillation: the signal is constant")
    floor = max(noise, 1e-12 * span)
    center0 = float(np.median(x))
    times_p, peaks_p, signs, idx = extrema(t, x, center0, HYSTERESIS_FACTOR * floor)
    if times_p.size < 3:
        raise IdentificationError(
            f"no oscillation: found {times_p.size} extrema above the noise "
            f"(noise std {noise:.3g}) in the record")
    warnings = []
    dt = (t[-1] - t[0]) / (t.size - 1)
    cut = NOISE_FLOOR_FACTOR * floor

    def select(amp):
        """Contiguous run of extrema from the largest on, while above the noise floor."""
        used = np.zeros(amp.size, dtype=bool)
        for k in range(int(np.argmax(amp)), amp.size):
            if amp[k] < cut:
                break
            used[k] = True
        return used

    def too_few(n_used):
        cycles = (n_used - 1) / 2.0
        if cycles < MIN_CYCLES:
            raise IdentificationError(
                f"too few cycles: only {max(cycles, 0.0):.1f} cycles above the noise floor "
                f"({NOISE_FLOOR_FACTOR:g} noise std = {cut:.3g}); 2 or more are needed")

    # pass 1: parabolic extrema give the half period, hence the lobe windows
    used = select(signs * (peaks_p - center0))
    too_few(int(used.sum()))
    half0 = float(np.polyfit(np.arange(int(used.sum())), times_p[used], 1)[0])
    if not half0 > 2.0 * dt:
        raise IdentificationError(
            f"no oscillation resolved: extrema only {half0 / dt:.1f} samples apart "
            f"(more than 4 samples per period are needed)")
    omega0 = math.pi / half0
    q = max(1, int(0.5 * (half0 / dt - 1.0)))
    # lobes far past the noise floor (noise crossings of the hysteresis) are not needed
    first_used, last_used = np.flatnonzero(used)[[0, -1]]
    inside = (idx - q >= 0) & (idx + q < x.size)
    inside &= (np.arange(idx.size) >= first_used) & (np.arange(idx.size) <= last_used + 4)
    times_p, peaks_p, signs, idx = times_p[inside], peaks_p[inside], signs[inside], idx[inside]
    if times_p.size < 3:
        raise IdentificationError("no oscillation: too few whole lobes inside the record")
    centres = t[idx]

    # pass 2: lobe values by local least squares (see Notes).  The offset is the
    # fixed point c = ĉ(c) of the decay fit (secant steps; ĉ is nearly linear in c);
    # the window basis, the crest phases and the noise-floor cut follow the fit.
    def lobe_values(c_assumed, sigma_w, omega_w, crest):
        beta_k, gamma_k, basis, windows = _local_sinusoid(x, idx, omega_w, sigma_w, dt, c_assumed, q)
        if crest is None:  # first round: amplitude of the free two-term fit
            amp = np.hypot(beta_k, gamma_k)
            gain = float(np.linalg.pinv(basis.T @ basis)[0, 0])
        else:  # later: one-term fit with the crest phase of the timing model (linear, unbiased)
            theta = omega_w * (crest - centres)
            shape = (np.cos(theta)[:, None] * basis[None, :, 0] + np.sin(theta)[:, None] * basis[None, :, 1])
            norm = np.sum(shape * shape, axis=1)
            amp = signs * np.sum(shape * windows, axis=1) / norm
            gain = float(np.mean(1.0 / norm))
        shift = np.arctan2(signs * gamma_k, signs * beta_k) / omega_w
        return amp, shift, gain, basis

    def choose(amp, envelope):
        if envelope is None:
            return select(amp)
        used = np.zeros(amp.size, dtype=bool)  # cut on the fitted envelope, not the noisy values
        for k in range(int(np.argmax(amp)), amp.size):
            if envelope[k] < cut:
                break
            used[k] = True
        return used

    sigma_w, omega_w, c = 0.0, omega0, center0
    crest, envelope, fit = None, None, None
    for _ in range(6):
        c_prev, g_prev = None, None
        for _ in range(4):
            amp, shift, gain, basis = lobe_values(c, sigma_w, omega_w, crest)
            used = choose(amp, envelope)
            too_few(int(used.sum()))
            fit = _fit_decay(centres[used], c + signs[used] * amp[used], signs[used], c,
                             None if fit is None else (c,) + fit[1:4])
            g = fit[0] - c
            if abs(g) <= 1e-6 * floor:
                break
            if g_prev is not None and g != g_prev:
                c_prev, c = c, c - g * (c - c_prev) / (g - g_prev)
            else:
                c_prev, c = c, fit[0]
            g_prev = g
        tt = (centres + shift)[used]
        index = np.round((tt - tt[0]) / half0)
        wts = np.exp(2.0 * (fit[1] - fit[2] * (centres[used] - fit[3])))
        t_first, half_period = _wls_line(index, tt, wts / wts.max())[:2]
        new_sigma, new_omega = fit[2], math.pi / half_period
        new_crest = t_first + np.round((centres + shift - tt[0]) / half0) * half_period
        new_envelope = np.exp(fit[1] - fit[2] * (centres - fit[3]))
        done = (crest is not None and abs(new_sigma - sigma_w) <= 1e-5 * new_omega
                and abs(new_omega - omega_w) <= 1e-7 * new_omega)
        sigma_w, omega_w, crest, envelope = new_sigma, new_omega, new_crest, new_envelope
        if done:
            break
    n_used = int(used.sum())
    cycles = (n_used - 1) / 2.0
    values_k = c + signs * amp
    c, beta, sigma, t_ref, jtj_inv, resid, jac = fit
    tu, su = centres[used], signs[used]
    dof_a = n_used - 3
    rss_a = float(resid @ resid)
    s2_a = rss_a / dof_a if dof_a > 0 else float("inf")
    var_sigma = s2_a * jtj_inv[2, 2]

    # half period from the turning-point times on their half-cycle index
    turning = centres + shift
    tt = turning[used]
    index = np.round((tt - tt[0]) / half0)
    amp_model = np.exp(beta - sigma * (tu - t_ref))
    weights = amp_model ** 2 / np.max(amp_model ** 2)
    t0, half_period, cov_t, resid_t, rss_t = _wls_line(index, tt, weights)
    if not half_period > 0:
        raise IdentificationError("no oscillation: the extremum times do not advance")
    var_half = float(cov_t[1, 1])
    omega_d = math.pi / half_period
    var_omega = (math.pi / half_period ** 2) ** 2 * var_half
    period = 2.0 * half_period
    delta = sigma * period
    se_delta = math.sqrt(period ** 2 * var_sigma + (2.0 * sigma) ** 2 * var_half)
    t_a = float(stats.t.ppf(0.5 + level / 2.0, max(dof_a, 1)))
    t_t = float(stats.t.ppf(0.5 + level / 2.0, max(n_used - 2, 1)))
    se_sigma = math.sqrt(var_sigma)
    se_omega = math.sqrt(var_omega)
    omega_n = math.hypot(sigma, omega_d)
    se_wn = math.sqrt((sigma ** 2 * var_sigma + omega_d ** 2 * var_omega)) / omega_n
    t_wn = t_t if omega_d ** 2 * var_omega >= sigma ** 2 * var_sigma else t_a
    zeta_ci = (damping_from_decrement(delta - t_a * se_delta),
               damping_from_decrement(delta + t_a * se_delta))

    from ..poles import Pole, PoleIntervals

    two_pi = 2.0 * math.pi
    intervals = PoleIntervals(
        level=level, method="regression",
        real=(-sigma - t_a * se_sigma, -sigma + t_a * se_sigma),
        imag=(max(omega_d - t_t * se_omega, 0.0), omega_d + t_t * se_omega),
        natural_frequency_hz=(max(omega_n - t_wn * se_wn, 0.0) / two_pi, (omega_n + t_wn * se_wn) / two_pi),
        damping_ratio=zeta_ci)
    amplitude = float(np.exp(beta - sigma * (t[0] - t_ref)))  # envelope at the segment start
    pole = Pole(-sigma, omega_d, amplitude, intervals)

    # straightness of ln-amplitude: lack of fit against the noise, plus structure.
    # Expected variances of a lobe value and a turning-point time from the local fit:
    # s²·(PPᵀ)₀₀ and s²·(PPᵀ)₁₁/(a·ωd)² with P the window's pseudo-inverse.
    gain_t = float(np.linalg.pinv(basis.T @ basis)[1, 1])
    noise_ratio = s2_a / (floor ** 2 * gain)
    sd_t = floor * math.sqrt(gain_t) / (amp_model * omega_w)
    time_ratio = float(np.sum((resid_t / sd_t) ** 2)) / max(n_used - 2, 1)
    runs_p = _runs_p_value(resid)
    curvature_p = 1.0
    if dof_a >= 2:
        jac_q = np.column_stack([jac, -su * amp_model * (tu - t_ref) ** 2])
        coef, *_ = np.linalg.lstsq(jac_q, resid, rcond=None)
        rss_q = float(np.sum((resid - jac_q @ coef) ** 2))
        dof_q = n_used - 4
        if dof_q >= 1 and rss_q > 0:
            f_stat = (rss_a - rss_q) / (rss_q / dof_q)
            curvature_p = float(stats.f.sf(f_stat, 1, dof_q))
    structured = min(runs_p, curvature_p) < SEVERAL_MODES_P
    if ((noise_ratio > LACK_OF_FIT_RATIO and structured) or noise_ratio > 2.0 * LACK_OF_FIT_RATIO
            or time_ratio > LACK_OF_FIT_RATIO ** 2):
        warnings.append(
            f"several modes: ln-amplitude of the extrema is not a straight line (residual "
            f"variance {noise_ratio:.1f}× the noise, runs p={runs_p:.2g}, curvature "
            f"p={curvature_p:.2g}); logarithmic decrement assumes one mode")
    if cycles < FEW_CYCLES:
        warnings.append(
            f"few cycles: only {cycles:.1f} cycles above the noise floor "
            f"({FEW_CYCLES:g} or more advised)")
    if zeta_ci[0] <= 0.0:
        warnings.append(
            f"damping interval includes zero: ζ in [{zeta_ci[0]:.3g}, {zeta_ci[1]:.3g}]")

    amp_all = signs * (values_k - c)
    details = {
        "delta": delta,
        "cycles_used": cycles,
        "peak_times_s": turning.tolist(),
        "peak_amplitudes": amp_all.tolist(),
        "used": used.tolist(),
        "slope_per_s": -sigma,
        "intercept": float(beta - sigma * (tu[0] - t_ref)),
        "offset": c,
        "half_period_s": half_period,
        "noise_std": noise,
        "noise_std_estimated": not noise_given,
        "lack_of_fit_ratio": noise_ratio,
        "runs_p_value": runs_p,
        "curvature_p_value": curvature_p,
    }
    return MethodEstimate("logdec", (pole,), tuple(warnings), details)
