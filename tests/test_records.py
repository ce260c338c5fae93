"""Record built from arrays: time base, channel choice, segments (common practice, no source)."""
import numpy as np
import pytest

from identify import Channel, ParameterTypeError, Record, RecordError


def make():
    t = -0.5 + 0.01 * np.arange(200)
    return Record.from_arrays(t, accel=np.sin(t), force=np.cos(t), units={"accel": "m/s^2"})


def test_time_base_and_summary():
    r = make()
    assert r.samples == 200 and r.start_s == pytest.approx(-0.5)
    assert r.sample_rate_hz == pytest.approx(100.0)
    assert r.duration_s == pytest.approx(1.99)
    np.testing.assert_allclose(r.time_s[:3], [-0.5, -0.49, -0.48])
    s = r.summary()
    assert {"source", "samples", "sample_rate_hz", "duration_s", "channels", "warnings"} <= set(s)
    assert s["channels"][0] == {"name": "accel", "unit": "m/s^2", "min": pytest.approx(np.sin(-0.5)),
                                "max": pytest.approx(np.sin(1.49)), "missing": 0}
    assert len(r.sha256) == 64


def test_channel_by_name_case_insensitive_and_index():
    r = make()
    assert r.channel("ACCEL").name == "accel"
    assert r.channel(1).name == "force"
    assert r.channel("1").name == "force"


def test_wrong_column_lists_available():
    r = make()
    with pytest.raises(RecordError, match=r"no column named 'speed' \(available: accel, force\)"):
        r.channel("speed")
    with pytest.raises(RecordError, match="out of range"):
        r.channel(5)
    with pytest.raises(RecordError, match="choose one with --column"):
        r.channel()


def test_values_are_read_only():
    r = make()
    with pytest.raises(ValueError):
        r.channels[0].values[0] = 1.0


def test_segment_is_a_new_record():
    r = make()
    seg = r.segment(0.0, 0.5)
    assert seg.start_s == pytest.approx(0.0) and seg.end_s == pytest.approx(0.5)
    assert seg.samples == 51 and r.samples == 200
    with pytest.raises(RecordError, match="fewer than 2 samples"):
        r.segment(5.0, 6.0)


def test_non_uniform_time_rejected():
    with pytest.raises(RecordError, match="uniformly"):
        Record.from_arrays([0, 1, 3], y=[1, 2, 3])


def test_from_arrays_needs_a_channel():
    with pytest.raises(ParameterTypeError):
        Record.from_arrays([0, 1, 2])


def test_same_data_same_fingerprint():
    assert make().sha256 == make().sha256


def test_time_base_built_in_place_is_start_plus_k_steps():
    # derived: the time base is start + k*dt, computed in place (one array)
    rec = Record(-0.25, 1e-3, (Channel("a", "V", np.linspace(0.0, 1.0, 7)),))
    np.testing.assert_array_equal(rec.time_s, -0.25 + 1e-3 * np.arange(7))
