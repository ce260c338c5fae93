"""Matrix pencil (Hua & Sarkar 1990): poles of a sum of damped exponentials from one record.

Steps: block-average decimation to ~15 samples per period of the fastest significant
mode; scaled Hankel matrix; SVD; order from the singular values above the noise edge;
poles from the truncated right singular vectors; amplitudes by least squares on the
Vandermonde matrix; spurious poles dropped; linearised (Cramér–Rao at the estimate)
intervals.
"""
from __future__ import annotations

import math

import numpy as np

from .._errors import IdentificationError, ParameterValueError
from .._validate import check_confidence, check_int, check_time_series
from ._common import MethodEstimate

__all__ = ["matrix_pencil", "choose_decimation", "block_decimate", "block_gain"]

#: target samples per period of the fastest significant mode after decimation
#: (Hua & Sarkar work best well away from z = 1; 10–20 is common practice, no source)
SAMPLES_PER_PERIOD = 15
#: at most this many (decimated) samples enter the Hankel matrix, and L is capped,
#: so the SVD stays fast on long records; the nonlinear fit uses the whole record
MAX_PENCIL_SAMPLES = 2000
MAX_PENCIL_PARAMETER = 200
#: a mode is kept when its energy over the analysed samples exceeds this many noise
#: variances (amplitude detection at about 5 standard deviations; common practice)
MIN_MODE_ENERGY = 25.0
#: oscillatory poles above this damping ratio are not taken as modes of a free decay
MAX_DAMPING_RATIO = 0.9


