"""Synthetic free-decay records with known poles, and their Cramér–Rao bound (test helper).

The bound: for y = Σ A_i e^(−σ_i τ) cos(ω_i τ + φ_i) + c (+ b τ) + white Gaussian noise of
std s, the Fisher information is F = JᵀJ/s² with J the Jacobian in (A_i, σ_i, ω_i, φ_i, c
[, b]); fn and ζ follow by the delta method with ∂ζ/∂(σ, ω) = (ω², −σω)/ωn³
[pub: Kay, Fundamentals of Statistical Signal Processing: Estimation Theory, 1993, ch. 3;
Yao & Pandit, IEEE Trans. SP, for damped sinusoids].
"""
import math

import numpy as np

from identify.poles import pole_from_frequency_damping
from identify.records import Record


def make_decay(modes, *, fs=1000.0, n=2000, snr_db=None, noise_std=0.0, offset=0.0, drift_per_s=0.0,
               pretrigger=0, seed=0, clip=None):
    """Record of a free decay.

    modes : list of (fn_hz, zeta, amplitude, phase_rad)
    snr_db : initial SNR of the largest mode, 10·log10((A²/2)/s²) (overrides noise_std)
    pretrigger : quiet samples (noise, offset, drift only) before the decay starts
    Returns (t, y, poles, s) with poles the true upper poles (complex, rad/s), s the noise std.
    """
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    t0 = pretrigger / fs
    tau = np.clip(t - t0, 0.0, None)
    on = t >= t0 - 1e-12
    y = np.full(n, float(offset)) + drift_per_s * t
    poles = []
    for fn, zeta, amp, phase in modes:
        s = pole_from_frequency_damping(fn, zeta)
        poles.append(s)
        y += on * amp * np.exp(s.real * tau) * np.cos(s.imag * tau + phase)
    a_max = max(abs(m[2]) for m in modes)
    if snr_db is not None:
        noise_std = math.sqrt(a_max ** 2 / 2 / 10 ** (snr_db / 10))
    if noise_std:
        y = y + noise_std * rng.standard_normal(n)
    if clip is not None:
        y = np.clip(y, -clip, clip)
    return t, y, poles, noise_std


def make_record(modes, **kw):
    t, y, poles, s = make_decay(modes, **kw)
    return Record.from_arrays(t, accel=y, units={"accel": "m/s^2"}), poles, s


def crb_fn_zeta(modes, t, noise_std, *, drift=False):
    """Cramér–Rao standard deviations of (fn_hz, ζ) per mode (list of pairs), derived."""
    tau = np.asarray(t, dtype=float) - t[0]
    cols, grads = [], []
    for fn, zeta, amp, phase in modes:
        s = pole_from_frequency_damping(fn, zeta)
        sg, om = -s.real, s.imag
        env = np.exp(-sg * tau)
        cs, sn = np.cos(om * tau + phase), np.sin(om * tau + phase)
        cols += [env * cs, -tau * amp * env * cs, -tau * amp * env * sn, -amp * env * sn]
        wn = math.hypot(sg, om)
        grads.append((np.array([sg, om]) / wn / (2 * math.pi), np.array([om * om, -sg * om]) / wn ** 3))
    cols.append(np.ones_like(tau))
    if drift:
        cols.append(tau)
    jac = np.column_stack(cols)
    cov = noise_std ** 2 * np.linalg.inv(jac.T @ jac)
    out = []
    for i, (g_fn, g_z) in enumerate(grads):
        block = cov[4 * i + 1:4 * i + 3, 4 * i + 1:4 * i + 3]
        out.append((math.sqrt(g_fn @ block @ g_fn), math.sqrt(g_z @ block @ g_z)))
    return out
