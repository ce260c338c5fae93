"""Each warning of the decay job, triggered on purpose (one test per warning), and absent
on a clean record.  Thresholds are documented in docs/decay.md (common practice, no source)."""
import numpy as np
import pytest

from _decay_synth import make_record
from identify.decay import analyse_decay
from identify.decay._checks import _consensus
from identify.decay._common import MethodEstimate
from identify.poles import Pole, PoleIntervals
from identify.records import Record


def _keys(result):
    return {w.split(":", 1)[0] for w in result.warnings}


def _near(result, fn, rel=0.005):
    return [p for p in result.poles if abs(p.natural_frequency_hz - fn) / fn < rel]


def test_clean_record_has_no_warning():
    rec, _, _ = make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, seed=1)
    result = analyse_decay(rec)
    assert result.warnings == ()
    for w in analyse_decay(rec).warnings:  # warnings are one line "key: text"
        assert "\n" not in w


def test_few_cycles():
    # 2 cycles of a 2 Hz mode: a warning, and the one true mode (no made-up mode)
    rec, _, _ = make_record([(2.0, 0.01, 1.0, 0.3)], fs=200.0, n=200, snr_db=40, seed=2)
    result = analyse_decay(rec)
    assert "few cycles" in _keys(result)
    assert len(result.poles) == 1 and _near(result, 2.0, rel=0.02)


def test_low_snr():
    rec, _, _ = make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=15, seed=3)
    result = analyse_decay(rec)
    assert "low SNR" in _keys(result)
    assert len(result.poles) == 1 and _near(result, 10.0)


def test_clipping_moves_the_segment_past_the_clipped_samples():
    rec, _, _ = make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, clip=0.7, seed=4)
    result = analyse_decay(rec)
    assert "clipping" in _keys(result)
    text = next(w for w in result.warnings if w.startswith("clipping:"))
    assert "after the last clipped sample" in text
    assert result.segment["start_s"] > 0.0
    p = result.poles[0]  # unclipped part analysed: still the true mode
    assert abs(p.natural_frequency_hz - 10.0) / 10.0 < 0.005 and abs(p.damping_ratio - 0.02) < 0.002


