"""The pole vocabulary: one place where every derived quantity is computed.

A pole ``s = σ + jω`` (rad/s) contributes ``e^(σt)·cos(ωt + φ)`` to a response.  A
conjugate pair is stored once, with ``imag >= 0``; a real pole has ``imag == 0``.

Derived quantities (see ``shared`` references: any vibration text, e.g. Thomson §2.7)::

    decay rate        σd = -Re(s)                       [1/s]
    damped frequency  ωd = |Im(s)|, fd = ωd / 2π         [rad/s, Hz]
    natural frequency ωn = |s|,     fn = ωn / 2π         [rad/s, Hz]
    damping ratio     ζ  = -Re(s) / |s|
    time constant     τ  = -1 / s      (real poles only) [s]
    quality factor    Q  = 1 / (2ζ)    (ζ > 0)

Discrete poles convert by ``s = ln(z) / Ts`` and back by ``z = exp(s·Ts)``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np

from ._errors import ParameterValueError
from ._validate import check_confidence, check_positive

__all__ = [
    "Interval",
    "PoleIntervals",
    "Pole",
    "hz_to_rad_per_s",
    "rad_per_s_to_hz",
    "discrete_to_continuous",
    "continuous_to_discrete",
    "pole_from_frequency_damping",
    "normal_quantile",
    "pole_with_delta_intervals",
    "pole_with_sample_intervals",
    "verdict_for",
    "DECAYING",
    "SUSTAINED",
    "GROWING",
    "NOT_SHOWN_TO_DECAY",
]

DECAYING = "decaying"
SUSTAINED = "sustained oscillation"
GROWING = "growing"
NOT_SHOWN_TO_DECAY = "not shown to decay"

#: |ζ| below which a pole whose real-part interval includes zero is called a sustained
#: oscillation rather than "not shown to decay" (both limits of the interval must be
#: this close to zero).  Common practice, no source.
SUSTAINED_DAMPING_LIMIT = 1e-3


def hz_to_rad_per_s(frequency_hz):
    """Convert a frequency in Hz to rad/s (ω = 2πf)."""
    return 2.0 * math.pi * np.asarray(frequency_hz, dtype=float) if np.ndim(frequency_hz) else 2.0 * math.pi * float(frequency_hz)


def rad_per_s_to_hz(omega_rad_per_s):
    """Convert an angular frequency in rad/s to Hz (f = ω / 2π)."""
    return np.asarray(omega_rad_per_s, dtype=float) / (2.0 * math.pi) if np.ndim(omega_rad_per_s) else float(omega_rad_per_s) / (2.0 * math.pi)


def discrete_to_continuous(z, sample_time_s):
    """Map discrete poles ``z`` to continuous poles ``s = ln(z) / Ts`` (rad/s).

    The principal branch of the logarithm is used, so ``|Im(s)| <= π / Ts`` (Nyquist).
    ``z = 0`` (a pure delay) has no continuous image and raises ``ParameterValueError``.
    """
    ts = check_positive("sample_time_s", sample_time_s)
    zz = np.asarray(z, dtype=complex)
    if np.any(zz == 0):
        raise ParameterValueError("a discrete pole at z = 0 has no continuous counterpart (s = ln z / Ts)")
    s = np.log(zz) / ts
    return complex(s) if np.ndim(z) == 0 else s


def continuous_to_discrete(s, sample_time_s):
    """Map continuous poles ``s`` (rad/s) to discrete poles ``z = exp(s·Ts)``."""
    ts = check_positive("sample_time_s", sample_time_s)
    z = np.exp(np.asarray(s, dtype=complex) * ts)
    return complex(z) if np.ndim(s) == 0 else z


def pole_from_frequency_damping(natural_frequency_hz, damping_ratio):
    """Return the upper pole ``s = -ζωn + jωn√(1-ζ²)`` (rad/s) for ``|ζ| < 1``.

    For ``ζ >= 1`` the pair is real: the slower real pole ``-ωn(ζ - √(ζ²-1))`` is returned.
    """
    wn = hz_to_rad_per_s(check_positive("natural_frequency_hz", natural_frequency_hz))
    zeta = float(damping_ratio)
    if abs(zeta) < 1.0:
        return complex(-zeta * wn, wn * math.sqrt(1.0 - zeta * zeta))
    return complex(-wn * (zeta - math.sqrt(zeta * zeta - 1.0)), 0.0)


def normal_quantile(confidence: float) -> float:
    """Two-sided standard-normal quantile for a confidence level (0.95 → 1.95996)."""
    level = check_confidence(confidence)
    return NormalDist().inv_cdf(0.5 + level / 2.0)


@dataclass(frozen=True)
class Interval:
    """A confidence interval that knows its level and how it was obtained.

    Parameters
    ----------
    lower, upper : float
        The limits, in the unit of the quantity it belongs to.
    level : float
        Confidence level as a probability, e.g. 0.95.
    method : str
        How it was obtained: ``"delta"``, ``"bootstrap"``, ``"regression"``, ...
    """

    lower: float
    upper: float
    level: float
    method: str

    def __post_init__(self):
        lo, hi = float(self.lower), float(self.upper)
        if lo > hi:
            lo, hi = hi, lo
        object.__setattr__(self, "lower", lo)
        object.__setattr__(self, "upper", hi)
        object.__setattr__(self, "level", check_confidence(self.level))

    def contains(self, value: float) -> bool:
        """True when ``lower <= value <= upper``."""
        return self.lower <= float(value) <= self.upper

    @property
    def width(self) -> float:
        return self.upper - self.lower

    def as_list(self) -> list:
        return [self.lower, self.upper]

    def to_dict(self) -> dict:
        return {"lower": self.lower, "upper": self.upper, "level": self.level, "method": self.method}


@dataclass(frozen=True)
class PoleIntervals:
    """Intervals on one pole's real part, imaginary part, natural frequency and damping.

    For a real pole ``time_constant_s`` holds the interval of ``τ = -1/s`` when the
    real-part interval excludes zero, else ``None``.
    """

    level: float
    method: str
    real: tuple
    imag: tuple
    natural_frequency_hz: tuple
    damping_ratio: tuple
    time_constant_s: tuple | None = None

    def to_dict(self) -> dict:
        out = {
            "level": self.level,
            "method": self.method,
            "natural_frequency_hz": list(self.natural_frequency_hz),
            "damping_ratio": list(self.damping_ratio),
            "real": list(self.real),
            "imag": list(self.imag),
        }
        if self.time_constant_s is not None:
            out["time_constant_s"] = list(self.time_constant_s)
        return out


@dataclass(frozen=True)
class Pole:
    """One continuous-time pole (a conjugate pair stored once with ``imag >= 0``).

    Parameters
    ----------
    real : float
        Re(s) in rad/s (negative decays).
    imag : float
        Im(s) in rad/s; a negative value is folded to its conjugate.
    amplitude : float, optional
        Amplitude of the pole's term in the record, in the channel's unit.
    ci : PoleIntervals, optional
        Intervals, with their level and method.
    """

    real: float
    imag: float
    amplitude: float | None = None
    ci: PoleIntervals | None = None

    def __post_init__(self):
        object.__setattr__(self, "real", float(self.real))
        object.__setattr__(self, "imag", abs(float(self.imag)))
        if not (math.isfinite(self.real) and math.isfinite(self.imag)):
            raise ParameterValueError(f"a pole needs finite real and imaginary parts; got {self.real!r}, {self.imag!r}")
        if self.amplitude is not None:
            object.__setattr__(self, "amplitude", float(self.amplitude))

    # -- derived quantities, computed here and nowhere else ------------------------
    @property
    def s(self) -> complex:
        return complex(self.real, self.imag)

    @property
    def is_real(self) -> bool:
        return self.imag == 0.0

    @property
    def decay_rate_per_s(self) -> float:
        return -self.real

    @property
    def damped_frequency_rad_per_s(self) -> float:
        return self.imag

    @property
    def damped_frequency_hz(self) -> float:
        return self.imag / (2.0 * math.pi)

    @property
    def natural_frequency_rad_per_s(self) -> float:
        return math.hypot(self.real, self.imag)

    @property
    def natural_frequency_hz(self) -> float:
        return self.natural_frequency_rad_per_s / (2.0 * math.pi)

    @property
    def damping_ratio(self) -> float:
        wn = self.natural_frequency_rad_per_s
        return -self.real / wn if wn > 0 else float("nan")

    @property
    def time_constant_s(self) -> float | None:
        """τ = -1/s for a real pole; ``None`` for a complex pair or a pole at zero."""
        if not self.is_real or self.real == 0.0:
            return None
        return -1.0 / self.real

    @property
    def quality_factor(self) -> float | None:
        """Q = 1/(2ζ) for ζ > 0, else ``None``."""
        zeta = self.damping_ratio
        return 1.0 / (2.0 * zeta) if zeta > 0 else None

    @property
    def verdict(self) -> str:
        return verdict_for(self.real, None if self.ci is None else self.ci.real, self.natural_frequency_rad_per_s)

    def with_amplitude(self, amplitude) -> "Pole":
        return Pole(self.real, self.imag, amplitude, self.ci)

    def to_dict(self) -> dict:
        """JSON-safe dictionary in the shape of the public ``poles`` contract."""
        out = {
            "real": self.real,
            "imag": self.imag,
            "natural_frequency_hz": self.natural_frequency_hz,
            "damping_ratio": self.damping_ratio,
            "decay_rate_per_s": self.decay_rate_per_s,
            "damped_frequency_hz": self.damped_frequency_hz,
            "amplitude": self.amplitude,
            "verdict": self.verdict,
        }
        if self.is_real:
            out["time_constant_s"] = self.time_constant_s
        out["ci"] = None if self.ci is None else self.ci.to_dict()
        return out

    @classmethod
    def from_dict(cls, data: dict) -> "Pole":
        """Rebuild a pole from :meth:`to_dict` output (used by ``check`` and history)."""
        ci = data.get("ci")
        intervals = None
        if ci:
            tc = ci.get("time_constant_s")
            intervals = PoleIntervals(
                level=float(ci["level"]), method=str(ci.get("method", "unknown")),
                real=tuple(ci["real"]), imag=tuple(ci.get("imag", (data["imag"], data["imag"]))),
                natural_frequency_hz=tuple(ci["natural_frequency_hz"]),
                damping_ratio=tuple(ci["damping_ratio"]),
                time_constant_s=None if tc is None else tuple(tc))
        return cls(float(data["real"]), float(data["imag"]), data.get("amplitude"), intervals)


def verdict_for(real: float, real_interval=None, natural_frequency_rad_per_s: float | None = None) -> str:
    """Plain-words verdict from the sign of Re(s) and its interval.

    * interval above zero → ``"growing"``; below zero → ``"decaying"``;
    * interval containing zero → ``"not shown to decay"``, or ``"sustained oscillation"``
      when both limits lie within ``|ζ| < 0.001`` of zero;
    * no interval: the sign of the point value (zero → sustained oscillation).
    """
    wn = natural_frequency_rad_per_s if natural_frequency_rad_per_s else abs(real)
    if real_interval is None:
        if real < 0:
            return DECAYING
        if real > 0:
            return GROWING
        return SUSTAINED
    lo, hi = float(real_interval[0]), float(real_interval[1])
    if hi < 0:
        return DECAYING
    if lo > 0:
        return GROWING
    if wn > 0 and max(abs(lo), abs(hi)) < SUSTAINED_DAMPING_LIMIT * wn:
        return SUSTAINED
    return NOT_SHOWN_TO_DECAY


def _bounded(lo, hi, low=None, high=None):
    if low is not None:
        lo, hi = max(lo, low), max(hi, low)
    if high is not None:
        lo, hi = min(lo, high), min(hi, high)
    return (float(lo), float(hi))


def _time_constant_interval(real_lo, real_hi):
    if real_hi < 0 or real_lo > 0:  # τ = -1/s is monotone on an interval that excludes zero
        a, b = -1.0 / real_lo, -1.0 / real_hi
        return (min(a, b), max(a, b))
    return None


def pole_with_delta_intervals(s, cov, confidence: float = 0.95, *, amplitude=None,
                              method: str = "delta") -> Pole:
    """Build a :class:`Pole` with normal-theory intervals from the covariance of (Re s, Im s).

    Parameters
    ----------
    s : complex
        The pole estimate in rad/s.
    cov : array_like, shape (2, 2) or (1, 1) or float
        Covariance of (Re s, Im s); a scalar or 1×1 matrix for a real pole.
    confidence : float, default=0.95
        Confidence level as a probability.

    Notes
    -----
    First-order (delta-method) propagation: with ωn = |s| and ζ = -Re s/|s|,
    ∂ωn/∂(Re, Im) = (Re, Im)/ωn and ∂ζ/∂(Re, Im) = (-Im², Re·Im)/ωn³
    (Kay 1993, ch. 3; the gradient in σ = -Re s is (ωd², -σωd)/ωn³).
    """
    z = normal_quantile(confidence)
    s = complex(s)
    re, im = s.real, abs(s.imag)
    c = np.atleast_2d(np.asarray(cov, dtype=float))
    if s.imag < 0 and c.shape == (2, 2):  # conjugate: Im changes sign, so does the cross term
        c = c * np.array([[1.0, -1.0], [-1.0, 1.0]])
    if c.shape == (1, 1):
        c = np.array([[c[0, 0], 0.0], [0.0, 0.0]])
    if c.shape != (2, 2) or not np.all(np.isfinite(c)):
        raise ParameterValueError(f"cov must be a finite 2×2 covariance of (Re s, Im s); got shape {c.shape}")
    c = 0.5 * (c + c.T)
    wn = math.hypot(re, im)
    sd_re = math.sqrt(max(c[0, 0], 0.0))
    sd_im = math.sqrt(max(c[1, 1], 0.0))
    if wn > 0:
        g_wn = np.array([re, im]) / wn
        g_zeta = np.array([-im * im, re * im]) / wn ** 3
        sd_wn = math.sqrt(max(g_wn @ c @ g_wn, 0.0))
        sd_zeta = math.sqrt(max(g_zeta @ c @ g_zeta, 0.0))
        zeta = -re / wn
    else:
        sd_wn, sd_zeta, zeta = math.hypot(sd_re, sd_im), float("inf"), float("nan")
    real_ci = (re - z * sd_re, re + z * sd_re)
    imag_ci = _bounded(im - z * sd_im, im + z * sd_im, low=0.0)
    fn_ci = _bounded((wn - z * sd_wn) / (2 * math.pi), (wn + z * sd_wn) / (2 * math.pi), low=0.0)
    zeta_ci = (zeta - z * sd_zeta, zeta + z * sd_zeta)
    if im == 0.0:  # a real pole: ζ = ±1 exactly by definition
        zeta_ci = (zeta, zeta)
    intervals = PoleIntervals(level=check_confidence(confidence), method=method, real=real_ci,
                              imag=imag_ci, natural_frequency_hz=fn_ci, damping_ratio=zeta_ci,
                              time_constant_s=_time_constant_interval(*real_ci) if im == 0.0 else None)
    return Pole(re, im, amplitude, intervals)


def pole_with_sample_intervals(s, samples, confidence: float = 0.95, *, amplitude=None,
                               method: str = "bootstrap") -> Pole:
    """Build a :class:`Pole` with percentile intervals from resampled pole estimates.

    ``samples`` are complex poles from e.g. a residual bootstrap; each interval is the
    central ``confidence`` range of the derived quantity over the samples.
    """
    level = check_confidence(confidence)
    smp = np.asarray(samples, dtype=complex).ravel()
    smp = smp[np.isfinite(smp)]
    if smp.size < 20:
        raise ParameterValueError(f"percentile intervals need at least 20 resampled poles; got {smp.size}")
    smp = smp.real + 1j * np.abs(smp.imag)
    q = [50 * (1 - level), 50 * (1 + level)]
    wn = np.abs(smp)
    with np.errstate(invalid="ignore", divide="ignore"):
        zeta = -smp.real / wn
    real_ci = tuple(np.percentile(smp.real, q))
    s = complex(s)
    intervals = PoleIntervals(
        level=level, method=method, real=real_ci, imag=tuple(np.percentile(smp.imag, q)),
        natural_frequency_hz=tuple(np.percentile(wn / (2 * math.pi), q)),
        damping_ratio=tuple(np.nanpercentile(zeta, q)),
        time_constant_s=_time_constant_interval(*real_ci) if s.imag == 0 else None)
    return Pole(s.real, s.imag, amplitude, intervals)
