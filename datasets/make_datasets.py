#!/usr/bin/env python3
"""Write Poleprint's bundled demo records and their true parameters.

The scenario is invented: a fictional test bay, "Kittiwake Yard", with rigs named after
sea birds.  Every rig, name, date and number below is made up for demonstration and
testing; none describes a real structure or plant.

Usage::

    python datasets/make_datasets.py [--out DIR]

``DIR`` defaults to the folder holding this script.  The script writes every demo record
and ``truth.json`` (the true parameters of every record).  It is deterministic and safe to
re-run: one ``numpy.random.default_rng`` per file, seeded from :data:`BASE_SEED` and the
file's relative name, so a file does not depend on the order of generation; numbers are
written with a fixed format (``%.6g``); line ends are ``\\n``.  Only numpy and
scipy.signal are used.

Notes
-----
A free-decay mode of natural frequency fn (Hz) and damping ratio ζ is written as

    A · exp(−σ t) · cos(ωd t + φ),   σ = ζ ωn,   ωd = ωn √(1 − ζ²),   ωn = 2π fn,

for t ≥ 0 (zero before the hit at t = 0).  Signal-to-noise ratios of ring-downs are
20·log10(rms0 / noise_std), rms0 = √(Σ A²/2) the RMS of the modes at t = 0.
Step responses are the closed forms of the plants for an input that changes at the
first sample written at its new value (zero-order hold); the motor stage is simulated
with ``scipy.signal`` (zero-order-hold discretisation, ``dlsim``).
"""
from __future__ import annotations

import argparse
import datetime as dt
import hashlib
import json
import math
import os
import sys

import numpy as np
from scipy import signal

BASE_SEED = 20250611
"""Fixed base seed; each file's generator is ``default_rng([BASE_SEED, hash(name)])``."""

SCENARIO = ("Invented demonstration data: the test bay 'Kittiwake Yard', its rigs, names, "
            "dates and numbers are made up and describe no real structure or plant.")

HISTORY_RIG = "fulmar"
HISTORY_THRESHOLD = 0.01


# --------------------------------------------------------------------------- helpers
def rng_for(name: str) -> np.random.Generator:
    """Return the file's own random generator, seeded from the base seed and its name."""
    digest = hashlib.sha256(name.encode("utf-8")).digest()
    return np.random.default_rng([BASE_SEED, int.from_bytes(digest[:8], "little")])


def fmt(x: float) -> str:
    """Fixed number format (``%.6g``), never ``-0``."""
    s = format(float(x) + 0.0, ".6g")
    return "0" if s == "-0" else s


def rnd(x: float, digits: int = 10) -> float:
    """Round a float for truth.json (stable, readable)."""
    return float(format(float(x), f".{digits}g"))


def time_grid(start_index: int, samples: int, rate_hz: float) -> np.ndarray:
    """Exact grid t_k = k / rate for k = start_index .. start_index + samples − 1."""
    return np.arange(start_index, start_index + samples, dtype=float) / rate_hz


def ringdown(t: np.ndarray, modes: list) -> np.ndarray:
    """Sum of damped cosines switched on at t = 0 (see module Notes)."""
    y = np.zeros_like(t)
    on = t >= 0.0
    tt = t[on]
    for m in modes:
        wn = 2.0 * math.pi * m["natural_frequency_hz"]
        zeta = m["damping_ratio"]
        sigma = zeta * wn
        wd = wn * math.sqrt(1.0 - zeta * zeta)
        y[on] += m["amplitude"] * np.exp(-sigma * tt) * np.cos(wd * tt + m["phase_rad"])
    return y


def mode_truth(natural_frequency_hz: float, damping_ratio: float, amplitude: float,
               phase_rad: float) -> dict:
    """The truth entry of one conjugate pole pair."""
    fn_hz, zeta = natural_frequency_hz, damping_ratio
    wn = 2.0 * math.pi * fn_hz
    return {
        "natural_frequency_hz": rnd(fn_hz),
        "damping_ratio": rnd(zeta),
        "real": rnd(-zeta * wn),
        "imag": rnd(wn * math.sqrt(1.0 - zeta * zeta)),
        "amplitude": rnd(amplitude),
        "phase_rad": rnd(phase_rad),
    }


