"""The bundled demo records: reproducible, small, and described truly by truth.json.

The records are invented (see datasets/README.md).  These tests parse them with a tiny
reader of their own (independent of identify's reader) and rebuild every record from the
parameters in truth.json: the rebuilt model must leave residuals with the stated noise
level, so truth.json and the files cannot drift apart.
"""
from __future__ import annotations

import datetime as dt
import importlib.util
import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from identify.poles import Pole

DATASETS = Path(__file__).resolve().parent.parent / "datasets"
TRUTH = json.loads((DATASETS / "truth.json").read_text(encoding="utf-8"))
FILES = sorted(TRUTH["files"])


def _load_generator():
    spec = importlib.util.spec_from_file_location("make_datasets", DATASETS / "make_datasets.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _generated_files(root: Path) -> list:
    return sorted(p.relative_to(root).as_posix() for p in root.rglob("*")
                  if p.is_file() and p.name != "make_datasets.py" and p.name != "README.md"
                  and "__pycache__" not in p.parts)


def _read(name: str) -> tuple:
    """Tiny reader for the demo dialects: (metadata dict, header list, float array)."""
    info = TRUTH["files"][name]
    lines = (DATASETS / name).read_text(encoding="utf-8").splitlines()
    time_name = info["columns"]["time"]
    head_at = next(i for i, line in enumerate(lines) if line.startswith(time_name))
    meta = {}
    for line in lines[:head_at]:
        if line.startswith("#"):
            continue
        key, _, value = line.partition(": ")
        meta[key] = value
    header_line = lines[head_at]
    if ";" in header_line:
        split, decimal_comma = (lambda s: s.split(";")), True
    elif "\t" in header_line:
        split, decimal_comma = (lambda s: s.split("\t")), False
    elif "," in header_line:
        split, decimal_comma = (lambda s: s.split(",")), False
    else:
        split, decimal_comma = (lambda s: s.split()), False
    header = split(header_line)
    rows = []
    for line in lines[head_at + 1:]:
        cells = split(line)
        if decimal_comma:
            cells = [c.replace(",", ".") for c in cells]
        rows.append([float(c) for c in cells])
    return meta, header, np.array(rows)


def _time_s(name: str, data: np.ndarray) -> np.ndarray:
    scale = {"s": 1.0, "ms": 1e-3}[TRUTH["files"][name]["time_unit"]]
    return data[:, 0] * scale


def _ringdown(t, poles, offset):
    # derived: each mode is A·exp(Re s·t)·cos(Im s·t + φ) from t = 0 (datasets/README.md)
    y = np.full_like(t, offset)
    on = t >= 0
    for p in poles:
        s = Pole(p["real"], p["imag"]).s
        y[on] += p["amplitude"] * np.exp(s.real * t[on]) * np.cos(s.imag * t[on] + p["phase_rad"])
    return y


def _step_response(num, den, tp):
    """Unit-step response of num/den at times tp ≥ 0 by partial fractions (scipy.signal)."""
    r, p, k = signal.residue(num, np.polymul(den, [1.0, 0.0]))
    assert k.size == 0
    return np.real(sum(ri * np.exp(pi * tp) for ri, pi in zip(r, p)))


def _assert_noise_like(resid, noise_std):
    n = resid.size
    # derived: the sample std of n Gaussian values has relative sd ≈ 1/sqrt(2n); 4 sd allowed
    assert abs(np.std(resid) / noise_std - 1.0) < 4.0 / math.sqrt(2 * n) + 1e-3
    assert abs(np.mean(resid)) < 4.0 * noise_std / math.sqrt(n)


# ------------------------------------------------------------------------- reproduction
def test_generator_reproduces_committed_files_byte_for_byte(tmp_path):
    module = _load_generator()
    assert module.main(["--out", str(tmp_path)]) == 0
    written = _generated_files(tmp_path)
    assert written == sorted(FILES + ["truth.json"])
    assert _generated_files(DATASETS) == written
    for name in written:
        assert (tmp_path / name).read_bytes() == (DATASETS / name).read_bytes(), name
    # re-run safe: a second run into the same folder changes nothing
    module.main(["--out", str(tmp_path)])
    for name in written:
        assert (tmp_path / name).read_bytes() == (DATASETS / name).read_bytes(), name


def test_per_file_seed_depends_on_name_only():
    module = _load_generator()
    a = module.rng_for("valve_step.csv").standard_normal(3)
    b = module.rng_for("valve_step.csv").standard_normal(3)
    c = module.rng_for("actuator_step.csv").standard_normal(3)
    assert np.array_equal(a, b) and not np.array_equal(a, c)


def test_files_are_small():
    sizes = {name: (DATASETS / name).stat().st_size for name in FILES + ["truth.json"]}
    assert max(sizes.values()) < 300_000, sizes
    assert sum(sizes.values()) < 3_000_000


def test_readme_names_every_file_and_says_invented():
    text = (DATASETS / "README.md").read_text(encoding="utf-8")
    assert "invented" in text.lower()
    for name in FILES:
        if not name.startswith("history/"):
            assert name in text, name
    assert f"history/{next(iter(TRUTH['history']))}/" in text


# ------------------------------------------------------------------------- time base
@pytest.mark.parametrize("name", FILES)
def test_time_base_matches_truth(name):
    info = TRUTH["files"][name]
    _, header, data = _read(name)
    t = _time_s(name, data)
    assert header[0] == info["columns"]["time"]
    assert data.shape[0] == info["samples"]
    assert t[0] == pytest.approx(info["start_s"], abs=1e-12)
    assert t[-1] == pytest.approx(info["end_s"], abs=1e-9)
    expected = info["start_s"] + np.arange(t.size) / info["sample_rate_hz"]
    np.testing.assert_allclose(t, expected, rtol=0, atol=1e-9)


@pytest.mark.parametrize("name", FILES)
def test_poles_in_truth_are_self_consistent(name):
    for p in TRUTH["files"][name]["poles"]:
        pole = Pole(p["real"], p["imag"])
        assert pole.natural_frequency_hz == pytest.approx(p["natural_frequency_hz"], rel=1e-8)
        assert pole.damping_ratio == pytest.approx(p["damping_ratio"], rel=1e-8)
        if "time_constant_s" in p:
            assert pole.time_constant_s == pytest.approx(p["time_constant_s"], rel=1e-8)


# ------------------------------------------------------------------------- rebuild from truth
DECAY_FILES = [n for n in FILES if TRUTH["files"][n]["job"] == "decay"]


@pytest.mark.parametrize("name", DECAY_FILES)
def test_ringdown_rebuilt_from_truth_leaves_only_the_stated_noise(name):
    info = TRUTH["files"][name]
    meta, header, data = _read(name)
    assert header[1] == info["columns"]["response"]
    for key, value in info.get("metadata", {}).items():
        assert meta[key] == value
    t = _time_s(name, data)
    resid = data[:, 1] - _ringdown(t, info["poles"], info["offset"])
    _assert_noise_like(resid, info["noise_std"])
    pre = data[t < info["trigger_time_s"], 1]
    assert abs(pre.mean() - info["offset"]) < 4.0 * info["noise_std"] / math.sqrt(pre.size)
    # derived: SNR = 20 log10(sqrt(sum A^2 / 2) / noise_std)
    rms0 = math.sqrt(sum(p["amplitude"] ** 2 for p in info["poles"]) / 2.0)
    assert 20.0 * math.log10(rms0 / info["noise_std"]) == pytest.approx(info["snr_db"], abs=1e-6)


STEP_FILES = [n for n in FILES if TRUTH["files"][n]["job"] == "step"]


@pytest.mark.parametrize("name", STEP_FILES)
def test_step_rebuilt_from_truth_leaves_only_the_stated_noise(name):
    info = TRUTH["files"][name]
    _, header, data = _read(name)
    assert header[1:] == [info["columns"]["input"], info["columns"]["output"]]
    t, u, y = _time_s(name, data), data[:, 1], data[:, 2]
    before = t < info["step_time_s"]
    assert np.all(u[before] == info["input_before"])
    assert np.all(u[~before] == info["input_before"] + info["step_size"])
    if info["structure"] == "two-lag":
        tau1, tau2 = info["time_constants_s"]
        den = np.polymul([tau1, 1.0], [tau2, 1.0])
    else:
        wn = 2 * math.pi * info["natural_frequency_hz"]
        den = np.array([1.0, 2 * info["damping_ratio"] * wn, wn * wn]) / (wn * wn)
    tp = np.maximum(t - info["step_time_s"] - info["dead_time_s"], 0.0)
    model = info["output_before"] + info["gain"] * info["step_size"] * _step_response([1.0], den, tp)
    _assert_noise_like(y - model, info["noise_std"])
    assert model[-1] == pytest.approx(info["final_value"], rel=1e-6)
    if info["structure"] == "underdamped":
        # Ogata ch. 5 (REFERENCES.md): Mp = exp(-πζ/√(1-ζ²)), tp = π/ωd
        zeta = info["damping_ratio"]
        assert info["overshoot_percent"] == pytest.approx(
            100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta ** 2)), rel=1e-8)


