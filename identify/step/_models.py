"""Process models for step tests, simulated on the record's own time base.

Four structures, each ``y(t) = offset + gain · G(s) e^(-θs) · (u(t) - u_before)``:

    first-order    G = 1 / (τ s + 1)
    two-lag        G = 1 / ((τ1 s + 1)(τ2 s + 1)),   τ1 >= τ2
    underdamped    G = ωn² / (s² + 2ζωn s + ωn²),    0 < ζ < 1
    integrating    G = 1 / s        (gain in output units per input unit per second)

The measured input is read as held between samples (zero-order hold, as a controller
output or a logged set point is): a sum of steps Δu[j] at the sample instants.  The
response at sample n is then exactly Σ_j Δu[j]·S((n - j)·Ts - θ), with S the closed-form
unit step response of G.  The dead time θ = (k + f)·Ts (k whole samples plus a fraction
f of one) needs no approximation, and the result equals ``scipy.signal.lsim`` of the
delayed, held input (the tests check this).  A clean step has one nonzero Δu, so the
sum is cheap enough for a dead-time grid search; a noisy input is convolved by FFT.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["STRUCTURES", "SHAPE_PARAMETERS", "step_response", "input_increments", "unit_response",
           "simulate", "poles_of"]

STRUCTURES = ("first-order", "two-lag", "underdamped", "integrating")

#: the nonlinear (shape) parameters of each structure, besides offset, gain and dead time
SHAPE_PARAMETERS = {
    "first-order": ("time_constant_s",),
    "two-lag": ("time_constant_1_s", "time_constant_2_s"),
    "underdamped": ("natural_frequency_rad_per_s", "damping_ratio"),
    "integrating": (),
}


def step_response(structure: str, shape, time_s) -> np.ndarray:
    """Closed-form unit step response of ``G(s)`` at ``time_s`` (zero for t < 0).

    Notes
    -----
    first order   1 - e^(-t/τ)
    two lags      1 - (τ1 e^(-t/τ1) - τ2 e^(-t/τ2)) / (τ1 - τ2)   (1 - (1 + t/τ) e^(-t/τ) if τ1 = τ2)
    underdamped   1 - e^(-ζωn t) (cos ωd t + ζ/√(1-ζ²) sin ωd t),  ωd = ωn√(1-ζ²)
    integrator    t
    """
    t = np.asarray(time_s, dtype=float)
    tp = np.maximum(t, 0.0)
    if structure == "first-order":
        (tau,) = shape
        out = -np.expm1(-tp / tau)
    elif structure == "two-lag":
        t1, t2 = float(max(shape)), float(min(shape))
        if t1 - t2 <= 1e-6 * t1:
            tau = 0.5 * (t1 + t2)
            out = 1.0 - (1.0 + tp / tau) * np.exp(-tp / tau)
        else:
            out = 1.0 - (t1 * np.exp(-tp / t1) - t2 * np.exp(-tp / t2)) / (t1 - t2)
    elif structure == "underdamped":
        wn, zeta = shape
        root = math.sqrt(max(1.0 - zeta * zeta, 1e-12))
        wd = wn * root
        out = 1.0 - np.exp(-zeta * wn * tp) * (np.cos(wd * tp) + zeta / root * np.sin(wd * tp))
    elif structure == "integrating":
        out = tp.copy()
    else:
        raise ValueError(f"unknown structure {structure!r}")
    return np.where(t > 0, out, 0.0)


#: above this many input changes the response is built by FFT convolution
_SPARSE_LIMIT = 40


def input_increments(u_dev) -> tuple:
    """``(Δu, indices of nonzero Δu)`` of a held input, with ``Δu[0] = u[0]`` (rest before)."""
    u = np.asarray(u_dev, dtype=float)
    du = np.diff(u, prepend=0.0)
    return du, np.flatnonzero(du)


def unit_response(structure: str, shape, dead_time_s: float, u_dev, sample_time_s: float,
                  increments=None) -> np.ndarray:
    """Response of the unit-gain model with dead time to the deviation input ``u_dev``.

    The model starts at rest at the first sample; ``u_dev`` is the input minus its
    pre-step level, read as held between samples (zero-order hold).  ``increments``
    may hold :func:`input_increments` of ``u_dev`` computed once (for repeated calls).

    Notes
    -----
    A held input is a sum of steps ``Δu[j] = u[j] - u[j-1]`` at the sample instants,
    so the response at sample n is exactly ``Σ_j Δu[j]·S((n - j)Ts - θ)`` with S the
    closed-form step response: the modified z-transform of the delayed hold, with the
    fractional part of θ included without approximation.  Equal to
    ``scipy.signal.lsim`` of the delayed held input (checked in the tests).
    """
    if increments is None:
        increments = input_increments(u_dev)
    du, nz = increments
    n = du.size
    ts = float(sample_time_s)
    theta = max(float(dead_time_s), 0.0)
    steps = step_response(structure, shape, np.arange(n) * ts - theta)
    if nz.size <= _SPARSE_LIMIT:
        y = np.zeros(n)
        for j in nz:
            y[j:] += du[j] * steps[:n - j]
        return y
    from scipy.signal import oaconvolve

    return oaconvolve(du, steps)[:n]


def simulate(structure: str, values: dict, u_dev, sample_time_s: float) -> np.ndarray:
    """``offset + gain · unit_response`` with the parameters in ``values``."""
    shape = tuple(values[name] for name in SHAPE_PARAMETERS[structure])
    y = unit_response(structure, shape, values["dead_time_s"], u_dev, sample_time_s)
    return values["offset"] + values["gain"] * y


def poles_of(structure: str, values: dict) -> list:
    """Continuous poles (rad/s) of the structure, upper member of a pair only."""
    if structure == "first-order":
        return [complex(-1.0 / values["time_constant_s"], 0.0)]
    if structure == "two-lag":
        return [complex(-1.0 / values["time_constant_1_s"], 0.0),
                complex(-1.0 / values["time_constant_2_s"], 0.0)]
    if structure == "underdamped":
        wn, zeta = values["natural_frequency_rad_per_s"], values["damping_ratio"]
        return [complex(-zeta * wn, wn * math.sqrt(max(1.0 - zeta * zeta, 0.0)))]
    return [complex(0.0, 0.0)]