def real_pole_truth(tau_s: float) -> dict:
    """The truth entry of one real pole −1/τ (ζ = 1 by the pole vocabulary)."""
    return {
        "natural_frequency_hz": rnd(1.0 / (2.0 * math.pi * tau_s)),
        "damping_ratio": 1.0,
        "real": rnd(-1.0 / tau_s),
        "imag": 0.0,
        "time_constant_s": rnd(tau_s),
    }


def snr_noise_std(modes: list, snr_db: float) -> float:
    rms0 = math.sqrt(sum(m["amplitude"] ** 2 for m in modes) / 2.0)
    return rms0 / 10.0 ** (snr_db / 20.0)


def write_text(path: str, lines: list) -> None:
    os.makedirs(os.path.dirname(path) or ".", exist_ok=True)
    data = ("\n".join(lines) + "\n").encode("utf-8")
    with open(path, "wb") as fh:
        fh.write(data)


# --------------------------------------------------------------------------- records
def bracket_ringdown(out: str) -> tuple:
    """Three-mode hammer ring-down of the B7 sensor bracket: comma-separated, SI units."""
    name = "bracket_ringdown.csv"
    rng = rng_for(name)
    rate_hz, pre_samples, samples = 2000.0, 200, 6200          # −0.1 s … 2.9995 s
    offset, snr_db = 0.045, 35.0
    modes = [
        dict(natural_frequency_hz=41.5, damping_ratio=0.011, amplitude=4.0, phase_rad=0.35),
        dict(natural_frequency_hz=103.2, damping_ratio=0.018, amplitude=2.2, phase_rad=-1.1),
        dict(natural_frequency_hz=167.8, damping_ratio=0.007, amplitude=1.3, phase_rad=2.0),
    ]
    noise_std = snr_noise_std(modes, snr_db)
    t = time_grid(-pre_samples, samples, rate_hz)
    y = offset + ringdown(t, modes) + noise_std * rng.standard_normal(samples)
    lines = ["time [s],accel [m/s^2]"]
    lines += [f"{fmt(a)},{fmt(b)}" for a, b in zip(t, y)]
    write_text(os.path.join(out, name), lines)
    truth = {
        "job": "decay",
        "rig": "B7 sensor bracket",
        "description": "hammer hit at t = 0 after a quiet pre-trigger; three modes",
        "dialect": "comma-separated, '.' decimal, one header row, no preamble",
        "columns": {"time": "time [s]", "response": "accel [m/s^2]"},
        "time_unit": "s",
        "sample_rate_hz": rate_hz,
        "samples": samples,
        "start_s": rnd(t[0]),
        "end_s": rnd(t[-1]),
        "trigger_time_s": 0.0,
        "offset": offset,
        "offset_unit": "m/s^2",
        "noise_std": rnd(noise_std),
        "snr_db": snr_db,
        "poles": [mode_truth(**m) for m in modes],
    }
    return name, truth


def plate_ringdown(out: str) -> tuple:
    """Single-mode tap test of cover plate P2: semicolon, decimal comma, preamble, ms."""
    name = "plate_ringdown_semicolon.csv"
    rng = rng_for(name)
    rate_hz, pre_samples, samples = 2500.0, 50, 3050           # −20 ms … 1199.6 ms
    offset, snr_db = -3.1, 40.0
    modes = [dict(natural_frequency_hz=61.3, damping_ratio=0.028, amplitude=42.0,
                  phase_rad=-0.6)]
    noise_std = snr_noise_std(modes, snr_db)
    t = time_grid(-pre_samples, samples, rate_hz)
    y = offset + ringdown(t, modes) + noise_std * rng.standard_normal(samples)
    lines = [
        "# Kittiwake Yard - cover plate tap test (invented demonstration data)",
        "# exported by the bay logger",
        "rig: cover plate P2",
        "date: 2026-03-05T14:10:00",
        "sample_rate: 2500 Hz",
        "operator: demo",
        "#",
        "t [ms];displacement [µm]",
    ]
    lines += [f"{fmt(a * 1000.0)};{fmt(b)}".replace(".", ",") for a, b in zip(t, y)]
    write_text(os.path.join(out, name), lines)
    truth = {
        "job": "decay",
        "rig": "cover plate P2",
        "description": "tap at t = 0 after a 20 ms quiet pre-trigger; one mode",
        "dialect": ("semicolon-separated, ',' decimal, '#' comment lines and a 'key: value' "
                    "preamble (rig, date, sample_rate, operator) before the header row; UTF-8 "
                    "(the unit uses the micro sign)"),
        "columns": {"time": "t [ms]", "response": "displacement [µm]"},
        "time_unit": "ms",
        "metadata": {"rig": "cover plate P2", "date": "2026-03-05T14:10:00",
                     "sample_rate": "2500 Hz", "operator": "demo"},
        "sample_rate_hz": rate_hz,
        "samples": samples,
        "start_s": rnd(t[0]),
        "end_s": rnd(t[-1]),
        "trigger_time_s": 0.0,
        "offset": offset,
        "offset_unit": "µm",
        "noise_std": rnd(noise_std),
        "snr_db": snr_db,
        "poles": [mode_truth(**m) for m in modes],
    }
    return name, truth