def test_motor_prbs_rebuilt_from_truth_leaves_only_the_stated_noise():
    name = "motor_prbs.csv"
    info = TRUTH["files"][name]
    _, header, data = _read(name)
    assert header == [info["columns"][k] for k in ("time", "input", "output")]
    t, u, y = data[:, 0], data[:, 1], data[:, 2]
    assert set(np.unique(u)) == set(info["input_levels_v"])
    mid = sum(info["input_levels_v"]) / 2
    tau, fn, zeta = info["time_constant_s"], info["natural_frequency_hz"], info["damping_ratio"]
    wn = 2 * math.pi * fn
    sys_c = ([info["dc_gain"] * wn * wn], np.polymul([tau, 1.0], [1.0, 2 * zeta * wn, wn * wn]))
    # scipy.signal.lsim with zero-order hold as the reference simulator
    _, dy, _ = signal.lsim(sys_c, u - mid, t, interp=False)
    _assert_noise_like(y - info["output_at_mid_input"] - dy, info["noise_std"])
    # the discrete equivalent in truth.json has the continuous poles mapped by z = exp(s Ts)
    disc = info["discrete_equivalent"]
    z = np.roots(disc["a"])
    s = np.log(z.astype(complex)) * info["sample_rate_hz"]
    s = s[np.argsort(np.abs(s))]
    assert s[0].real == pytest.approx(info["poles"][0]["real"], rel=1e-6)
    assert abs(s[1].imag) == pytest.approx(info["poles"][1]["imag"], rel=1e-6)
    assert s[1].real == pytest.approx(info["poles"][1]["real"], rel=1e-6)
    # DC gain of the discrete model equals the continuous one
    assert sum(disc["b"]) / sum(disc["a"]) == pytest.approx(info["dc_gain"], rel=1e-6)


