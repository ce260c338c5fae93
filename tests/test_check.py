"""`check`: pair poles by frequency and tell a real move from noise, with intervals."""
import json
import math

import numpy as np
import pytest

from identify import ParameterValueError, Record, RecordError
from identify._jsonable import dumps_line
from identify.check import check_against, compare_poles, load_saved_result, standard_error
from identify.poles import Pole, normal_quantile, pole_with_delta_intervals


def _pole(fn_hz, zeta, sd_re=0.05, sd_im=0.05):
    wn = 2 * math.pi * fn_hz
    s = complex(-zeta * wn, wn * math.sqrt(1 - zeta ** 2))
    return pole_with_delta_intervals(s, np.diag([sd_re ** 2, sd_im ** 2]), 0.95)


def test_standard_error_reads_back_a_normal_interval():
    # derived: a 95 % normal interval is x ± 1.959964·se
    se = standard_error((10.0 - 1.959964 * 0.3, 10.0 + 1.959964 * 0.3), 0.95)
    assert se == pytest.approx(0.3, rel=1e-6)


def test_five_percent_frequency_move_is_flagged():
    saved = [_pole(12.0, 0.02), _pole(40.0, 0.01)]
    new = [_pole(12.0 * 1.05, 0.02), _pole(40.0, 0.01)]
    changes = compare_poles(saved, new)
    assert [c.status for c in changes] == ["matched", "matched"]
    first, second = changes
    fq = first.quantities[0]
    assert fq.name == "natural_frequency_hz"
    assert fq.change_percent == pytest.approx(5.0, rel=1e-6)
    assert fq.moved is True and fq.p_value < 1e-6
    assert first.moved is True and second.moved is False
    # derived: z = Δ / √(se_a² + se_b²) with se read back from each interval
    se_a = standard_error(saved[0].ci.natural_frequency_hz, 0.95)
    se_b = standard_error(new[0].ci.natural_frequency_hz, 0.95)
    assert fq.z == pytest.approx((new[0].natural_frequency_hz - saved[0].natural_frequency_hz)
                                 / math.hypot(se_a, se_b))
    assert "moved more than the intervals explain" in first.summary


def test_a_move_within_the_intervals_is_not_flagged():
    a = _pole(12.0, 0.02)
    se = standard_error(a.ci.natural_frequency_hz, 0.95)
    wn = 2 * math.pi * (a.natural_frequency_hz + 1.5 * se)  # |z| = 1.5/√2 ≈ 1.06 < 1.96
    b = pole_with_delta_intervals(complex(-0.02 * wn, wn * math.sqrt(1 - 0.02 ** 2)), np.diag([0.05 ** 2] * 2))
    (c,) = compare_poles([a], [b])
    assert c.quantities[0].z == pytest.approx(1.5 / math.sqrt(2), rel=0.02)
    assert c.moved is False


def test_flag_level_follows_the_saved_confidence():
    a, b = _pole(12.0, 0.02), _pole(12.0, 0.02)
    se = standard_error(a.ci.natural_frequency_hz, 0.95)
    z_target = 2.2  # between the 95 % (1.96) and 99 % (2.576) quantiles
    wn = 2 * math.pi * (b.natural_frequency_hz + z_target * se * math.sqrt(2))
    b = pole_with_delta_intervals(complex(-0.02 * wn, wn * math.sqrt(1 - 0.0004)), np.diag([0.05 ** 2] * 2))
    assert compare_poles([a], [b])[0].quantities[0].moved is True
    assert compare_poles([a], [b], confidence=0.99)[0].quantities[0].moved is False
    assert normal_quantile(0.95) < z_target < normal_quantile(0.99)  # scipy.stats.norm.ppf values


def test_missing_and_new_poles_are_reported():
    changes = compare_poles([_pole(10, 0.02), _pole(30, 0.02)], [_pole(10.1, 0.02), _pole(80, 0.02)])
    status = [c.status for c in changes]
    assert status == ["matched", "not found in the new record", "new in this record"]
    assert changes[1].saved.natural_frequency_hz == pytest.approx(30)
    assert changes[2].new.natural_frequency_hz == pytest.approx(80)


def test_closest_pairs_first_and_real_poles_only_by_frequency():
    real_a = pole_with_delta_intervals(complex(-2.0, 0.0), [[0.01]])
    real_b = pole_with_delta_intervals(complex(-2.1, 0.0), [[0.01]])
    changes = compare_poles([_pole(10, 0.02), _pole(10.6, 0.02), real_a],
                            [_pole(10.55, 0.02), _pole(10.05, 0.02), real_b])
    assert [round(c.new.natural_frequency_hz, 2) for c in changes] == [10.05, 10.55, round(real_b.natural_frequency_hz, 2)]
    assert [q.name for q in changes[2].quantities] == ["natural_frequency_hz"]