def valve_step(out: str) -> tuple:
    """Valve command step on the Skua flow skid: two lags plus dead time, tab-separated."""
    name = "valve_step.csv"
    rng = rng_for(name)
    rate_hz, samples = 10.0, 1200                              # 0 … 119.9 s
    step_index = 200                                           # command changes at 20.0 s
    u0, du = 35.0, 10.0                                        # valve command, %
    y0, gain = 82.3, 2.35                                      # L/min, (L/min)/%
    tau1, tau2, theta = 7.5, 1.8, 2.35                         # s
    noise_std = 0.01 * abs(gain * du)                          # 1 % of the output change
    t = time_grid(0, samples, rate_hz)
    t_step = step_index / rate_hz
    u = np.where(np.arange(samples) >= step_index, u0 + du, u0)
    tp = np.maximum(t - t_step - theta, 0.0)
    resp = 1.0 - (tau1 * np.exp(-tp / tau1) - tau2 * np.exp(-tp / tau2)) / (tau1 - tau2)
    y = y0 + gain * du * resp + noise_std * rng.standard_normal(samples)
    lines = ["time [s]\tvalve_cmd [%]\tflow [L/min]"]
    lines += [f"{fmt(a)}\t{fmt(b)}\t{fmt(c)}" for a, b, c in zip(t, u, y)]
    write_text(os.path.join(out, name), lines)
    truth = {
        "job": "step",
        "rig": "Skua flow skid, valve FV-3",
        "description": ("valve command stepped from 35 % to 45 % at 20.0 s; flow responds as "
                        "K·e^(−θs)/((τ1 s + 1)(τ2 s + 1))"),
        "dialect": "tab-separated, '.' decimal, one header row, no preamble",
        "columns": {"time": "time [s]", "input": "valve_cmd [%]", "output": "flow [L/min]"},
        "time_unit": "s",
        "sample_rate_hz": rate_hz,
        "samples": samples,
        "start_s": 0.0,
        "end_s": rnd(t[-1]),
        "structure": "two-lag",
        "step_time_s": t_step,
        "step_convention": "input takes its new value at step_time_s (zero-order hold)",
        "input_before": u0,
        "step_size": du,
        "output_before": y0,
        "gain": gain,
        "gain_unit": "(L/min)/%",
        "dead_time_s": theta,
        "time_constants_s": [tau1, tau2],
        "final_value": rnd(y0 + gain * du),
        "noise_std": rnd(noise_std),
        "noise_note": "white Gaussian, 1 % of the output change",
        "poles": [real_pole_truth(tau2), real_pole_truth(tau1)],
    }
    return name, truth


