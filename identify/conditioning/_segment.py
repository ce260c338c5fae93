"""Free-decay segment detection: quiet pre-trigger, impact or release, ring-down, end.

    detect_decay_segment   what part of a record is the free decay, as a :class:`DecaySegment`
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from statistics import NormalDist

import numpy as np

from .._errors import IdentificationError, ParameterValueError
from .._fftlen import fast_length
from .._validate import check_positive, check_time_series

__all__ = ["DecaySegment", "detect_decay_segment"]

_MAD_TO_STD = 1.482602218505602
#: The trigger threshold is at least this many noise std from the baseline (and higher
#: for long quiet stretches, so that noise alone crosses it with < 1 % probability).
TRIGGER_FACTOR = 5.0
#: a pre-trigger window shorter than 5 % of the record is accepted only when the next
#: window of the same length is this many times more active (common practice, no source).
QUIET_JUMP = 10.0
#: Walking back from the threshold crossing, a sample within this many noise std of
#: the baseline is taken as the last quiet sample (the onset).
ONSET_FACTOR = 3.0
#: A first window whose spread exceeds this fraction of the largest deviation is not
#: quiet: the record starts in motion.
QUIET_FRACTION = 0.2
#: The ring-down starts once the smoothed envelope falls below this fraction of its peak.
EXCITATION_DROP = 0.95
#: The ring-down ends where the smoothed envelope falls to this many noise std.
END_FACTOR = 3.0


@dataclass(frozen=True)
class DecaySegment:
    """The free-decay part of a record and how it was chosen.

    Parameters
    ----------
    start_s, end_s : float
        The ring-down segment to analyse (s).
    trigger_s : float or None
        The impact or release instant (the last quiet sample before the response
        departs from the baseline); ``None`` when the record starts already moving.
    quiet_end_s : float or None
        End of the quiet pre-trigger stretch (equal to ``trigger_s``), ``None`` without one.
    excitation_end_s : float or None
        Where the envelope starts to decay (after its largest value).
    noise_std : float
        Noise standard deviation (from the quiet stretch, given, or estimated robustly).
    baseline : float
        Level of the quiet pre-trigger stretch (for a release test: the held level);
        without one, the median of the record after the start.
    peak_s : float or None
        Time of the largest envelope value.
    chosen : dict
        One line per choice (``"trigger"``, ``"start"``, ``"end"``, ``"noise"``) saying
        how it was made, for reports and plots.
    start_overridden, end_overridden : bool
        True when the caller fixed ``start_s`` / ``end_s``.
    """

    start_s: float
    end_s: float
    trigger_s: float | None
    quiet_end_s: float | None
    excitation_end_s: float | None
    noise_std: float
    baseline: float
    peak_s: float | None
    chosen: dict = field(default_factory=dict)
    start_overridden: bool = False
    end_overridden: bool = False

    @property
    def duration_s(self) -> float:
        return self.end_s - self.start_s

    def mask(self, time_s) -> np.ndarray:
        """Boolean mask of the samples of ``time_s`` inside ``[start_s, end_s]``."""
        t = np.asarray(time_s, dtype=float)
        return (t >= self.start_s) & (t <= self.end_s)

    def to_dict(self) -> dict:
        from .._jsonable import jsonable

        return jsonable({
            "start_s": self.start_s, "end_s": self.end_s, "trigger_s": self.trigger_s,
            "quiet_end_s": self.quiet_end_s, "excitation_end_s": self.excitation_end_s,
            "noise_std": self.noise_std, "baseline": self.baseline, "peak_s": self.peak_s,
            "chosen": dict(self.chosen), "start_overridden": self.start_overridden,
            "end_overridden": self.end_overridden})


def _mad_std(x):
    return _MAD_TO_STD * float(np.median(np.abs(x - np.median(x))))


#: records longer than this have their envelope computed at every q-th sample only
#: (q a divisor of the transform length, at most 1/64 of the dominant period, so that a
#: period's average still holds 64 of them): the same values at those samples, for a
#: fraction of the work and memory (common practice, no source)
DECIMATED_ENVELOPE_SAMPLES = 1 << 17


def _hilbert_envelope(y, spec=None, step=1):
    """``|y + j·H{y}|`` (the analytic signal's magnitude) at samples ``0, step, 2·step…``
    and the amplitude spectrum ``|Y_k|``.

    The Hilbert transform by the FFT (as ``scipy.signal.hilbert(y, N)``): ``H{y}`` has the
    spectrum ``−j·Y_k`` on the positive frequencies and ``+j·Y_k`` on the negative ones,
    zero at DC and (even length) Nyquist.  The record is zero-padded to
    ``N = fast_length(y.size)`` (at most about 3 % longer for 1,000 samples or more, so
    that a length with a large prime factor does not cost a slow transform) and the
    first ``y.size`` samples kept; one real FFT (``spec = rfft(y, N)``, when the caller
    holds it already) serves both results.  The spectrum's bin k is the frequency
    ``k / N`` cycles per sample.

    With ``step`` > 1 (a divisor of N) only every ``step``-th sample is computed, exactly:
    the analytic signal's spectrum ``Z`` (``Y_0``, ``2·Y_k`` for ``0 < k < N/2``, ``Y_{N/2}``,
    zero on the negative frequencies) folded to ``M = N/step`` bins,
    ``Zf_m = Σ_j Z_{m + jM}``, has the inverse transform ``step · z_{step·m}`` (the DFT's
    decimation-in-time identity, derived) — a transform of M points instead of N.
    """
    n = y.size
    nfft = fast_length(n)
    if spec is None:
        spec = np.fft.rfft(y, nfft)
    if step == 1:
        turned = spec * -1j
        turned[0] = 0.0
        if nfft % 2 == 0:
            turned[-1] = 0.0
        quad = np.fft.irfft(turned, nfft)[:n]
        np.multiply(quad, quad, out=quad)
        quad += y * y
        return np.sqrt(quad, out=quad), np.abs(spec)
    if nfft % step:
        raise ValueError(f"step {step} does not divide the transform length {nfft}")
    m = nfft // step
    folded = np.zeros(m, dtype=complex)
    for j in range(0, spec.size, m):  # the one-sided analytic spectrum, folded
        part = spec[j:j + m]
        folded[:part.size] += part
    folded *= 2.0
    folded[0] -= spec[0]  # DC once, not twice
    if nfft % 2 == 0:
        folded[(nfft // 2) % m] -= spec[-1]  # Nyquist once
    z = np.fft.ifft(folded)[: -(-n // step)]
    return np.abs(z) / step, np.abs(spec)


def _envelope_step(nfft, period_samples):
    """The largest divisor of ``nfft`` at most ``period_samples / 64`` (at least 1)."""
    limit = int(period_samples // 64)
    best = 1
    for q in range(2, limit + 1):
        if nfft % q == 0:
            best = q
    return best


def _smoothed_envelope(y, spec=None):
    """Hilbert envelope of ``y`` averaged over one period of its dominant frequency.

    Returns the smoothed envelope, the averaging width in envelope samples and the step
    between the envelope's samples in record samples (1, or for records longer than
    ``DECIMATED_ENVELOPE_SAMPLES`` the largest divisor of the transform length up to 1/64
    of the dominant period: the envelope's value at every step-th sample, and the
    average of those in the window).
    """
    nfft = fast_length(y.size)
    if spec is None:
        spec = np.fft.rfft(y, nfft)
    mag = np.abs(spec[1:])
    k = int(np.argmax(mag)) + 1 if mag.size and mag.max() > 0 else 0
    if k > 0:
        period = nfft / k  # samples per period of the dominant line
        width = int(min(max(round(period), 1), max(y.size // 10, 1)))
    else:
        width = 1
    step = _envelope_step(nfft, width) if y.size > DECIMATED_ENVELOPE_SAMPLES else 1
    env, _ = _hilbert_envelope(y, spec, step)
    span = max(1, int(round(width / step)))
    if span > 1:  # centred moving average by cumulative sums, shrinking at the edges
        env = _moving_average(env, span)
    return env, span, step


def _moving_average(env, width):
    """Mean of ``env[i - w//2 : i - w//2 + w]`` clipped to the record, for every i.

    By cumulative sums: ``(C[hi] - C[lo]) / (hi - lo)`` with ``C = [0, cumsum(env)]``;
    the full windows of the interior by slices, the shrinking ones at the edges apart
    (the same sums and divisions as indexing every window, without index arrays).
    """
    n = env.size
    half = width // 2
    csum = np.empty(n + 1)
    csum[0] = 0.0
    np.cumsum(env, out=csum[1:])
    out = np.empty(n)
    # interior: lo = i - half >= 0 and hi = lo + width <= n
    a, b = half, n - width + half + 1  # i in [a, b)
    if b > a:
        np.subtract(csum[width:n + 1], csum[:n + 1 - width], out=out[a:b])
        out[a:b] /= width
    edge = np.r_[0:min(a, n), max(b, a):n]
    if edge.size:
        lo = np.maximum(edge - half, 0)
        hi = np.minimum(edge - half + width, n)
        out[edge] = (csum[hi] - csum[lo]) / (hi - lo)
    return out


def detect_decay_segment(time_s, values, *, start_s=None, end_s=None, noise_std=None) -> DecaySegment:
    """Find the free decay in a record: quiet pre-trigger, trigger, ring-down start and end.

    Parameters
    ----------
    time_s : array_like
        Uniformly spaced time stamps (s); pre-trigger time may be negative.
    values : array_like
        The response channel.
    start_s, end_s : float, optional
        Fix the ring-down start / end instead of detecting them (``--start``/``--end``).
    noise_std : float, optional
        Noise standard deviation, if known; otherwise taken from the quiet pre-trigger
        stretch (median absolute deviation) or, without one, estimated robustly.

    Returns
    -------
    DecaySegment
        The chosen segment and every intermediate choice, with explanations.

    Raises
    ------
    IdentificationError
        No response above the noise (unless both ``start_s`` and ``end_s`` are given).
    ParameterValueError
        ``start_s``/``end_s`` outside the record or not in order.

    Notes
    -----
    1. *Quiet pre-trigger.*  The first 5 % of the record (at least 16 samples) gives a
       baseline (median) and spread (MAD·1.4826).  If that spread exceeds
       ``QUIET_FRACTION`` of the largest deviation, the record starts in motion and
       there is no trigger.
    2. *Trigger.*  The first sample farther than ``k·s`` from the baseline, with
       ``k = max(5, Φ⁻¹(1 − 0.005/N))`` so that N noise samples cross it with
       probability below 1 %; baseline and noise are then re-estimated on everything
       before it and the crossing found again until it settles; it is refined backwards
       to the last sample within ``3·s`` of the baseline — the onset (an impact starts linearly, a release
       from a held displacement quadratically, both within a sample or two at 30 dB).
    3. *Ring-down start.*  After the trigger, the Hilbert envelope (about the median
       level after the trigger), averaged over one period of the dominant frequency,
       peaks (the last period, and without a trigger the first, are edges with Hilbert
       artefacts and are not searched); the excitation is taken to have ended where the envelope first falls
       below ``EXCITATION_DROP`` of that peak — for a hammer just after the impact, for
       a shaker stop where the steady envelope starts to decay.
    4. *End.*  Where the smoothed envelope first falls to ``END_FACTOR`` noise std
       (the Rayleigh mean of pure noise is 1.25 s, so the decay's own amplitude is then
       about 2.7 s), else the end of the record.

    Common practice, no single source; the thresholds are module constants.
    """
    t, x = check_time_series(time_s, values, min_length=16)
    n = x.size
    dt = (t[-1] - t[0]) / (n - 1)
    if not dt > 0:
        raise ParameterValueError("time_s must increase")
    for name, value in (("start_s", start_s), ("end_s", end_s)):
        if value is not None:
            v = float(value) if isinstance(value, (int, float, np.floating, np.integer)) and not isinstance(value, bool) else None
            if v is None or not math.isfinite(v):
                raise ParameterValueError(f"{name} must be a finite time in seconds; got {value!r}")
            if not (t[0] - 0.5 * dt <= v <= t[-1] + 0.5 * dt):
                raise ParameterValueError(
                    f"{name} must lie inside the record ({t[0]:g} to {t[-1]:g} s); got {value!r}")
    if start_s is not None and end_s is not None and not float(start_s) < float(end_s):
        raise ParameterValueError(f"start_s must be before end_s; got start_s={start_s!r}, end_s={end_s!r}")
    given_noise = check_positive("noise_std", noise_std, allow_none=True)

    try:
        found = _detect(t, x, dt, given_noise)
    except IdentificationError:
        if start_s is None or end_s is None:
            raise
        noise = given_noise if given_noise is not None else _robust_noise(x)
        found = dict(trigger_s=None, quiet_end_s=None, excitation_end_s=None, noise_std=noise,
                     baseline=float(np.median(x)), peak_s=None, start_s=float(start_s),
                     end_s=float(end_s), chosen={"detection": "no response above the noise was detected; "
                                                 "the given start and end are used as they are"})
    chosen = dict(found.pop("chosen"))
    if start_s is not None:
        found["start_s"] = float(start_s)
        chosen["start"] = f"given: {float(start_s):g} s"
    if end_s is not None:
        found["end_s"] = float(end_s)
        chosen["end"] = f"given: {float(end_s):g} s"
    if found["end_s"] <= found["start_s"]:
        raise ParameterValueError(
            f"the segment would be empty: start {found['start_s']:g} s is not before end "
            f"{found['end_s']:g} s (give both --start and --end, or neither)")
    return DecaySegment(chosen=chosen, start_overridden=start_s is not None,
                        end_overridden=end_s is not None, **found)


def _robust_noise(x, spectrum=None):
    from ._trend import _robust_noise_std

    return _robust_noise_std(x, spectrum)


def _first_beyond(x, centre, limit):
    """Index of the first sample with ``|x - centre| > limit``, or None.

    Scanned in chunks that double from 4,096 samples: a trigger usually comes early in
    the record, and a long record need not be compared whole (the same index as
    ``np.flatnonzero(np.abs(x - centre) > limit)[0]``).
    """
    start, size = 0, 4096
    while start < x.size:
        stop = min(x.size, start + size)
        hit = np.flatnonzero(np.abs(x[start:stop] - centre) > limit)
        if hit.size:
            return start + int(hit[0])
        start, size = stop, 2 * size
    return None


def _detect(t, x, dt, given_noise):
    n = x.size
    chosen = {}
    m0 = max(16, n // 20)
    b0 = float(np.median(x[:m0]))
    spread0 = _mad_std(x[:m0])
    dev_max = float(np.max(np.abs(x - b0)))
    # a pre-trigger shorter than the first 5 %: halve the window while it is not quiet,
    # and accept a shorter one only where the activity jumps right after it (a slow
    # oscillation already under way looks quiet over a few samples, but so does the next
    # window of the same length)
    m = m0
    while spread0 > QUIET_FRACTION * dev_max and m > 16:
        m = max(16, m // 2)
        b = float(np.median(x[:m]))
        spread = _mad_std(x[:m])
        dev = float(np.max(np.abs(x - b)))
        if spread <= QUIET_FRACTION * dev and np.std(x[m:2 * m]) > QUIET_JUMP * max(spread, 1e-300):
            m0, b0, spread0, dev_max = m, b, spread, dev
            break
    if dev_max <= 0.0:
        raise IdentificationError("no response above the noise: the record is constant")
    k_thr = max(TRIGGER_FACTOR, NormalDist().inv_cdf(1.0 - 0.005 / n))
    onset = None
    if spread0 <= QUIET_FRACTION * dev_max:
        s = given_noise if given_noise is not None else max(spread0, 1e-12 * dev_max)
        base = b0
        cross = None
        for _ in range(10):  # re-estimate on everything before the crossing until it settles
            beyond = _first_beyond(x, base, k_thr * s)
            if beyond is None:
                break
            previous, cross = cross, beyond
            if cross < 8 or cross == previous:
                break
            quiet = x[:cross]
            base = float(np.median(quiet))
            if given_noise is None:
                s = max(_mad_std(quiet), 1e-12 * dev_max)
        if cross is None:
            raise IdentificationError(
                f"no response above the noise: the largest deviation from the quiet level is "
                f"{dev_max / max(s, 1e-300):.1f} noise std (threshold {k_thr:.1f})")
        if cross >= 8:
            k = cross
            while k > 0 and abs(x[k - 1] - base) > ONSET_FACTOR * s:
                k -= 1
            onset = max(k - 1, 0)
            chosen["trigger"] = (f"first sample beyond {k_thr:.1f} noise std of the pre-trigger "
                                 f"baseline, refined back to the last sample within "
                                 f"{ONSET_FACTOR:g} noise std")
            chosen["noise"] = f"median absolute deviation of the {onset + 1} pre-trigger samples" \
                if given_noise is None else "given"
    spec = None
    if onset is None:
        if given_noise is not None:
            s = given_noise
        else:  # one transform of the whole record for the noise estimate and the envelope
            center = float(np.median(x))
            spec = np.fft.rfft(x - center, fast_length(x.size))
            s = _robust_noise(x, spec)
        chosen["trigger"] = "none: the record starts in motion (no quiet pre-trigger stretch)"
        chosen["noise"] = "given" if given_noise is not None else \
            "smallest of third-difference, tail and upper-spectrum estimates"
        first = 0
    else:
        first = onset
        base_quiet = base

    y = x[first:]
    if spec is None:
        center = float(np.median(y))
    env, span, step = _smoothed_envelope(y - center, spec)
    # without a trigger the record starts mid-motion, where the Hilbert envelope has an
    # edge artefact: look for the peak from one smoothing width on
    skip = 0 if onset is not None else min(span, max(env.size - 2, 0))
    stop = max(env.size - span, skip + 1)  # the record's end is an edge too
    p = skip + int(np.argmax(env[skip:stop]))
    if env[p] <= END_FACTOR * 1.25 * s:
        raise IdentificationError(
            f"no response above the noise: the envelope peaks at {env[p] / max(s, 1e-300):.1f} "
            f"noise std")
    after = np.flatnonzero(env[p:] < EXCITATION_DROP * env[p])
    exc = p + (int(after[0]) if after.size else 0)
    chosen["start"] = (f"ring-down start: the smoothed envelope falls below "
                       f"{100 * EXCITATION_DROP:.0f} % of its peak")
    below = np.flatnonzero(env[exc:] < END_FACTOR * s)
    p, exc = p * step, exc * step  # envelope samples to record samples
    if below.size:
        end = exc + int(below[0]) * step
        chosen["end"] = f"the smoothed envelope falls to {END_FACTOR:g} noise std"
    else:
        end = y.size - 1
        chosen["end"] = "end of the record (the envelope stays above the noise floor)"
    if end <= exc:
        end = y.size - 1
    trigger = None if onset is None else float(t[onset])
    return dict(
        start_s=float(t[first + exc]), end_s=float(t[first + end]), trigger_s=trigger,
        quiet_end_s=trigger, excitation_end_s=float(t[first + exc]), noise_std=float(s),
        baseline=base_quiet if onset is not None else center, peak_s=float(t[first + p]),
        chosen=chosen)