def test_poles_without_intervals_cannot_be_judged():
    (c,) = compare_poles([Pole(-1.0, 60.0)], [Pole(-1.0, 66.0)])
    assert c.moved is None and c.quantities[0].z is None
    assert "no interval to judge by" in c.summary


def test_dict_poles_and_bad_options():
    d = _pole(12.0, 0.02).to_dict()
    (c,) = compare_poles([d], [_pole(12.0, 0.02)])
    assert c.status == "matched"
    json.dumps(c.to_dict(), allow_nan=False)
    with pytest.raises(ParameterValueError):
        compare_poles([d], [d], match_tolerance=-1)
    with pytest.raises(ParameterValueError):
        compare_poles([d], [d], confidence=95)


# -- with the decay job: a synthetic pair of records ---------------------------------------
def _record(fn_hz, zeta, seed, n=1200, fs=400.0):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    wn = 2 * np.pi * fn_hz
    s = complex(-zeta * wn, wn * np.sqrt(1 - zeta ** 2))
    y = 2.0 * np.exp(s.real * t) * np.cos(s.imag * t + 0.4) + rng.normal(0, 0.02, n)
    return Record.from_arrays(t, accel=y, units={"accel": "m/s^2"})


@pytest.fixture(scope="module")
def saved_decay():
    from identify import decay

    result = decay.analyse_decay(_record(12.0, 0.02, seed=1))
    return json.loads(dumps_line(result))  # exactly what --json writes


def test_check_flags_a_pole_moved_by_five_percent(saved_decay):
    check = check_against(saved_decay, _record(12.6, 0.02, seed=2))
    assert check.job == "decay" and check.moved
    (c,) = check.changes
    fq = c.quantities[0]
    assert fq.change_percent == pytest.approx(5.0, abs=0.2)
    assert fq.moved is True
    assert any(w.startswith("pole moved:") for w in check.warnings)
    json.dumps(check.to_dict(), allow_nan=False)


def test_check_does_not_flag_the_same_rig_with_new_noise(saved_decay):
    check = check_against(saved_decay, _record(12.0, 0.02, seed=3))
    assert not check.moved
    assert all(q.moved is False for q in check.changes[0].quantities)
    assert check.validation is not None and check.validation.fit_percent > 90


def test_saved_result_file_round_trip(tmp_path, saved_decay):
    path = tmp_path / "model.json"
    path.write_text(json.dumps(saved_decay) + "\n", encoding="utf-8")
    assert load_saved_result(path)["poles"] == saved_decay["poles"]
    bad = tmp_path / "bad.json"
    bad.write_text("{not json", encoding="utf-8")
    with pytest.raises(RecordError, match="not valid JSON"):
        load_saved_result(bad)
    other = tmp_path / "other.json"
    other.write_text('{"a": 1}', encoding="utf-8")
    with pytest.raises(RecordError, match="not a poleprint result"):
        load_saved_result(other)


def test_check_command_line(tmp_path, saved_decay, capsys):
    import argparse

    from identify.cli import _check

    model = tmp_path / "model.json"
    model.write_text(json.dumps(saved_decay), encoding="utf-8")
    rec = _record(12.6, 0.02, seed=4)
    csv = tmp_path / "today.csv"
    np.savetxt(csv, np.column_stack([rec.time_s, rec.channel("accel").values]), delimiter=",",
               header="time [s],accel [m/s^2]", comments="")
    parser = argparse.ArgumentParser(prog="poleprint")
    _check.register(parser.add_subparsers(dest="command"), "check", "check")
    args = parser.parse_args(["check", str(csv), "--model", str(model), "--json"])
    assert args.func(args) == 0
    line = json.loads(capsys.readouterr().out.strip())
    assert line["moved"] is True and line["changes"][0]["quantities"][0]["moved"] is True
    args = parser.parse_args(["check", str(csv), "--model", str(model)])
    assert args.func(args) == 0
    out = capsys.readouterr().out
    assert "MOVED" in out and "Hz" in out and "not clearances" in out
    args = parser.parse_args(["check", str(csv), "--model", str(tmp_path / "none.json")])
    assert args.func(args) == 2
    assert "poleprint: error:" in capsys.readouterr().err