def actuator_step(out: str) -> tuple:
    """Negative position step of the Petrel linear actuator: underdamped + dead time."""
    name = "actuator_step.csv"
    rng = rng_for(name)
    rate_hz, samples = 200.0, 1200                             # 0 … 5.995 s
    step_index = 200                                           # command changes at 1.0 s
    u0, du = 12.0, -5.0                                        # command, mm
    y0, gain = 11.9, 0.98                                      # mm, mm/mm
    fn, zeta, theta = 1.6, 0.32, 0.045                         # Hz, -, s
    noise_std = 0.008 * abs(gain * du)                         # 0.8 % of the output change
    t = time_grid(0, samples, rate_hz)
    t_step = step_index / rate_hz
    u = np.where(np.arange(samples) >= step_index, u0 + du, u0)
    wn = 2.0 * math.pi * fn
    sigma, wd = zeta * wn, wn * math.sqrt(1.0 - zeta * zeta)
    tp = np.maximum(t - t_step - theta, 0.0)
    resp = 1.0 - np.exp(-sigma * tp) * (np.cos(wd * tp) + sigma / wd * np.sin(wd * tp))
    y = y0 + gain * du * resp + noise_std * rng.standard_normal(samples)
    lines = ["time [s],command [mm],position [mm]"]
    lines += [f"{fmt(a)},{fmt(b)},{fmt(c)}" for a, b, c in zip(t, u, y)]
    write_text(os.path.join(out, name), lines)
    overshoot = math.exp(-math.pi * zeta / math.sqrt(1.0 - zeta * zeta))
    truth = {
        "job": "step",
        "rig": "Petrel linear actuator",
        "description": ("position command stepped down from 12 mm to 7 mm at 1.0 s; position "
                        "responds as K·ωn²·e^(−θs)/(s² + 2ζωn s + ωn²)"),
        "dialect": "comma-separated, '.' decimal, one header row, no preamble",
        "columns": {"time": "time [s]", "input": "command [mm]", "output": "position [mm]"},
        "time_unit": "s",
        "sample_rate_hz": rate_hz,
        "samples": samples,
        "start_s": 0.0,
        "end_s": rnd(t[-1]),
        "structure": "underdamped",
        "step_time_s": t_step,
        "step_convention": "input takes its new value at step_time_s (zero-order hold)",
        "input_before": u0,
        "step_size": du,
        "output_before": y0,
        "gain": gain,
        "gain_unit": "mm/mm",
        "dead_time_s": theta,
        "natural_frequency_hz": fn,
        "damping_ratio": zeta,
        "overshoot_percent": rnd(100.0 * overshoot),
        "peak_time_after_dead_time_s": rnd(math.pi / wd),
        "final_value": rnd(y0 + gain * du),
        "noise_std": rnd(noise_std),
        "noise_note": "white Gaussian, 0.8 % of the output change",
        "poles": [mode_truth(fn, zeta, abs(gain * du), 0.0)],
    }
    del truth["poles"][0]["amplitude"], truth["poles"][0]["phase_rad"]
    return name, truth