def test_mode_near_nyquist():
    rec, _, _ = make_record([(90.0, 0.01, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, seed=5)
    result = analyse_decay(rec)
    assert "near Nyquist" in _keys(result)
    assert _near(result, 90.0)


def test_large_drift():
    rec, _, _ = make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40,
                            offset=1.0, drift_per_s=0.2, seed=6)
    result = analyse_decay(rec)
    assert "large drift" in _keys(result)
    p = result.poles[0]  # the drift is fitted, so the mode is still right
    assert abs(p.natural_frequency_hz - 10.0) / 10.0 < 0.005 and abs(p.damping_ratio - 0.02) < 0.002


def test_methods_disagree():
    # The warning compares each cross-check's interval with the answer's (widened to at
    # least the answer's width, docs/decay.md).  The rules on constructed estimates here;
    # end to end on a friction decay in test_methods_disagree_on_a_friction_decay (on the
    # linear synthetic records of this suite the calibrated cross-checks agree).
    def pole(fn_ci, z_ci):
        ci = PoleIntervals(0.95, "delta", (-1.1, -0.9), (62.0, 63.0), fn_ci, z_ci)
        return Pole(-1.0, 62.8, 1.0, ci)

    answer = MethodEstimate("fit", (pole((9.99, 10.01), (0.015, 0.017)),))
    same = MethodEstimate("logdec", (pole((9.98, 10.02), (0.016, 0.018)),))
    other = MethodEstimate("halfpower", (pole((9.98, 10.02), (0.019, 0.021)),))
    rows, text = _consensus(answer, {"fit": answer, "logdec": same})
    assert text == [] and rows[0]["agree"]
    rows, text = _consensus(answer, {"fit": answer, "halfpower": other})
    assert len(text) == 1 and text[0].startswith("methods disagree: mode 1") and "halfpower ζ" in text[0]
    assert rows[0]["agree"] is False
    # a narrow cross-check interval is widened to the answer's before comparing
    narrow = MethodEstimate("logdec", (pole((9.98, 10.02), (0.0178, 0.0179)),))
    rows, text = _consensus(answer, {"fit": answer, "logdec": narrow})
    assert text == []
    # a method that doubts its own interval, or the pencil (the fit's seed), raises no warning
    doubtful = MethodEstimate("halfpower", other.poles, ("few spectral lines: only 0.9 lines",))
    seed = MethodEstimate("pencil", other.poles)
    rows, text = _consensus(answer, {"fit": answer, "halfpower": doubtful, "pencil": seed})
    assert text == [] and rows[0]["estimates"]["halfpower"]["own_warnings"] == ["few spectral lines"]


def _friction_decay(dry, *, seed, fs=1000.0, duration=6.0, fn=10.0, zeta=0.01, snr_db=40.0):
    """One mode with viscous damping ζ plus dry (Coulomb) friction of acceleration ``dry``
    (m/s², smoothed sign by tanh(v / 1 mm/s)), released from x = 1, integrated by scipy's
    DOP853 to 1e-10.  Dry friction takes 4·dry/ω² of amplitude per cycle, a straight-line
    envelope instead of an exponential one (Den Hartog, *Mechanical Vibrations*, from
    memory): no sum of exponentials fits it exactly."""
    from scipy.integrate import solve_ivp

    w = 2 * np.pi * fn

    def rhs(_, state):
        x, v = state
        return [v, -2 * zeta * w * v - w * w * x - dry * np.tanh(v / 1e-3)]

    t = np.arange(int(duration * fs)) / fs
    y = solve_ivp(rhs, (0.0, t[-1]), [1.0, 0.0], t_eval=t, rtol=1e-10, atol=1e-12, method="DOP853").y[0]
    noise = np.sqrt(0.5 / 10 ** (snr_db / 10))
    y = y + np.random.default_rng(seed).normal(0.0, noise, y.size)
    return Record.from_arrays(t, displacement=y, units={"displacement": "m"})


@pytest.mark.parametrize("seed", [0, 1])
def test_methods_disagree_on_a_friction_decay(seed):
    # end to end: a decay the linear model cannot explain (dry friction) makes the
    # half-power cross-check disagree with the fit, and the fit split the one mode into
    # a pair closer than the record resolves; the same mode without friction raises neither
    result = analyse_decay(_friction_decay(2.0, seed=seed))
    keys = _keys(result)
    assert "methods disagree" in keys and "unresolved pair" in keys
    disagree = [w for w in result.warnings if w.startswith("methods disagree")]
    assert all("halfpower ζ" in w and "do not overlap" in w for w in disagree)
    assert any(row["agree"] is False for row in result.consensus)
    linear = analyse_decay(_friction_decay(0.0, seed=seed))
    assert linear.warnings == ()
    assert len(linear.poles) == 1 and _near(linear, 10.0, rel=0.001)


def test_unresolved_pair_not_raised_for_resolved_close_modes():
    # two modes at a frequency ratio of 1.05 over a record 4 beat periods long: resolved
    rec, _, _ = make_record([(10.0, 0.002, 1.0, 0.3), (10.5, 0.002, 1.0, 1.0)], fs=200.0, n=1600,
                            snr_db=40, seed=5)
    result = analyse_decay(rec)
    assert len(result.poles) == 2 and "unresolved pair" not in _keys(result)


def test_cross_check_table_marks_each_methods_standing():
    # the text table's remark column and the report's "own warnings" column: a cross-check
    # that doubts its own interval says so next to its numbers
    from identify.report._html import _methods_table

    # 4 s of a 5 Hz mode with ζ = 0.02: the decay falls to 8 %, the half-power band holds
    # under one raw line, and the check says so beside a value that is still right
    short = analyse_decay(make_record([(5.0, 0.02, 1.0, 0.3)], fs=100.0, n=400, snr_db=50, seed=6)[0])
    text = short.summary()
    rows = [line for line in text.splitlines() if line.startswith("1 ") and "halfpower" in line]
    assert len(rows) == 1 and rows[0].endswith("doubtful here: few spectral lines")
    html = _methods_table(short.methods)
    assert "method&#x27;s own warnings" in html or "method's own warnings" in html
    assert "few spectral lines" in html
    # a record far shorter than the decay: half-power is not used, and says why
    shorter = analyse_decay(make_record([(10.0, 0.0005, 1.0, 0.3)], fs=500.0, n=500, snr_db=50, seed=6)[0])
    assert not [line for line in shorter.summary().splitlines() if "halfpower" in line]
    assert shorter.methods["halfpower"].poles == ()
    assert shorter.methods["halfpower"].warnings[0].startswith(
        "not used: record too short for the half-power bandwidth: near 10")
    assert "record too short" not in {w.split(":", 1)[0] for w in shorter.warnings}
    assert "not used" in _methods_table(shorter.methods)
    clean = analyse_decay(make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, seed=1)[0])
    checks = [line for line in clean.summary().splitlines() if line.startswith("1 ")][1:]
    assert checks and all(line.endswith("intervals overlap") for line in checks)
    # the pencil seeds the fit on the same samples: where its interval misses the answer's,
    # the table says so and says why that raises no warning
    import copy
    import dataclasses

    consensus = copy.deepcopy(clean.consensus)
    consensus[0]["estimates"]["pencil"]["agree"] = False
    apart = dataclasses.replace(clean, consensus=consensus)
    pencil_rows = [line for line in apart.summary().splitlines() if line.startswith("1 ") and "pencil" in line]
    assert len(pencil_rows) == 1
    assert pencil_rows[0].endswith("intervals do not overlap (it seeds the fit: not an independent check)")