# -- decimation -----------------------------------------------------------------------
def choose_decimation(values, sample_time_s, *, samples_per_period=SAMPLES_PER_PERIOD):
    """Decimation factor that leaves about ``samples_per_period`` samples per period of the
    fastest significant spectral peak (20 dB above the median floor, within 60 dB of the
    largest peak, 15 dB prominent), or of the frequency below which 99 % of the power
    above the floor lies, whichever is higher.  Returns ``(factor, fastest_hz)``; factor 1
    means no decimation."""
    y = np.asarray(values, dtype=float)
    n = y.size
    if n < 128:
        return 1, float("nan")
    seg = y[: 1 << 18]
    seg = seg - seg.mean()
    # a free decay starts at full amplitude: taper only its last 10 % (half cosine)
    taper = np.ones(seg.size)
    k = max(seg.size // 10, 1)
    taper[-k:] = 0.5 * (1 + np.cos(np.linspace(0, np.pi, k)))
    power = np.abs(np.fft.rfft(seg * taper)) ** 2
    power[0] = 0.0
    peak = power.max()
    if not peak > 0:
        return 1, float("nan")
    threshold = max(100.0 * np.median(power[1:]), 1e-6 * peak)
    # spectral peaks 20 dB above the floor and 15 dB above their surroundings: the modes
    # (the block-mean filter preserves poles exactly, so only the modes' frequencies matter)
    log_power = np.log10(np.maximum(power, peak * 1e-300))
    top = _fastest_prominent_peak(log_power, math.log10(threshold), 1.5)
    # ... and never below the frequency holding 99 % of the power above the floor (a
    # heavily damped mode has a broad peak that need not be prominent)
    excess = np.maximum(power - 2.0 * np.median(power[1:]), 0.0)
    cum = np.cumsum(excess)
    bulk = int(np.searchsorted(cum, 0.99 * cum[-1])) if cum[-1] > 0 else 0
    if top is None and bulk == 0:
        return 1, float("nan")
    fastest_hz = (max(top or 0, bulk) + 1) / (seg.size * sample_time_s)
    factor = int(1.0 / (sample_time_s * samples_per_period * fastest_hz))
    factor = max(1, min(factor, n // 64))
    return factor, float(fastest_hz)


def _fastest_prominent_peak(log_power, height, prominence, max_checks=200):
    """Index of the highest-frequency local maximum above ``height`` whose prominence
    (height above the higher of its two bases) reaches ``prominence``; None if none."""
    lp = log_power
    inner = lp[1:-1]
    cand = np.flatnonzero((inner > lp[:-2]) & (inner >= lp[2:]) & (inner > height)) + 1
    if cand.size == 0:
        return None
    # running extremes from either end: whether a side holds a higher sample at all, and
    # its lowest point when it does not (a spectrum falling towards high frequency leaves
    # most candidates with no higher sample on the right), without a scan per candidate
    reverse = lp[::-1]
    suffix_max = np.maximum.accumulate(reverse)[::-1]  # max(lp[j:])
    suffix_min = np.minimum.accumulate(reverse)[::-1]  # min(lp[j:])
    prefix_max = np.maximum.accumulate(lp)  # max(lp[:j + 1])
    prefix_min = np.minimum.accumulate(lp)  # min(lp[:j + 1])
    for k in cand[::-1][:max_checks]:
        if k + 1 < lp.size and suffix_max[k + 1] > lp[k]:
            right_base = lp[k:_first_higher(lp, k, +1) + 1].min()
        else:
            right_base = suffix_min[k]
        if k > 0 and prefix_max[k - 1] > lp[k]:
            left_base = lp[_first_higher(lp, k, -1):k + 1].min()
        else:
            left_base = prefix_min[k]
        if lp[k] - max(left_base, right_base) >= prominence:
            return int(k)
    return None


def _first_higher(x, k, direction, first_window=16):
    """Index of the nearest sample beyond ``k`` (``direction`` +1 right, −1 left) higher
    than ``x[k]``, or None.  Searched in windows growing fourfold from ``first_window``:
    the same index as one scan of the whole side, but a sidelobe usually finds its higher
    neighbour in the first window, with calls on a few samples.  (A numpy call on a few
    hundred samples or more lets another Python thread run, and may then wait up to the
    switch interval to resume: about 0.5 ms while the command line imports lmfit in
    another thread, identify/cli/_warmup.py.)"""
    level, width = x[k], first_window
    if direction > 0:
        lo = k + 1
        while lo < x.size:
            hi = min(x.size, lo + width)
            hit = np.flatnonzero(x[lo:hi] > level)
            if hit.size:
                return lo + int(hit[0])
            lo, width = hi, 4 * width
        return None
    hi = k
    while hi > 0:
        lo = max(0, hi - width)
        hit = np.flatnonzero(x[lo:hi] > level)
        if hit.size:
            return lo + int(hit[-1])
        hi, width = lo, 4 * width
    return None


def block_decimate(time_s, values, factor):
    """Means of consecutive blocks of ``factor`` samples, stamped at the block centres.

    A q-sample boxcar followed by keeping every q-th sample: an FIR anti-alias filter with
    nulls at every multiple of the new sample rate.  A pole is preserved exactly (the
    filter multiplies ``e^(st)`` by :func:`block_gain`); white noise stays white with
    variance divided by q.  The last ``len % factor`` samples are dropped.
    """
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(values, dtype=float)
    q = int(factor)
    if q <= 1:
        return t, y
    n = (y.size // q) * q
    y_d = y[:n].reshape(-1, q).mean(axis=1)
    t_d = t[:n].reshape(-1, q).mean(axis=1)
    return t_d, y_d


def block_gain(s, factor, sample_time_s):
    """Complex gain of the centred q-sample mean on ``e^(st)``:
    ``G(s) = (1/q)·Σ_j exp(s·(j - (q-1)/2)·Ts)``."""
    q = int(factor)
    if q <= 1:
        return complex(1.0)
    j = np.arange(q) - (q - 1) / 2.0
    return complex(np.mean(np.exp(complex(s) * j * sample_time_s)))


# -- order selection ---------------------------------------------------------------------
def _mp_edge_over_median(m, n):
    """Largest over median singular value of an m×n white-noise matrix (Marchenko–Pastur)."""
    c = min(m, n) / max(m, n)
    a, b = (1 - math.sqrt(c)) ** 2, (1 + math.sqrt(c)) ** 2
    lam = np.linspace(a, b, 4001)[1:-1]
    dens = np.sqrt((b - lam) * (lam - a)) / (2 * math.pi * c * lam)
    cdf = np.cumsum(dens)
    cdf /= cdf[-1]
    lam_med = float(np.interp(0.5, cdf, lam))
    return math.sqrt(b / lam_med)


def _noise_edge(sv, m, n, max_rank):
    tail = sv[min(max_rank, sv.size // 2):]
    if tail.size == 0:
        return 0.0
    return 1.3 * _mp_edge_over_median(m, n) * float(np.median(tail))


def _pencil_eigs(vh, order):
    v = vh[:order]
    v1, v2 = v[:, :-1], v[:, 1:]
    a = v2 @ np.linalg.pinv(v1)
    return np.linalg.eigvals(a)


def _vandermonde_amplitudes(z, y):
    k = np.arange(y.size)
    with np.errstate(over="ignore", invalid="ignore"):
        logz = np.log(z.astype(complex))
        expo = np.outer(k, logz)
        expo.real = np.minimum(expo.real, 700.0)
        vander = np.exp(expo)
    h, *_ = np.linalg.lstsq(vander, y.astype(complex), rcond=None)
    return h, vander


# -- the method ------------------------------------------------------------------------------
def matrix_pencil(time_s, values, *, order="auto", confidence=0.95, max_modes=10,
                  samples_per_period=SAMPLES_PER_PERIOD) -> MethodEstimate:
    """Poles of a free-decay record by the matrix-pencil method.

    Parameters
    ----------
    time_s : array_like
        Uniform sample times in seconds.
    values : array_like
        The record (an offset or slow drift is tolerated: it becomes real poles near
        ``z = 1`` that are reported in ``details["real_terms"]``, not as modes).
    order : "auto" or int, default="auto"
        Number of complex exponentials in the pencil (a real damped sinusoid is two).
        ``"auto"`` counts the singular values above the noise edge.
    confidence : float, default=0.95
        Level of the linearised intervals, as a probability.
    max_modes : int, default=10
        Largest number of oscillatory modes looked for.
    samples_per_period : int, default=15
        Target samples per period of the fastest significant mode after decimation.

    Returns
    -------
    MethodEstimate
        ``method="pencil"``; poles with ``imag > 0`` (one per conjugate pair) and
        ``"delta"`` intervals; ``details`` holds the decimation factor, the chosen order,
        the leading singular values, the dropped poles with the reason, the real terms and
        ``order_scan`` (poles at neighbouring orders, for a stability plot).

    Raises
    ------
    IdentificationError
        When no oscillatory pole stands above the noise.

    Notes
    -----
    With samples ``x_k = Σ h_i z_i^k`` and the Hankel matrix ``Y[r, c] = x_{r+c}`` of
    ``(N-L) × (L+1)`` (``L ≈ N/3``), the SVD ``Y = U S Vᴴ`` truncated to ``M`` terms gives
    ``V₂ = A V₁`` (``V₁``, ``V₂``: ``Vᴴ`` without its last / first column); the
    eigenvalues of ``A = V₂ V₁⁺`` are the ``z_i``, and ``s_i = ln(z_i)/Ts`` (the decay from
    ``ln|z|``).  Amplitudes solve the Vandermonde system ``x_k = Σ h_i z_i^k`` by least
    squares.  Intervals: the model's Jacobian ``J`` in ``(σ, ω, c, d)`` per mode plus
    offset and drift, evaluated at the pencil estimate, ``cov = s²(JᵀJ)⁻¹`` with
    ``s² = RSS/(N - p)`` — the Cramér–Rao bound at the estimate (Kay 1993); the pencil
    comes within about 10 % of it, so these intervals are slightly optimistic.

    Decimation is a block mean of ``q`` samples, an FIR filter that preserves each pole
    exactly; amplitudes are corrected for its gain.

    References
    ----------
    Hua, Y. & Sarkar, T. K. (1990). Matrix pencil method for estimating parameters of
    exponentially damped/undamped sinusoids in noise. IEEE Trans. ASSP 38(5), 814–824.
    Sarkar, T. K. & Pereira, O. (1995). Using the matrix pencil method to estimate the
    parameters of a sum of complex exponentials. IEEE Antennas Propag. Mag. 37(1), 48–55.
    """
    t, y = check_time_series(time_s, values, min_length=8)
    level = check_confidence(confidence)
    max_modes = check_int("max_modes", max_modes, minimum=1, maximum=50)
    samples_per_period = check_int("samples_per_period", samples_per_period, minimum=4)
    if not (isinstance(order, str) and order.lower() == "auto"):
        order = check_int("order", order, minimum=1)
    ts = float((t[-1] - t[0]) / (t.size - 1))
    if not ts > 0:
        raise ParameterValueError("time_s must increase")

    factor, fastest_hz = choose_decimation(y, ts, samples_per_period=samples_per_period)
    # only the first MAX_PENCIL_SAMPLES decimated samples are used: decimate just those
    head = MAX_PENCIL_SAMPLES * factor
    t_d, y_d = block_decimate(t[:head], y[:head], factor)
    ts_d = ts * factor
    n_use = min(y_d.size, MAX_PENCIL_SAMPLES)
    t_p, y_p = t_d[:n_use], y_d[:n_use]
    if n_use < 12:
        raise IdentificationError(f"{n_use} samples are too few for the matrix pencil (12 or more needed)")
    scale = float(np.max(np.abs(y_p))) or 1.0
    ys = y_p / scale
    big_l = int(min(n_use // 3, MAX_PENCIL_PARAMETER))
    big_l = max(big_l, 2)
    hankel = np.lib.stride_tricks.sliding_window_view(ys, big_l + 1)
    # the right singular vectors and values only: QR first, then the SVD of the small R
    r_factor = np.linalg.qr(np.ascontiguousarray(hankel), mode="r")
    _, sv, vh = np.linalg.svd(r_factor)
    max_rank = min(2 * max_modes + 4, big_l - 1)
    edge = _noise_edge(sv, hankel.shape[0], hankel.shape[1], max_rank)
    floor = max(edge, 1e-10 * sv[0])
    if order == "auto":
        chosen = int(np.count_nonzero(sv[:max_rank] > floor))
        rule = "singular values above the noise edge"
    else:
        chosen = min(int(order), big_l - 1)
        rule = "given"
    if chosen == 0:
        raise IdentificationError(
            "no oscillation found above the noise: no singular value of the data matrix stands "
            "above the noise level")

    # order scan (poles at neighbouring orders) for the stability check and plot
    order_scan = []
    for k in range(max(1, chosen - 2), min(chosen + 7, big_l - 1) + 1):
        zk = _pencil_eigs(vh, k)
        zk = zk[np.abs(zk) > 0]
        sk = np.log(zk.astype(complex)) / ts_d
        sk = sk[sk.imag >= -1e-12]
        order_scan.append({"order": k, "poles": [[float(p.real), float(abs(p.imag))] for p in sk]})

    z = _pencil_eigs(vh, chosen)
    z = z[np.abs(z) > 0]
    h, vander = _vandermonde_amplitudes(z, ys)
    recon = (vander @ h).real
    resid = ys - recon
    noise_var = float(resid @ resid) / max(n_use - 2 * chosen, 1)
    energies = np.sum(np.abs(vander * h) ** 2, axis=0)  # per exponential, scaled units

    s_all = np.log(z.astype(complex)) / ts_d
    duration = float(t[-1] - t[0])
    nyq = math.pi / ts_d
    kept, dropped, real_terms = [], [], []
    tiny = 1e-9
    for zi, si, hi, ei in zip(z, s_all, h, energies):
        if zi.imag < -tiny * abs(zi):
            continue  # the conjugate of a pole handled with imag > 0
        if abs(zi.imag) <= tiny * abs(zi):
            if zi.real > 0:
                real_terms.append({"real": float(si.real), "amplitude": float(hi.real * scale)})
            else:
                dropped.append({"real": float(si.real), "imag": float(nyq), "reason": "at the Nyquist frequency"})
            continue
        pole_energy = 2.0 * ei  # both members of the pair
        zeta = -si.real / abs(si)
        if si.imag * duration < math.pi:  # under half a cycle over the record: a trend
            real_terms.append({"real": float(si.real), "imag": float(si.imag),
                               "amplitude": float(2 * abs(hi) * scale),
                               "note": "under half a cycle over the record: taken as baseline"})
            continue
        reason = None
        if factor > 1 and si.imag > 0.8 * nyq:
            reason = "above the decimation filter's band"
        elif si.imag >= 0.999 * nyq:
            reason = "at the Nyquist frequency"
        elif zeta > MAX_DAMPING_RATIO or -si.real * ts_d > 1.0:
            reason = "unphysical damping"
        elif pole_energy < MIN_MODE_ENERGY * noise_var and pole_energy < 1e8 * noise_var:
            reason = "negligible amplitude"
        if reason:
            dropped.append({"real": float(si.real), "imag": float(si.imag), "reason": reason})
        else:
            kept.append((complex(si), complex(hi) * scale))

    # linearised intervals at the pencil estimate
    from ..poles import normal_quantile, pole_with_delta_intervals
    from ._nls import linearised_covariance, model_jacobian

    tau = t_p - t_p[0]
    poles, growing = [], []
    if kept:
        sigma = np.array([-s.real for s, _ in kept])
        omega = np.array([s.imag for s, _ in kept])
        c = np.array([2 * a.real for _, a in kept])
        d = np.array([-2 * a.imag for _, a in kept])
        jac = model_jacobian(tau, sigma, omega, c, d, drift=True)
        dof = max(n_use - jac.shape[1], 1)
        s2 = float((resid * scale) @ (resid * scale)) / dof
        cov = linearised_covariance(jac, s2)
        zq = normal_quantile(level)
        for i, (s, a) in enumerate(kept):
            k = 4 * i
            block = cov[k:k + 2, k:k + 2].copy()
            block[0, 1] = block[1, 0] = -block[0, 1]
            # amplitude referred to the first raw sample, corrected for the block mean
            amp_c = 2 * a / block_gain(s, factor, ts) * np.exp(-s * (t_p[0] - t[0]))
            if s.real - zq * math.sqrt(max(block[0, 0], 0.0)) > 0:
                growing.append({"real": float(s.real), "imag": float(s.imag),
                                "reason": "growing beyond the noise"})
                continue
            poles.append(pole_with_delta_intervals(s, block, level, amplitude=abs(amp_c)))
    dropped.extend(growing)
    if not poles and growing:
        g = max(growing, key=lambda d: d["imag"])
        raise IdentificationError(
            f"no decaying oscillation: the record grows at {g['imag'] / (2 * math.pi):.4g} Hz "
            f"(Re s = {g['real']:.3g} 1/s, interval above zero); this is not a free decay")
    if not poles:
        raise IdentificationError(
            "no oscillation found above the noise: the matrix pencil found no oscillatory pole "
            "with significant amplitude and physical damping")

    stability = []
    for p in poles:
        hits = 0
        for entry in order_scan:
            if entry["order"] < chosen:
                continue
            cand = np.array([complex(r, i) for r, i in entry["poles"]]) if entry["poles"] else np.array([])
            if cand.size and np.min(np.abs(cand - p.s)) <= 0.01 * abs(p.s):
                hits += 1
        stability.append(hits)
    n_high = sum(1 for e in order_scan if e["order"] >= chosen)

    warnings = []
    if len(poles) > max_modes:
        poles = sorted(poles, key=lambda p: -(p.amplitude or 0.0))[:max_modes]
        warnings.append(f"many modes: more than {max_modes} oscillatory poles; the {max_modes} largest kept")
    details = {
        "decimation_factor": int(factor),
        "fastest_significant_hz": fastest_hz,
        "sample_time_s": ts_d,
        "samples_used": int(n_use),
        "pencil_parameter": big_l,
        "order": int(chosen),
        "order_rule": rule,
        "singular_values": [float(v) for v in sv[: max_rank + 4]],
        "noise_edge": float(floor),
        "noise_std": math.sqrt(noise_var) * scale,
        "real_terms": real_terms,
        "dropped": dropped,
        "stable_orders": stability,
        "orders_scanned_from_chosen": n_high,
        "order_scan": order_scan,
    }
    return MethodEstimate("pencil", tuple(poles), tuple(warnings), details)