def motor_prbs(out: str) -> tuple:
    """Tern motor stage driven by a maximum-length binary sequence: space-aligned columns."""
    name = "motor_prbs.csv"
    rng = rng_for(name)
    rate_hz, bit_samples, nbits = 250.0, 4, 10
    u_mid, u_amp = 6.0, 1.5                                    # V
    gain, tau, fn, zeta = 48.0, 0.12, 14.0, 0.06               # rpm/V, s, Hz, -
    noise_std = 0.5                                            # rpm
    seq = signal.max_len_seq(nbits)[0].astype(float)           # 1023 bits of 0/1
    du = np.repeat(u_amp * (2.0 * seq - 1.0), bit_samples)     # ±1.5 V, 4 samples a bit
    samples = du.size                                          # 4092
    t = time_grid(0, samples, rate_hz)
    wn = 2.0 * math.pi * fn
    num = [gain * wn * wn]
    den = np.polymul([tau, 1.0], [1.0, 2.0 * zeta * wn, wn * wn])
    ts = 1.0 / rate_hz
    numd, dend, _ = signal.cont2discrete((num, den), ts, method="zoh")
    numd = np.atleast_2d(numd)[0][1:]                          # leading term is 0 (zoh)
    _, dy = signal.dlsim((numd, dend, ts), du)                 # at rest at u_mid before t=0
    y0 = gain * u_mid
    y = y0 + dy[:, 0] + noise_std * rng.standard_normal(samples)
    u = u_mid + du
    cols = [("time_s", t), ("drive_V", u), ("speed_rpm", y)]
    widths = (10, 10)
    head = f"{cols[0][0]:<{widths[0]}} {cols[1][0]:<{widths[1]}} {cols[2][0]}"
    lines = [head]
    lines += [f"{fmt(a):<{widths[0]}} {fmt(b):<{widths[1]}} {fmt(c)}" for a, b, c in zip(t, u, y)]
    write_text(os.path.join(out, name), lines)
    zpoles = np.roots(dend)
    zpoles = zpoles[np.argsort(np.angle(zpoles))]
    out_std = float(np.std(dy[:, 0]))
    truth = {
        "job": "arx",
        "rig": "Tern motor stage",
        "description": ("drive voltage switched between 4.5 V and 7.5 V by a 1023-bit maximum-"
                        "length sequence (scipy.signal.max_len_seq, 10 bits, 4 samples a bit); "
                        "speed responds as K·ωn²/((τs + 1)(s² + 2ζωn s + ωn²)), at rest at 6 V "
                        "before t = 0; white sensor noise on the output only"),
        "dialect": ("columns separated by runs of spaces, '.' decimal, one header row with "
                    "unit suffixes (time_s, drive_V, speed_rpm), no preamble"),
        "columns": {"time": "time_s", "input": "drive_V", "output": "speed_rpm"},
        "time_unit": "s",
        "sample_rate_hz": rate_hz,
        "samples": samples,
        "start_s": 0.0,
        "end_s": rnd(t[-1]),
        "input_levels_v": [u_mid - u_amp, u_mid + u_amp],
        "prbs": {"kind": "maximum-length sequence", "register_bits": nbits,
                 "samples_per_bit": bit_samples},
        "dc_gain": gain,
        "dc_gain_unit": "rpm/V",
        "output_at_mid_input": rnd(y0),
        "time_constant_s": tau,
        "natural_frequency_hz": fn,
        "damping_ratio": zeta,
        "noise_std": noise_std,
        "noise_note": f"output (sensor) noise only; noise-free output std {out_std:.4g} rpm",
        "snr_db": rnd(20.0 * math.log10(out_std / noise_std), 4),
        "poles": [real_pole_truth(tau), mode_truth(fn, zeta, 1.0, 0.0)],
        "discrete_equivalent": {
            "method": "zero-order hold, sample time 0.004 s",
            "na": 3, "nb": 3, "delay_samples": 1,
            "a": [rnd(v) for v in dend],
            "b": [rnd(v) for v in numd],
            "poles_abs": [rnd(abs(z)) for z in zpoles],
            "poles_angle_rad": [rnd(abs(np.angle(z))) for z in zpoles],
        },
    }
    for p in truth["poles"]:
        p.pop("amplitude", None)
        p.pop("phase_rad", None)
    return name, truth


# --------------------------------------------------------------------------- history
HISTORY_TIMES = [
    "2025-01-15T09:30:00", "2025-02-12T10:05:00", "2025-03-12T09:15:00",
    "2025-04-16T09:45:00", "2025-05-14T08:50:00", "2025-06-11T09:20:00",
    "2025-07-16T10:10:00", "2025-08-13T09:35:00", "2025-09-10T09:05:00",
    "2025-10-15T09:55:00", "2025-11-12T09:25:00", "2025-12-10T09:40:00",
]
HISTORY_ZETA_START = 0.0300            # trend value at the first test
HISTORY_ZETA_SLOPE_PER_DAY = -3.6e-5   # 0.0300 → 0.0182 over the year
HISTORY_ZETA_SCATTER = 0.00075         # test-to-test std (clipped at ±0.0015)
HISTORY_MODE2_ZETA = 0.0140            # second mode: steady damping, same scatter law