def test_damping_interval_includes_zero():
    # an (almost) undamped oscillation over few cycles at modest SNR
    rec, _, _ = make_record([(5.0, 0.0, 1.0, 0.3)], fs=100.0, n=300, snr_db=20, seed=8)
    result = analyse_decay(rec)
    assert "damping interval includes zero" in _keys(result)
    assert result.poles[0].ci.damping_ratio[0] <= 0.0
    assert result.poles[0].verdict != "decaying"


def test_short_record_for_a_useful_interval():
    # 4 cycles of a lightly damped mode at 20 dB: ζ is known to only about ±60 %
    rec, _, _ = make_record([(5.0, 0.005, 1.0, 0.3)], fs=100.0, n=80, snr_db=20, seed=9)
    result = analyse_decay(rec)
    assert "short record" in _keys(result)
    lo, hi = result.poles[0].ci.damping_ratio
    assert (hi - lo) / 2 > 0.5 * result.poles[0].damping_ratio


def test_fewer_modes_than_asked_is_said_and_none_made_up():
    rec, _, _ = make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, seed=10)
    result = analyse_decay(rec, modes=3)
    assert "fewer modes" in _keys(result)
    assert len(result.poles) == 1


def test_missing_values_omitted_on_request():
    rec, _, _ = make_record([(10.0, 0.02, 1.0, 0.3)], fs=200.0, n=2000, snr_db=40, seed=11)
    y = rec.channel().values.copy()
    y[1500] = np.nan
    gappy = Record.from_arrays(rec.time_s, accel=y)
    from identify import RecordError

    with pytest.raises(RecordError, match="missing value"):
        analyse_decay(gappy)
    result = analyse_decay(gappy, nan="omit")
    assert "missing values" in _keys(result)
    assert result.segment["end_s"] < 1500 / 200.0
