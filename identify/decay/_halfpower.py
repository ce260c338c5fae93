"""Half-power bandwidth: frequency-domain cross-check of the poles of a free decay.

    half_power   fn and ζ of each separated resonance from the −3 dB points, with
                 parametric-bootstrap intervals; method ``"halfpower"``
"""
from __future__ import annotations

import math

import numpy as np

from .._errors import IdentificationError, ParameterValueError
from .._validate import check_array_1d, check_confidence, check_time_series
from ._common import MethodEstimate

__all__ = ["half_power"]

#: Fine-grid spacing (fraction of the coarse half-power bandwidth) and span (in bandwidths
#: each side of the peak) of the local transform.  Common practice, no source.
GRID_PER_BANDWIDTH = 20
GRID_HALF_SPAN = 3.0
#: Peaks lower than this fraction of the largest (|X|, i.e. −20 dB) are not reported
#: when no frequencies are given.
RELATIVE_HEIGHT = 0.1
#: Raw spectral lines (record length × bandwidth) advised inside the half-power band.
MIN_LINES = 5.0
#: Bootstrap replicates, and the seed that makes the intervals reproducible.
BOOTSTRAP_SAMPLES = 800
BOOTSTRAP_SEED = 20261202
MIRROR_ITERATIONS = 60  # at most; stops when σ and ωd settle
#: Passes in which every mode is re-estimated with the others' modelled transforms removed.
MODE_PASSES = 4
#: A resonance is evaluated only if its decay falls to this fraction or less within the
#: record (measured on truncated test records: at 8 % the estimate is within 0.1 %,
#: at 28 % or more it was 1.5 to 60 times too high; tests/test_halfpower.py).
RECORDED_MAX = 0.1


def _sigma_from_half_width(half_width, dt):
    """Decay rate from the half-power half-width of a sampled one-sided decay.

    For ``x_n = R zⁿ`` (n ≥ 0, ``z = e^{(−σ + jωd)Ts}``) the transform is
    ``R / (1 − z e^{−jωTs})`` and ``|X|²`` halves where
    ``1 − 2r cos(ΔTs) + r² = 2(1 − r)²``, ``r = e^{−σTs}``, ``Δ = ω − ωd`` [derived];
    so ``r = (2 − cos ΔTs) − √((2 − cos ΔTs)² − 1)``, which tends to ``σ = Δ`` as
    ``Ts → 0``.
    """
    a = 2.0 - np.cos(half_width * dt)
    r = a - np.sqrt(np.maximum(a * a - 1.0, 0.0))
    with np.errstate(divide="ignore"):
        return -np.log(r) / dt