def history_file(out: str, when: str) -> tuple:
    """One monthly bump test on the Fulmar mast bracket (two modes)."""
    date = when[:10]
    name = f"history/{HISTORY_RIG}/{date}.csv"
    rng = rng_for(name)
    t_ref = dt.datetime.fromisoformat(HISTORY_TIMES[0])
    stamp = dt.datetime.fromisoformat(when)
    days = (stamp - t_ref).total_seconds() / 86400.0
    doy = stamp.timetuple().tm_yday
    # draws, always in this order
    temp_c = round(20.5 + 4.5 * math.sin(2.0 * math.pi * (doy - 105) / 365.25)
                   + 0.8 * rng.standard_normal(), 1)
    scatter1 = float(np.clip(HISTORY_ZETA_SCATTER * rng.standard_normal(), -0.0015, 0.0015))
    scatter2 = float(np.clip(HISTORY_ZETA_SCATTER * rng.standard_normal(), -0.0015, 0.0015))
    f1 = 27.40 * (1.0 - 0.0011 * (temp_c - 20.0)) + 0.02 * rng.standard_normal()
    f2 = 88.60 * (1.0 - 0.0009 * (temp_c - 20.0)) + 0.05 * rng.standard_normal()
    a1 = 3.2 * (1.0 + 0.08 * rng.standard_normal())
    a2 = 1.1 * (1.0 + 0.10 * rng.standard_normal())
    ph1, ph2 = rng.uniform(-math.pi, math.pi, 2)
    trend1 = HISTORY_ZETA_START + HISTORY_ZETA_SLOPE_PER_DAY * days
    zeta1 = trend1 + scatter1
    zeta2 = HISTORY_MODE2_ZETA + scatter2
    modes = [
        dict(natural_frequency_hz=rnd(f1, 7), damping_ratio=rnd(zeta1, 7),
             amplitude=rnd(a1, 6), phase_rad=rnd(ph1, 6)),
        dict(natural_frequency_hz=rnd(f2, 7), damping_ratio=rnd(zeta2, 7),
             amplitude=rnd(a2, 6), phase_rad=rnd(ph2, 6)),
    ]
    snr_db = 35.0
    noise_std = snr_noise_std(modes, snr_db)
    offset = 0.02
    rate_hz, pre_samples, samples = 1000.0, 100, 2000          # −0.1 s … 1.899 s
    t = time_grid(-pre_samples, samples, rate_hz)
    y = offset + ringdown(t, modes) + noise_std * rng.standard_normal(samples)
    lines = [
        "# Kittiwake Yard - monthly bump test (invented demonstration data)",
        f"rig: {HISTORY_RIG}",
        f"date: {when}",
        f"temperature_c: {temp_c:.1f}",
        "sample_rate: 1000 Hz",
        "time [s],accel [m/s^2]",
    ]
    lines += [f"{fmt(a)},{fmt(b)}" for a, b in zip(t, y)]
    write_text(os.path.join(out, name), lines)
    truth = {
        "job": "decay",
        "rig": "Fulmar mast bracket",
        "description": "monthly bump test: hit at t = 0 after a quiet pre-trigger; two modes",
        "dialect": ("comma-separated, '.' decimal, a '#' comment line and a 'key: value' "
                    "preamble (rig, date, temperature_c, sample_rate) before the header row"),
        "columns": {"time": "time [s]", "response": "accel [m/s^2]"},
        "time_unit": "s",
        "metadata": {"rig": HISTORY_RIG, "date": when, "temperature_c": f"{temp_c:.1f}",
                     "sample_rate": "1000 Hz"},
        "date": when,
        "temperature_c": temp_c,
        "sample_rate_hz": rate_hz,
        "samples": samples,
        "start_s": rnd(t[0]),
        "end_s": rnd(t[-1]),
        "trigger_time_s": 0.0,
        "offset": offset,
        "offset_unit": "m/s^2",
        "noise_std": rnd(noise_std),
        "snr_db": snr_db,
        "trend_damping_ratio": rnd(trend1),
        "poles": [mode_truth(**m) for m in modes],
    }
    return name, truth