# ------------------------------------------------------------------------- history
def test_history_series_matches_files_and_its_trend():
    (rig, hist), = TRUTH["history"].items()
    mode = hist["tracked_mode"]
    tests = hist["tests"]
    folder = DATASETS / hist["folder"]
    assert sorted(p.name for p in folder.glob("*.csv")) == [Path(e["file"]).name for e in tests]
    assert len(tests) == 12
    t_ref = dt.datetime.fromisoformat(mode["trend_reference_time"])
    for e in tests:
        info = TRUTH["files"][e["file"]]
        meta, _, _ = _read(e["file"])
        assert meta["date"] == e["date"] == info["date"]
        assert Path(e["file"]).stem == e["date"][:10]
        assert float(meta["temperature_c"]) == e["temperature_c"]
        assert meta["rig"] == rig
        days = (dt.datetime.fromisoformat(e["date"]) - t_ref).total_seconds() / 86400
        assert e["days_since_first"] == pytest.approx(days, abs=1e-6)
        trend = mode["damping_ratio_at_first_test"] + mode["damping_ratio_slope_per_day"] * days
        assert e["trend_damping_ratio"] == pytest.approx(trend, rel=1e-8)
        assert abs(e["damping_ratio"] - trend) <= mode["damping_scatter_clip"] + 1e-9
        assert e["damping_ratio"] == info["poles"][0]["damping_ratio"]
    dates = [dt.datetime.fromisoformat(e["date"]) for e in tests]
    gaps = np.diff([d.timestamp() for d in dates]) / 86400
    assert np.all((gaps > 20) & (gaps < 40))                       # monthly
    first, last = tests[0]["trend_damping_ratio"], tests[-1]["trend_damping_ratio"]
    assert 0.028 < first <= 0.032 and 0.016 < last < 0.020      # the declining story
    # derived: crossing = t_ref + (ζ0 − threshold) / |slope| days
    cross = mode["threshold_crossing"]
    days = (mode["damping_ratio_at_first_test"] - hist["threshold_damping"]) \
        / -mode["damping_ratio_slope_per_day"]
    expect = t_ref + dt.timedelta(days=days)
    assert abs((dt.datetime.fromisoformat(cross["datetime"]) - expect).total_seconds()) < 1.0
    assert cross["date"] == expect.date().isoformat()
    # the supplementary straight line through the written values
    x = np.array([e["days_since_first"] for e in tests])
    zeta = np.array([e["damping_ratio"] for e in tests])
    slope, _ = np.polyfit(x, zeta, 1)
    assert slope == pytest.approx(mode["ols_on_written_values"]["slope_per_day"], rel=1e-6)