def _half_power_points(spectra, omega, dt, nsamples, iterations=None, start=None):
    """Half-power estimate on each row of ``spectra`` (complex, on the grid ``omega``).

    From the current pole and the spectrum at ωd the residue R is estimated; then the
    conjugate term ``R*(1 − (z* e)ᴺ)/(1 − z* e)`` is subtracted, the transform of the
    constant ``−mean(decay)`` left by removing the record's mean is added back, and so
    is the main term's unrecorded tail ``R (z e)ᴺ/(1 − z e)`` (``e = e^{−jωTs}``, N the
    record length) — leaving the one-sided Lorentzian of an untruncated decay — and the
    −3 dB points are found again, ``iterations`` times.

    ``start``, a tuple of arrays (σ, ωd, R) from an earlier call on a nearly equal
    spectrum, resumes the iteration from there instead of from R = 0 (the same fixed
    point, reached in fewer rounds).

    Returns arrays (σ, ωd, ω1, ω2, residue R, correction) — the correction being what
    was subtracted from each row; NaN where a −3 dB point is missing.
    """
    iterations = MIRROR_ITERATIONS if iterations is None else iterations
    rows = np.atleast_2d(spectra)
    nrow, ncol = rows.shape
    cols = np.arange(ncol)
    step = omega[1] - omega[0]
    r_ = np.arange(nrow)

    def corrections(sigma, omega_d, ok, fallback, residue):
        # residue of the pole from the (uncorrected) spectrum at ωd, less the mirror and
        # the removed mean of the previous round; every term is the transform of the
        # *recorded* (truncated, n < N) decay
        safe_wd = np.where(ok, omega_d, fallback)
        fi = np.clip((safe_wd - omega[0]) / step, 0.0, ncol - 1.000001)
        i0 = fi.astype(int)
        frac = fi - i0
        x_wd = rows[r_, i0] * (1.0 - frac) + rows[r_, i0 + 1] * frac
        r = np.exp(-np.where(ok, sigma, 0.0) * dt)
        z = r * np.exp(1j * safe_wd * dt)
        e_wd = np.exp(-1j * safe_wd * dt)
        known = x_wd - _truncated(np.conj(residue), np.conj(z), e_wd, nsamples)
        known = known + _mean_of_mode(residue, z, nsamples) * _dirichlet(e_wd, nsamples)
        with np.errstate(divide="ignore", invalid="ignore"):
            residue = np.where(ok, known * (1.0 - r) / (1.0 - r ** nsamples), 0.0)
        e = np.exp(-1j * omega * dt)[None, :]
        zc, rc = z[:, None], residue[:, None]
        mirror = _truncated(np.conj(rc), np.conj(zc), e, nsamples)
        tail = rc * (zc * e) ** nsamples / (1.0 - zc * e)  # the main term's unrecorded tail
        mean = _mean_of_mode(residue, z, nsamples)[:, None] * _dirichlet(e, nsamples)
        corrected = rows - mirror + mean + tail
        return residue, corrected, rows - corrected

    if start is None:
        corrected = rows
        residue = np.zeros(nrow, dtype=complex)
        correction = np.zeros_like(rows)
    else:
        s0, wd0, residue = (np.asarray(v).reshape(nrow) for v in start)
        ok0 = np.isfinite(s0) & np.isfinite(wd0)
        residue, corrected, correction = corrections(s0, wd0, ok0, np.full(nrow, omega[ncol // 2]),
                                                     np.where(ok0, residue, 0.0).astype(complex))
    for it in range(iterations + 1):
        # work on the inverse power Q = 1/|X|², which is quadratic in ω − ωd for a
        # Lorentzian, so quadratic interpolation of Q is exact to high order
        power = corrected.real ** 2 + corrected.imag ** 2
        with np.errstate(divide="ignore"):
            inv = 1.0 / np.maximum(power, 1e-300)
        ipk = np.clip(np.argmin(inv[:, 1:-1], axis=1) + 1, 1, ncol - 2)
        q0, qm, qp = inv[r_, ipk], inv[r_, ipk - 1], inv[r_, ipk + 1]
        curv = qm - 2.0 * q0 + qp
        with np.errstate(divide="ignore", invalid="ignore"):
            u = np.where(curv > 0, np.clip(0.5 * (qm - qp) / curv, -0.5, 0.5), 0.0)
        qmin = q0 - 0.25 * (qm - qp) * u
        target = 2.0 * qmin
        above = inv > target[:, None]
        left = np.where(above & (cols[None, :] < ipk[:, None]), cols[None, :], -1).max(axis=1)
        right = np.where(above & (cols[None, :] > ipk[:, None]), cols[None, :], ncol).min(axis=1)
        ok = (left >= 1) & (right <= ncol - 2)
        w1 = _quadratic_crossing(inv, np.clip(left + 1, 1, ncol - 2), target, omega, -1)
        w2 = _quadratic_crossing(inv, np.clip(right - 1, 1, ncol - 2), target, omega, +1)
        w1 = np.where(ok, w1, np.nan)
        w2 = np.where(ok, w2, np.nan)
        previous = None if it == 0 else (sigma, omega_d)
        omega_d = 0.5 * (w1 + w2)
        sigma = _sigma_from_half_width(0.5 * (w2 - w1), dt)
        if it == iterations:
            break
        if previous is not None:
            with np.errstate(invalid="ignore"):
                settled = (np.abs(sigma - previous[0]) <= 1e-12 * omega_d) & \
                          (np.abs(omega_d - previous[1]) <= 1e-12 * omega_d)
            if np.all(settled | ~ok):
                break
        residue, corrected, correction = corrections(sigma, omega_d, ok, omega[ipk], residue)
    return sigma, omega_d, w1, w2, residue, correction


def _truncated(residue, z, e, nsamples):
    """Transform ``Σ_{n<N} R zⁿ e⁻ʲʷⁿᵀˢ = R(1 − (z e)ᴺ)/(1 − z e)`` with ``e = e^{−jωTs}``."""
    ze = z * e
    return residue * (1.0 - ze ** nsamples) / (1.0 - ze)


def _mean_of_mode(residue, z, nsamples):
    """Mean over n < N of ``R zⁿ + R* z*ⁿ``."""
    return 2.0 * np.real(residue * (1.0 - z ** nsamples) / (1.0 - z)) / nsamples


def _dirichlet(e, nsamples):
    """Transform of a unit constant over n < N: ``(1 − eᴺ)/(1 − e)``."""
    return (1.0 - e ** nsamples) / (1.0 - e)


def _quadratic_crossing(inv, centre, target, omega, direction):
    """Where the parabola through ``inv`` at ``centre − 1, centre, centre + 1`` reaches
    ``target``, on the side ``direction`` (−1 left, +1 right) of ``centre``."""
    r_ = np.arange(inv.shape[0])
    ym, y0, yp = inv[r_, centre - 1], inv[r_, centre], inv[r_, centre + 1]
    a = 0.5 * (yp - 2.0 * y0 + ym)
    b = 0.5 * (yp - ym)
    c = y0 - target
    with np.errstate(divide="ignore", invalid="ignore"):
        disc = np.sqrt(np.maximum(b * b - 4.0 * a * c, 0.0))
        roots = np.stack([(-b + disc) / (2.0 * a), (-b - disc) / (2.0 * a)])
        linear = -c / b
    roots = np.where(np.abs(a) > 1e-12 * np.abs(b), roots, linear[None, :])
    # the wanted root lies in [0, 1]·direction (between centre and the outer sample)
    score = np.abs(roots * direction - 0.5)
    u = np.take_along_axis(roots, np.argmin(np.where(np.isfinite(score), score, np.inf), axis=0)[None, :], 0)[0]
    u = np.clip(u * direction, 0.0, 1.0) * direction
    return omega[centre] + u * (omega[1] - omega[0])


def _local_transform(x, dt, omega):
    """DTFT ``Σ x_n e^{−jω n Ts}`` of ``x`` on the uniform grid ``omega`` (n from 0).

    Evaluated by the chirp z-transform — a zoomed, zero-padded FFT — with the points
    ``z_k = e^{j(ω0 + kΔω)Ts}``.
    """
    step = omega[1] - omega[0]
    return _czt(x, omega.size, np.exp(-1j * step * dt), np.exp(1j * omega[0] * dt))


def _czt(x, m, w, a):
    """Chirp z-transform ``X_k = Σ_n x_n (a w^{-k})^{-n}``, k < m, by Bluestein's algorithm.

    The same steps as ``scipy.signal.czt`` (importing ``scipy.signal`` costs about a
    quarter of a second of the command's start-up, more than this whole check):
    ``nk = (k² + n² − (k − n)²)/2`` turns the sum into a convolution with the chirp
    ``w^{k²/2}``, done by numpy's FFTs of a 5-smooth length (numpy rather than
    scipy.fft, whose import brings scipy.special: the decay job runs this check before
    its fit, while the command line imports lmfit in another thread, and imports nothing
    of scipy meanwhile).  ``tests/test_halfpower.py`` checks it against scipy.

    References
    ----------
    Rabiner, Schafer & Rader (1969), The chirp z-transform algorithm, IEEE Trans. Audio
    Electroacoust. 17(2), 86–92.
    """
    from .._fftlen import fast_length

    x = np.asarray(x)
    n = x.shape[-1]
    k = np.arange(max(m, n), dtype=np.min_scalar_type(-max(m, n) ** 2))
    wk2 = w ** (k ** 2 / 2)
    awk2 = a ** -k[:n] * wk2[:n]
    nfft = fast_length(n + m - 1)
    fwk2 = np.fft.fft(1 / np.hstack((wk2[n - 1:0:-1], wk2[:m])), nfft)
    y = np.fft.ifft(fwk2 * np.fft.fft(x * awk2, nfft))
    return y[..., n - 1:n + m - 1] * wk2[:m]


def _find_peaks(x):
    """Local maxima of ``x`` (the middle of a flat top), as ``scipy.signal.find_peaks(x)``
    without conditions: a run of equal samples higher than the samples on both sides."""
    x = np.asarray(x, dtype=float)
    if x.size < 3:
        return np.zeros(0, dtype=np.intp)
    starts = np.flatnonzero(np.concatenate(([True], x[1:] != x[:-1])))
    ends = np.concatenate((starts[1:], [x.size])) - 1
    level = x[starts]
    inner = np.arange(1, starts.size - 1)
    top = inner[(level[inner - 1] < level[inner]) & (level[inner + 1] < level[inner])]
    return (starts[top] + ends[top]) // 2


def _prominences(x, peaks):
    """Prominence of each peak (``scipy.signal.peak_prominences`` over the whole signal):
    its height above the higher of the lowest points on either side before a higher sample."""
    out = np.empty(len(peaks))
    for i, p in enumerate(peaks):
        higher_left = np.flatnonzero(x[:p] > x[p])
        left = higher_left[-1] + 1 if higher_left.size else 0
        higher_right = np.flatnonzero(x[p + 1:] > x[p])
        right = p + 1 + higher_right[0] if higher_right.size else x.size
        out[i] = x[p] - max(x[left:p + 1].min(), x[p:right].min())
    return out


def _mode_transform(sigma, omega_d, residue, omega, dt, nsamples):
    """Transform on ``omega`` of one recorded mode ``R zⁿ + R* z*ⁿ`` (n < N) less its mean."""
    z = np.exp(complex(-sigma, omega_d) * dt)
    e = np.exp(-1j * omega * dt)
    spectrum = _truncated(residue, z, e, nsamples) + _truncated(np.conj(residue), np.conj(z), e, nsamples)
    return spectrum - _mean_of_mode(residue, z, nsamples) * _dirichlet(e, nsamples)


def _noise_basis(omega, dt, nsamples, margin=24):
    """Map from the DFT of white noise to its transform on the local grid ``omega``.

    The noise transform at any ω is the Dirichlet interpolation of the record's own
    DFT lines ``W_m`` (independent, variance ``N s²``):
    ``E(ω) = (1/N) Σ_m W_m D(ω − 2πm/(N Ts))`` with
    ``D(θ) = Σ_n e^{−jθnTs} = e^{−jθ(N−1)Ts/2} sin(NθTs/2)/sin(θTs/2)`` [derived].
    Only the lines within the grid ± ``margin`` lines are kept (the kernel falls as
    1/distance, so the neglected variance is about 2/(π²·margin) ≈ 1 %); each grid
    column is then rescaled so that its variance is exactly ``N s²``.

    Returns the matrix ``M`` (lines × grid) such that ``E = W @ M`` for ``W`` the
    standard complex normal lines scaled by ``s·√N``.
    """
    spacing = 2.0 * math.pi / (nsamples * dt)
    m_lo = max(int(math.floor(omega[0] / spacing)) - margin, -nsamples // 2)
    m_hi = min(int(math.ceil(omega[-1] / spacing)) + margin, nsamples // 2)
    lines = np.arange(m_lo, m_hi + 1) * spacing
    theta = (omega[None, :] - lines[:, None]) * dt
    half = theta / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(np.abs(np.sin(half)) > 1e-12, np.sin(nsamples * half) / np.sin(half), float(nsamples))
    basis = ratio * np.exp(-1j * half * (nsamples - 1)) / nsamples
    return basis / np.sqrt(np.sum(np.abs(basis) ** 2, axis=0))[None, :]


def half_power(time_s, values, *, confidence: float = 0.95, frequencies_hz=None) -> MethodEstimate:
    """Natural frequency and damping of separated resonances by the half-power bandwidth.

    Parameters
    ----------
    time_s : array_like
        Uniformly spaced time stamps of the free-decay segment (s); the decay is taken
        to start at the first sample.
    values : array_like
        The free-decay samples (a constant offset is removed as the mean).
    confidence : float, default=0.95
        Confidence level of the intervals, as a probability.
    frequencies_hz : sequence of float, optional
        Evaluate the resonances nearest these frequencies (e.g. from another method);
        by default every peak higher than 10 % (−20 dB) of the largest, standing out of
        its surroundings by half its height and 8 noise levels, is evaluated.

    Returns
    -------
    MethodEstimate
        ``method="halfpower"``, one pole per resonance with ``ci.method ==
        "parametric bootstrap"``; ``details`` holds, per pole, ``f1_hz``, ``f2_hz``
        (half-power points), ``peak_hz``, ``lines_in_band`` (record length × band),
        and ``noise_std``, ``nfft``, ``bootstrap_samples``.

    Raises
    ------
    IdentificationError
        No resonance peak, no half-power points around any requested one, or a record
        too short for every resonance (see *Resolution* below).

    Notes
    -----
    *Spectrum.*  The transform of the free decay itself (offset removed, no window, the
    zero-padded FFT to find the peaks, then the same DTFT on a fine local grid — the
    FFT's own bins when they are fine enough, else a chirp z-transform) — for a
    displacement record after an impulse it is the displacement frequency response.
    A sampled decay ``x_n = R zⁿ + R* z*ⁿ`` has the transform
    ``R/(1 − z e^{−jωTs}) + R*/(1 − z* e^{−jωTs})``.  The first term's ``|X|²``
    is a symmetric (discrete) Lorentzian whose −3 dB points are ``ωd ± Δ`` with
    ``Δ → σ`` [derived]: so ``ωd = (ω1 + ω2)/2`` and σ follows from Δ exactly
    (``_sigma_from_half_width``), giving ``ζ = σ/√(σ² + ωd²) ≈ (f2 − f1)/(2fn)``.

    *Bias.*  The second (conjugate) term is what makes the textbook half-power figure
    depend on the spectrum type — REFERENCES.md: exact on velocity, +1 % at ζ = 0.1 on
    displacement, +5 % (ζ = 0.1) and +26 % (ζ = 0.2) on acceleration.  Here it is
    estimated from the current pole and residue and subtracted before the −3 dB points
    are taken (``MIRROR_ITERATIONS`` times), which removes that bias for any initial
    condition of a single mode; with several modes the other modes' modelled
    transforms are subtracted as well.  A record that ends before the decay has died is
    completed the same way: the main term's unrecorded tail, computed from the current
    pole and residue, is added back.  What remains: overlap of modes too close to
    separate (hence the separation check) and the noise floor, which widens the band at
    low SNR (corrected to first order by the bootstrap below).

    *Intervals.*  Parametric bootstrap of the spectrum estimate: the noise standard
    deviation ``s`` is the RMS residual of the record about the decay rebuilt from the
    estimated poles and residues (``N − 4M − 1`` degrees of freedom for M modes; any
    misfit makes it larger, hence the intervals conservative — but when it exceeds 1.5×
    the robust estimate, e.g. because only some modes were evaluated, the robust estimate
    is used); replicate spectra are the
    observed local spectrum plus draws of the transform of white noise of std ``s``
    (Dirichlet interpolation of independent DFT lines, ``_noise_basis``), the
    half-power points are found again on each (keeping the point estimate's mirror and
    offset correction),
    and the basic (reflected) bootstrap ``2ŝ − s*`` gives percentile intervals on
    Re s, Im s, fn and ζ.  Adding the noise on top of the noisy spectrum reproduces the
    estimator's spread and, to first order, its noise-floor bias, which the reflection
    removes.  The replicates use a fixed seed, so results are reproducible.

    *Resolution.*  A complete decay needs no window, so the zero-padded transform is
    its exact DTFT and the raw line spacing 1/T does not limit the band.  A truncated
    record's smearing is undone by the tail completion only as far as the one-mode
    model holds, so ``"truncated decay"`` is warned, and ``"few spectral lines"``
    (fewer than 5 raw lines inside the band) when the record is also truncated.  A
    resonance whose decay falls only to more than 10 % (``RECORDED_MAX``) within the
    record is not evaluated (a ``"record too short"`` warning; an
    :class:`IdentificationError` when no resonance is left): there the band is the
    record's window, and the completion cannot separate damping from truncation.

    References
    ----------
    Half-power bandwidth: common practice (e.g. ASTM E756-05 for the loss factor);
    Efron & Tibshirani, *An Introduction to the Bootstrap*, 1993 (basic bootstrap).
    """
    from ..conditioning._trend import robust_noise_std
    from ..poles import pole_with_sample_intervals

    level = check_confidence(confidence)
    t, x = check_time_series(time_s, values, min_length=8)
    dt = (t[-1] - t[0]) / (t.size - 1)
    if not dt > 0:
        raise ParameterValueError("time_s must increase")
    requested = None
    if frequencies_hz is not None:
        requested = check_array_1d("frequencies_hz", np.atleast_1d(frequencies_hz), min_length=1)
        if np.any(requested <= 0) or np.any(requested >= 0.5 / dt):
            raise ParameterValueError(
                f"frequencies_hz must lie between 0 and the Nyquist frequency {0.5 / dt:g} Hz; "
                f"got {requested.tolist()}")
    x0 = x - np.mean(x)
    n = x0.size
    duration = n * dt
    noise = robust_noise_std(x)  # for the peak search; the bootstrap uses the fit residual
    if not np.any(x0):
        raise IdentificationError("no resonance: the signal is constant")

    nfft = int(2 ** math.ceil(math.log2(max(4 * n, 4096))))
    nfft = min(nfft, 2 ** 22) if n <= 2 ** 22 else int(2 ** math.ceil(math.log2(n)))
    spec = np.fft.rfft(x0, nfft)
    mag = np.abs(spec)
    freqs = np.fft.rfftfreq(nfft, dt)
    low = int(np.searchsorted(freqs, 2.0 / duration))  # skip the DC lobe
    peaks = _find_peaks(mag)
    peaks = peaks[peaks >= max(low, 1)]
    if peaks.size == 0:
        raise IdentificationError("no resonance: the spectrum has no peak above zero frequency")
    noise_mag = noise * math.sqrt(n)
    significant = peaks[mag[peaks] > 4.0 * noise_mag]  # pure noise: P(|X| > 4 s√n) = e⁻¹⁶ per line
    end_rms = float(np.std(x0[-max(8, n // 20):]))
    truncated = end_rms > 3.0 * noise + 1e-12 * float(np.max(np.abs(x0)))
    if requested is None:
        top = float(mag[significant].max()) if significant.size else 0.0
        chosen = [int(p) for p in significant if mag[p] >= RELATIVE_HEIGHT * top]
        # a peak must stand out of its neighbour's skirt and of the noise: prominence at
        # least half its height and 8 noise levels (noise makes bumps of a few on skirts)
        if chosen:
            prom = _prominences(mag, np.array(chosen))
            chosen = [p for p, pr in zip(chosen, prom) if pr >= max(0.5 * mag[p], 8.0 * noise_mag)]
        if truncated and chosen:
            # a truncated record has sidelobes every 1/T: keep the larger of any peaks
            # closer than 4/T, which such a record cannot resolve anyway
            kept = []
            for p in sorted(chosen, key=lambda k: -mag[k]):
                if all(abs(freqs[p] - freqs[q]) >= 4.0 / duration for q in kept):
                    kept.append(p)
            chosen = sorted(kept)
    else:  # the resonance nearest each requested frequency, among those above the noise
        chosen = sorted({int(significant[np.argmin(np.abs(freqs[significant] - f))]) for f in requested}) \
            if significant.size else []
    if not chosen:
        raise IdentificationError(
            f"no resonance above the noise: largest peak {float(mag[peaks].max()):.3g} against a noise "
            f"level {noise_mag:.3g} in the spectrum")

    rng = np.random.default_rng(BOOTSTRAP_SEED)
    warnings, poles, per_pole = [], [], []
    if truncated:
        warnings.append(
            f"truncated decay: the record ends with a standard deviation of {end_rms:.3g}, "
            f"{end_rms / max(noise, 1e-300):.1f}× the noise; its unrecorded tail is taken from the model")
    # pass 1: point estimates of every resonance
    found = []
    for ipk in chosen:
        fpk = float(freqs[ipk])
        level_half = mag[ipk] / math.sqrt(2.0)
        lo = ipk
        while lo > 0 and mag[lo] > level_half:
            lo -= 1
        hi = ipk
        while hi < mag.size - 1 and mag[hi] > level_half:
            hi += 1
        bw_coarse = max(freqs[hi] - freqs[lo], 2.0 * (freqs[1] - freqs[0]))
        span = GRID_HALF_SPAN * bw_coarse
        others = [abs(freqs[p] - fpk) for p in chosen if p != ipk]
        if others:  # keep a neighbouring peak out of this one's grid
            span = min(span, 0.5 * min(others))
        f_lo = max(fpk - span, 0.5 * freqs[1])
        f_hi = min(fpk + span, 0.5 / dt)
        df = freqs[1] - freqs[0]
        wanted = bw_coarse / GRID_PER_BANDWIDTH
        k_lo, k_hi = int(math.ceil(f_lo / df)), int(math.floor(f_hi / df))
        if df <= wanted and k_hi - k_lo >= 50:
            # the zero-padded FFT is already fine enough: it *is* the DTFT on its grid
            stride = max(1, int(wanted // df))
            bins = np.arange(k_lo, k_hi + 1, stride)
            omega = 2.0 * math.pi * freqs[bins]
            local = spec[bins]
        else:
            npts = int(min(max(2 * GRID_HALF_SPAN * GRID_PER_BANDWIDTH, 50), 600))
            omega = 2.0 * math.pi * np.linspace(f_lo, f_hi, npts)
            local = _local_transform(x0, dt, omega)
        sigma, omega_d, w1, w2, residue, correction = _half_power_points(local[None, :], omega, dt, n)
        sigma, omega_d, w1, w2 = float(sigma[0]), float(omega_d[0]), float(w1[0]), float(w2[0])
        if not (math.isfinite(sigma) and math.isfinite(omega_d)):
            warnings.append(f"no half-power points: the peak near {fpk:.4g} Hz has no −3 dB points "
                            f"inside ±{GRID_HALF_SPAN:g} bandwidths (modes not separated?)")
            continue
        found.append((ipk, fpk, omega, local, sigma, omega_d, w1, w2, complex(residue[0]), correction[0]))
    if not found:
        raise IdentificationError("no resonance with half-power points: "
                                  + "; ".join(w.split(": ", 1)[1] for w in warnings if w.startswith("no half")))

    # a resonance whose decay falls only to more than RECORDED_MAX within the record is
    # not evaluated: its −3 dB band is then set by the record's length (the window), and
    # the tail completion cannot tell damping from truncation — such estimates came out
    # 1.5–60 times too high, with intervals that say nothing of it (tests/test_halfpower.py)
    too_short = [math.exp(-item[4] * duration) > RECORDED_MAX for item in found]
    short = [item for item, drop in zip(found, too_short) if drop]
    found = [item for item, drop in zip(found, too_short) if not drop]
    # (σ from a window-widened band is too high, so the recorded fraction is at least this)
    fractions = [f"near {item[1]:.4g} Hz the decay falls only to {100 * math.exp(-item[4] * duration):.0f} % "
                 f"or more within the record" for item in short]
    why = (f"({100 * RECORDED_MAX:.0f} % or less needed); the half-power band is then set by the "
           f"record's length, not by damping")
    reasons = [f"record too short: {text} {why}; not evaluated" for text in fractions]
    if not found:
        raise IdentificationError("record too short for the half-power bandwidth: "
                                  + ", ".join(fractions) + " " + why)
    warnings.extend(reasons)

    # with several modes, each mode's spectrum also holds the others' skirts: subtract
    # their modelled transforms (both conjugate terms, less their part of the removed
    # mean) and estimate again
    if len(found) > 1:
        for _ in range(MODE_PASSES):
            updated = []
            for i, item in enumerate(found):
                omega, local = item[2], item[3]
                others = np.zeros(omega.size, dtype=complex)
                for j, other in enumerate(found):
                    if j != i:
                        others += _mode_transform(other[4], other[5], other[8], omega, dt, n)
                sig_i, wd_i, w1_i, w2_i, res_i, corr_i = _half_power_points(
                    (local - others)[None, :], omega, dt, n, start=(item[4], item[5], item[8]))
                if not (np.isfinite(sig_i[0]) and np.isfinite(wd_i[0])):
                    updated.append(item)
                    continue
                updated.append(item[:4] + (float(sig_i[0]), float(wd_i[0]), float(w1_i[0]), float(w2_i[0]),
                                           complex(res_i[0]), corr_i[0] + others))
            found = updated

    # noise for the bootstrap: the residual of the decay rebuilt from the estimates
    # (x̂_n = Σ 2 Re(R zⁿ) about the record mean); a misfit only makes it larger
    tn = np.arange(n) * dt
    model = np.zeros(n)
    for (_, _, _, _, sigma, omega_d, _, _, res, _) in found:
        model += 2.0 * np.exp(-sigma * tn) * (res.real * np.cos(omega_d * tn) - res.imag * np.sin(omega_d * tn))
    resid = x0 - (model - np.mean(model))
    noise_resid = float(np.sqrt(np.sum(resid ** 2) / max(n - 4 * len(found) - 1, 1)))
    noise_source = "fit residual"
    if noise_resid > 1.5 * noise:
        # the residual holds signal the estimates do not model (modes not evaluated,
        # drift): the robust estimate is closer to the noise near the resonance
        noise_source = "robust estimate (the fit residual holds unmodelled signal)"
    else:
        noise = noise_resid

    # pass 2: intervals
    for (ipk, fpk, omega, local, sigma, omega_d, w1, w2, res, correction) in found:
        basis = _noise_basis(omega, dt, n)
        draws = (rng.standard_normal((BOOTSTRAP_SAMPLES, basis.shape[0]))
                 + 1j * rng.standard_normal((BOOTSTRAP_SAMPLES, basis.shape[0]))) * math.sqrt(n / 2.0)
        # replicates keep the point estimate's mirror/offset correction (it moves by a
        # negligible second-order amount between replicates), so one pass suffices
        replicas = (local - correction)[None, :] + noise * (draws @ basis)
        bs_sigma, bs_wd = _half_power_points(replicas, omega, dt, n, iterations=0)[:2]
        s_hat = complex(-sigma, omega_d)
        boot = -bs_sigma + 1j * bs_wd
        boot = boot[np.isfinite(boot)]
        f1, f2 = w1 / (2 * math.pi), w2 / (2 * math.pi)
        lines = (f2 - f1) * duration
        if boot.size < 20:
            warnings.append(f"no interval: the half-power points near {fpk:.4g} Hz are lost in the "
                            f"noise in most bootstrap replicates")
            from ..poles import Pole

            pole = Pole(-sigma, omega_d, 2.0 * abs(res))
        else:
            pole = pole_with_sample_intervals(s_hat, 2.0 * s_hat - boot, level,
                                              amplitude=2.0 * abs(res),
                                              method="parametric bootstrap")
            lost = 1.0 - boot.size / BOOTSTRAP_SAMPLES
            if lost > 0.05:
                warnings.append(f"low SNR: half-power points near {fpk:.4g} Hz not found in "
                                f"{100 * lost:.0f} % of bootstrap replicates")
        if truncated and lines < MIN_LINES:
            warnings.append(
                f"few spectral lines: only {lines:.1f} lines of the record's resolution inside "
                f"the half-power band near {fpk:.4g} Hz ({MIN_LINES:g} or more advised)")
        neighbours = [p for p in chosen if p != ipk and mag[p] >= RELATIVE_HEIGHT * mag[ipk]
                      and abs(freqs[p] - fpk) < 3.0 * (f2 - f1) + (freqs[1] - freqs[0])]
        if neighbours:
            warnings.append(
                f"modes not separated: another peak at {freqs[neighbours[0]]:.4g} Hz lies within "
                f"3 bandwidths of {fpk:.4g} Hz; half-power damping is unreliable there")
        poles.append(pole)
        per_pole.append({"peak_hz": fpk, "f1_hz": f1, "f2_hz": f2, "lines_in_band": lines,
                         "bootstrap_used": int(boot.size)})
    order = np.argsort([p.natural_frequency_hz for p in poles])  # MethodEstimate sorts the poles too
    details = {"resonances": [per_pole[i] for i in order], "noise_std": noise,
               "noise_source": noise_source, "nfft": nfft,
               "bootstrap_samples": BOOTSTRAP_SAMPLES, "bootstrap_seed": BOOTSTRAP_SEED}
    return MethodEstimate("halfpower", tuple(poles), tuple(warnings), details)