def history_summary(entries: list) -> dict:
    """True trend of the history rig and the date it reaches the damping threshold."""
    t_ref = dt.datetime.fromisoformat(HISTORY_TIMES[0])
    days_to = (HISTORY_ZETA_START - HISTORY_THRESHOLD) / -HISTORY_ZETA_SLOPE_PER_DAY
    crossing = t_ref + dt.timedelta(days=days_to)
    crossing = crossing.replace(microsecond=0)
    tests = []
    for name, tr in entries:
        stamp = dt.datetime.fromisoformat(tr["date"])
        tests.append({
            "file": name,
            "date": tr["date"],
            "days_since_first": rnd((stamp - t_ref).total_seconds() / 86400.0),
            "temperature_c": tr["temperature_c"],
            "trend_damping_ratio": tr["trend_damping_ratio"],
            "damping_ratio": tr["poles"][0]["damping_ratio"],
            "natural_frequency_hz": tr["poles"][0]["natural_frequency_hz"],
            "mode2_damping_ratio": tr["poles"][1]["damping_ratio"],
            "mode2_natural_frequency_hz": tr["poles"][1]["natural_frequency_hz"],
        })
    # Ordinary least squares on the realised (written) damping values: what a perfect
    # estimator of each test would see.  Supplementary; the truth is the trend above.
    x = np.array([e["days_since_first"] for e in tests])
    z = np.array([e["damping_ratio"] for e in tests])
    slope, icpt = np.polyfit(x, z, 1)
    ols_cross = t_ref + dt.timedelta(days=float((HISTORY_THRESHOLD - icpt) / slope))
    return {
        "rig": HISTORY_RIG,
        "folder": f"history/{HISTORY_RIG}",
        "threshold_damping": HISTORY_THRESHOLD,
        "tracked_mode": {
            "nominal_natural_frequency_hz": 27.40,
            "frequency_temperature_coefficient_per_c": -0.0011,
            "frequency_scatter_std_hz": 0.02,
            "damping_ratio_at_first_test": HISTORY_ZETA_START,
            "damping_ratio_slope_per_day": HISTORY_ZETA_SLOPE_PER_DAY,
            "damping_ratio_slope_per_year": rnd(HISTORY_ZETA_SLOPE_PER_DAY * 365.25),
            "trend_reference_time": HISTORY_TIMES[0],
            "damping_scatter_std": HISTORY_ZETA_SCATTER,
            "damping_scatter_clip": 0.0015,
            "threshold_crossing": {
                "datetime": crossing.isoformat(),
                "date": crossing.date().isoformat(),
                "days_since_first": rnd(days_to),
                "note": "the true linear trend extrapolated to the threshold",
            },
            "ols_on_written_values": {
                "slope_per_day": rnd(slope),
                "intercept_at_first_test": rnd(icpt),
                "threshold_crossing_date": ols_cross.date().isoformat(),
                "note": ("straight line fitted to the 12 written damping ratios; "
                         "supplementary, not the truth"),
            },
        },
        "steady_mode": {
            "nominal_natural_frequency_hz": 88.60,
            "frequency_temperature_coefficient_per_c": -0.0009,
            "frequency_scatter_std_hz": 0.05,
            "damping_ratio": HISTORY_MODE2_ZETA,
            "damping_ratio_slope_per_day": 0.0,
            "damping_scatter_std": HISTORY_ZETA_SCATTER,
        },
        "tests": tests,
    }


# --------------------------------------------------------------------------- main
def generate(out: str) -> dict:
    """Write every demo file and truth.json under ``out``; return the truth."""
    os.makedirs(out, exist_ok=True)
    files = {}
    for make in (bracket_ringdown, plate_ringdown, valve_step, actuator_step, motor_prbs):
        name, truth = make(out)
        files[name] = truth
    entries = [history_file(out, when) for when in HISTORY_TIMES]
    for name, truth in entries:
        files[name] = truth
    truth = {
        "scenario": SCENARIO,
        "generator": {
            "script": "datasets/make_datasets.py",
            "base_seed": BASE_SEED,
            "seeding": "numpy.random.default_rng([base_seed, first 8 bytes of sha256(file name)])",
            "number_format": "%.6g",
        },
        "files": files,
        "history": {HISTORY_RIG: history_summary(entries)},
    }
    text = json.dumps(truth, indent=2, ensure_ascii=False) + "\n"
    with open(os.path.join(out, "truth.json"), "wb") as fh:
        fh.write(text.encode("utf-8"))
    return truth


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=os.path.dirname(os.path.abspath(__file__)),
                        help="folder to write into (default: this script's folder)")
    args = parser.parse_args(argv)
    truth = generate(args.out)
    print(f"wrote {len(truth['files'])} records and truth.json to {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
