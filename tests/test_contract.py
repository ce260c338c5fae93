"""One contract for every job and every free-decay method (STYLE.md: a shared contract suite).

Each job and method must: return a frozen result; serialise to strict JSON (no NaN) through
``to_dict``; give the same answer twice on the same input (deterministic, seeded); leave its
input untouched; report poles sorted by frequency, upper half-plane, each with intervals at
the requested level; and refuse empty or NaN input with the project's own error.
Common practice, no source.
"""
import dataclasses
import json

import numpy as np
import pytest

from identify import PoleprintError, Record
from identify._jsonable import jsonable
from identify.arx import analyse_arx
from identify.decay import (analyse_decay, fit_damped_sinusoids, half_power, log_decrement,
                            matrix_pencil)
from identify.step import analyse_step, unit_response

from _arx_synth import record_signals
from _decay_synth import make_decay, make_record

CONFIDENCE = 0.9


def _decay_record():
    rec, _, _ = make_record([(12.0, 0.02, 1.0, 0.3)], fs=500.0, n=1500, snr_db=40, pretrigger=50, seed=4)
    return rec


def _step_record():
    ts, n, pre = 0.1, 400, 40
    u = np.full(n, 10.0)
    u[pre:] = 14.0
    rng = np.random.default_rng(2)
    y = 50.0 + 2.0 * unit_response("first-order", (3.0,), 0.7, u - 10.0, ts) + rng.normal(0, 0.05, n)
    return Record.from_arrays(sample_time_s=ts, valve=u, level=y, units={"valve": "%", "level": "mm"})


def _arx_record():
    y, u, _, _, _ = record_signals([(1.0, 0.05)], [-8.0], 1 / 15, 1500, noise=0.05, kind="equation", seed=3)
    return Record.from_arrays(sample_time_s=1 / 15, y=y, u=u, units={"y": "mm", "u": "V"})


JOBS = {
    "decay": (_decay_record, lambda rec, **kw: analyse_decay(rec, **kw), {}),
    "step": (_step_record, lambda rec, **kw: analyse_step(rec, output="level", input="valve", **kw), {}),
    "arx": (_arx_record, lambda rec, **kw: analyse_arx(rec, output="y", input="u", **kw), {}),
}


@pytest.fixture(scope="module", params=sorted(JOBS))
def job(request):
    make, run, _ = JOBS[request.param]
    rec = make()
    before = [c.values.copy() for c in rec.channels]
    first = run(rec, confidence=CONFIDENCE)
    second = run(rec, confidence=CONFIDENCE)
    return request.param, rec, before, first, second


def test_result_is_frozen(job):
    _, _, _, result, _ = job
    assert dataclasses.is_dataclass(result)
    field = dataclasses.fields(result)[0].name
    with pytest.raises(dataclasses.FrozenInstanceError):
        setattr(result, field, None)


def test_to_dict_is_strict_json_and_deterministic(job):
    _, _, _, first, second = job
    text = json.dumps(jsonable(first.to_dict()), allow_nan=False)
    assert json.loads(text)["poles"]
    assert text == json.dumps(jsonable(second.to_dict()), allow_nan=False)


def test_input_record_untouched(job):
    _, rec, before, _, _ = job
    for c, b in zip(rec.channels, before):
        np.testing.assert_array_equal(c.values, b)


def test_poles_sorted_upper_half_plane_with_intervals_at_level(job):
    _, _, _, result, _ = job
    fns = [p.natural_frequency_hz for p in result.poles]
    assert fns == sorted(fns)
    for p in result.poles:
        assert p.imag >= 0.0
        assert p.ci is not None and p.ci.level == CONFIDENCE
        lo, hi = p.ci.natural_frequency_hz
        assert lo <= p.natural_frequency_hz <= hi


def test_result_carries_the_common_fields(job):
    _, _, _, result, _ = job
    for name in ("source", "sha256", "poles", "warnings", "settings", "response"):
        assert hasattr(result, name), name
    assert result.settings["confidence"] == CONFIDENCE
    assert result.response.measured.size == result.response.model.size
    assert all(isinstance(w, str) and ":" in w for w in result.warnings)


@pytest.mark.parametrize("name", sorted(JOBS))
def test_nan_input_is_refused_with_the_projects_error(name):
    make, run, _ = JOBS[name]
    rec = make()
    chans = []
    for c in rec.channels:
        v = c.values.copy()
        v[len(v) // 2] = np.nan
        chans.append(type(c)(c.name, c.unit, v))
    bad = Record(rec.start_s, rec.sample_time_s, chans, "nan.csv", rec.sha256)
    with pytest.raises(PoleprintError, match="missing|NaN|non-finite"):
        run(bad, confidence=CONFIDENCE)


@pytest.mark.parametrize("name", sorted(JOBS))
def test_tiny_input_is_refused_with_the_projects_error(name):
    make, run, _ = JOBS[name]
    rec = make().segment(None, None)
    tiny = Record(rec.start_s, rec.sample_time_s,
                  [type(c)(c.name, c.unit, c.values[:4]) for c in rec.channels], "tiny.csv", "")
    with pytest.raises(PoleprintError):
        run(tiny, confidence=CONFIDENCE)


# -- the free-decay methods, one by one -------------------------------------------------------
def _method_calls():
    t, y, _, _ = make_decay([(12.0, 0.02, 1.0, 0.3)], fs=500.0, n=1500, snr_db=40, seed=6)
    seeds = matrix_pencil(t, y, confidence=CONFIDENCE).poles
    return t, y, {
        "logdec": lambda tt, yy: log_decrement(tt, yy, confidence=CONFIDENCE),
        "pencil": lambda tt, yy: matrix_pencil(tt, yy, confidence=CONFIDENCE),
        "fit": lambda tt, yy: fit_damped_sinusoids(tt, yy, seeds, confidence=CONFIDENCE),
        "halfpower": lambda tt, yy: half_power(tt, yy, confidence=CONFIDENCE),
    }


@pytest.mark.parametrize("method", ["logdec", "pencil", "fit", "halfpower"])
def test_each_decay_method_keeps_the_contract(method):
    t, y, calls = _method_calls()
    y0 = y.copy()
    a = calls[method](t, y)
    b = calls[method](t, y)
    np.testing.assert_array_equal(y, y0)  # input untouched
    assert a.method == method
    assert json.dumps(jsonable(a.to_dict()), allow_nan=False) == json.dumps(jsonable(b.to_dict()), allow_nan=False)
    assert len(a.poles) >= 1
    p = a.poles[0]
    assert p.ci is not None and p.ci.level == CONFIDENCE
    assert p.natural_frequency_hz == pytest.approx(12.0, rel=5e-3)  # the synthetic truth
    assert all(isinstance(w, str) and ":" in w for w in a.warnings)
