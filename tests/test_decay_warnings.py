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
    # least the answer's width, docs/decay.md).  Tested on constructed estimates: on the
    # synthetic records of this suite the calibrated cross-checks agree with the fit.
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
