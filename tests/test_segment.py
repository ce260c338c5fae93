"""Free-decay segment detection (identify.conditioning._segment)."""
import math

import numpy as np
import pytest

from identify import IdentificationError, ParameterValueError
from identify.conditioning import DecaySegment, detect_decay_segment

FS = 200.0
FN = 10.0
ZETA = 0.02
WN = 2 * math.pi * FN
SIGMA = ZETA * WN
WD = WN * math.sqrt(1 - ZETA ** 2)


def _noise_std(amplitude, snr_db):
    # SNR as signal power of the initial oscillation (A²/2) over noise power
    return amplitude / math.sqrt(2.0) / 10 ** (snr_db / 20.0)


def _record(kind, seed, snr_db=30.0, baseline=0.4, amplitude=1.0):
    rng = np.random.default_rng(seed)
    t = np.arange(-1.0, 5.0, 1.0 / FS)
    t0 = rng.uniform(0.0, 1.0 / FS)  # onset between samples
    tau = t - t0
    if kind == "hammer":  # impulse response of displacement: starts at zero, linearly
        clean = np.where(tau >= 0, amplitude * np.exp(-SIGMA * tau) * np.sin(WD * np.maximum(tau, 0)), 0.0)
    else:  # released from a held displacement with zero velocity: starts quadratically
        tp = np.maximum(tau, 0.0)
        clean = np.where(tau >= 0, amplitude * np.exp(-SIGMA * tp)
                         * (np.cos(WD * tp) + SIGMA / WD * np.sin(WD * tp)), amplitude)
    s = _noise_std(amplitude, snr_db)
    return t, baseline + clean + s * rng.standard_normal(t.size), t0, s


@pytest.mark.parametrize("kind", ["hammer", "release"])
@pytest.mark.parametrize("seed", [0, 1, 2, 3, 4, 5])
def test_trigger_within_two_samples_at_30_db(kind, seed):
    t, x, t0, s = _record(kind, seed)
    seg = detect_decay_segment(t, x)
    assert isinstance(seg, DecaySegment)
    assert seg.trigger_s is not None
    assert abs(seg.trigger_s - t0) <= 2.0 / FS  # issue 2 acceptance: within 2 samples at 30 dB
    assert seg.quiet_end_s == seg.trigger_s
    assert seg.noise_std == pytest.approx(s, rel=0.25)
    expected_base = 0.4 if kind == "hammer" else 1.4
    assert seg.baseline == pytest.approx(expected_base, abs=5 * s / math.sqrt(150))
    assert seg.start_s > seg.trigger_s
    assert seg.excitation_end_s == seg.start_s
    assert seg.peak_s is not None and seg.trigger_s <= seg.peak_s <= seg.start_s


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_end_near_the_noise_floor(seed):
    t, x, t0, s = _record("hammer", seed)
    seg = detect_decay_segment(t, x)
    # derived: the envelope A·e^(−σt) reaches the chosen ~2.7 noise std at ln(A/2.7s)/σ
    expected = t0 + math.log(1.0 / (2.7 * s)) / SIGMA
    assert abs(seg.end_s - expected) < 0.1 * (expected - t0)
    assert not seg.start_overridden and not seg.end_overridden
    assert "end" in seg.chosen and "noise std" in seg.chosen["end"]


def test_shaker_stop_starts_where_the_envelope_decays():
    rng = np.random.default_rng(7)
    t = np.arange(0.0, 6.0, 1.0 / FS)
    t_stop = 2.0
    s = _noise_std(1.0, 35.0)
    tp = np.maximum(t - t_stop, 0.0)
    # steady forced response, then free decay with matching amplitude and phase at the stop
    x = np.where(t < t_stop, np.cos(WD * t), np.exp(-SIGMA * tp) * np.cos(WD * t)) + s * rng.standard_normal(t.size)
    seg = detect_decay_segment(t, x)
    assert seg.trigger_s is None  # the record starts in motion
    # derived: the envelope falls below 95 % at t_stop + ln(1/0.95)/σ; allow a period of smoothing
    expected = t_stop + math.log(1 / 0.95) / SIGMA
    assert abs(seg.start_s - expected) < 1.5 / FN
    assert seg.end_s > seg.start_s + 2.0


def test_given_noise_is_used():
    t, x, t0, s = _record("hammer", 4)
    seg = detect_decay_segment(t, x, noise_std=2 * s)
    assert seg.noise_std == 2 * s and seg.chosen["noise"] == "given"
    assert abs(seg.trigger_s - t0) <= 2.0 / FS
    # a doubled noise floor ends the segment earlier: derived, ln(2)/σ earlier
    plain = detect_decay_segment(t, x)
    assert plain.end_s - seg.end_s == pytest.approx(math.log(2.0) / SIGMA, abs=0.15)


def test_record_that_starts_decaying_has_no_trigger():
    rng = np.random.default_rng(8)
    t = np.arange(0.0, 4.0, 1.0 / FS)
    s = _noise_std(1.0, 40.0)
    x = np.exp(-SIGMA * t) * np.cos(WD * t + 0.3) + 0.1 + s * rng.standard_normal(t.size)
    seg = detect_decay_segment(t, x)
    assert seg.trigger_s is None and seg.quiet_end_s is None
    # derived: one smoothing period (0.1 s) skipped at the edge, then the 95 % drop
    # ln(1/0.95)/σ = 0.041 s later
    assert 0.1 <= seg.start_s <= 0.1 + math.log(1 / 0.95) / SIGMA + 2.0 / FS
    assert seg.chosen["trigger"].startswith("none")


def test_overrides_are_honoured():
    t, x, t0, s = _record("hammer", 3)
    seg = detect_decay_segment(t, x, start_s=0.5, end_s=1.5)
    assert (seg.start_s, seg.end_s) == (0.5, 1.5)
    assert seg.start_overridden and seg.end_overridden
    assert seg.chosen["start"] == "given: 0.5 s"
    assert abs(seg.trigger_s - t0) <= 2.0 / FS  # detection still reported for plots
    only_end = detect_decay_segment(t, x, end_s=1.0)
    assert only_end.end_s == 1.0 and only_end.end_overridden and not only_end.start_overridden
    mask = seg.mask(t)
    assert t[mask].min() >= 0.5 and t[mask].max() <= 1.5
    d = seg.to_dict()
    assert d["start_s"] == 0.5 and d["start_overridden"] is True


def test_overrides_are_used_even_without_a_response():
    rng = np.random.default_rng(9)
    t = np.arange(0.0, 2.0, 1.0 / FS)
    x = 0.01 * rng.standard_normal(t.size)
    with pytest.raises(IdentificationError, match="no response above the noise"):
        detect_decay_segment(t, x)
    seg = detect_decay_segment(t, x, start_s=0.2, end_s=1.2)
    assert (seg.start_s, seg.end_s) == (0.2, 1.2) and seg.trigger_s is None


def test_errors():
    t = np.arange(0.0, 1.0, 1.0 / FS)
    with pytest.raises(IdentificationError, match="constant"):
        detect_decay_segment(t, np.full(t.size, 2.0))
    x = np.sin(2 * np.pi * 5 * t) * np.exp(-t)
    with pytest.raises(ParameterValueError, match="start_s must lie inside the record"):
        detect_decay_segment(t, x, start_s=-3.0)
    with pytest.raises(ParameterValueError, match="before end_s"):
        detect_decay_segment(t, x, start_s=0.6, end_s=0.4)
    with pytest.raises(ParameterValueError, match="same length"):
        detect_decay_segment(t, x[:-1])
    with pytest.raises(ParameterValueError, match="noise_std"):
        detect_decay_segment(t, x, noise_std=-1.0)


def test_hilbert_envelope_matches_scipy():
    # reference library: |scipy.signal.hilbert(y, N)[:n]| is the magnitude of the analytic
    # signal of y zero-padded to N samples; ours pads to the next 5-smooth length
    from scipy.signal import hilbert

    from identify._fftlen import fast_length
    from identify.conditioning._segment import _hilbert_envelope

    rng = np.random.default_rng(11)
    # odd and even lengths (Nyquist bin handled): 1000 needs no padding; 997 (prime) is
    # padded to 1000, 1001 and 1019 (prime) to 1024
    for n in (997, 1000, 1001, 1019):
        y = rng.normal(size=n) + np.sin(np.arange(n) * 0.3)
        env, mag = _hilbert_envelope(y)
        nfft = fast_length(n)
        assert nfft >= n
        np.testing.assert_allclose(env, np.abs(hilbert(y, nfft)[:n]), rtol=1e-10, atol=1e-12)
        np.testing.assert_allclose(mag, np.abs(np.fft.rfft(y, nfft)), rtol=1e-12)
    assert fast_length(1000) == 1000 and fast_length(999) == 1000


def test_fast_length_matches_scipy_on_5_smooth_lengths():
    # reference library: scipy.fft.next_fast_len(n, real=True) returns the smallest
    # 2^a 3^b 5^c >= n for real transforms (scipy's real FFT uses only these factors)
    from scipy.fft import next_fast_len

    from identify._fftlen import fast_length

    for n in list(range(1, 2000)) + [1_995_001, 10_000_019, 2 ** 21 + 1]:
        assert fast_length(n) == next_fast_len(n, real=True), n


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_short_pretrigger_is_found(seed):
    # a quiet stretch of only 1.5 % of the record (shorter than the first 5 % window):
    # the trigger is still found within 2 samples at 30 dB (issue 2 acceptance)
    rng = np.random.default_rng(20 + seed)
    t = np.arange(-0.09, 6.0, 1.0 / FS)
    t0 = rng.uniform(0.0, 1.0 / FS)
    tau = np.maximum(t - t0, 0.0)
    clean = np.where(t >= t0, np.exp(-SIGMA * tau) * np.sin(WD * tau), 0.0)
    s = _noise_std(1.0, 30.0)
    seg = detect_decay_segment(t, 0.2 + clean + s * rng.standard_normal(t.size))
    assert seg.trigger_s is not None
    assert abs(seg.trigger_s - t0) <= 2.0 / FS


def test_slow_oscillation_already_under_way_is_not_a_trigger():
    # a record starting in motion on a slow mode: the first few samples look quiet, but so
    # does the next window, so no short pre-trigger is accepted (common practice, no source)
    rng = np.random.default_rng(31)
    t = np.arange(0.0, 40.0, 1.0 / FS)
    x = np.exp(-0.05 * t) * np.cos(2 * math.pi * 0.25 * t) + 1e-3 * rng.standard_normal(t.size)
    seg = detect_decay_segment(t, x)
    assert seg.trigger_s is None


@pytest.mark.parametrize("where", [None, 0, 5, 4095, 4096, 4097, 12_287, 12_288, 99_999])
def test_first_beyond_is_the_first_index_of_the_whole_comparison(where):
    # derived: the chunked scan must give np.flatnonzero(|x - c| > limit)[0] exactly,
    # including at the chunk edges (4,096, then 8,192, ...) and when nothing crosses
    from identify.conditioning._segment import _first_beyond

    rng = np.random.default_rng(3)
    x = 0.5 + 0.1 * rng.uniform(-1, 1, 100_000)
    if where is not None:
        x[where] = 2.0
        x[-1] = -3.0  # a later crossing must not be the answer
    whole = np.flatnonzero(np.abs(x - 0.5) > 1.0)
    got = _first_beyond(x, 0.5, 1.0)
    assert got == (int(whole[0]) if whole.size else None)
    assert (got is None) == (where is None)


@pytest.mark.parametrize("n, step", [(1000, 2), (1000, 8), (4097, 3), (4097, 16), (200_001, 5)])
def test_envelope_at_every_step_th_sample_is_the_full_envelope_there(n, step):
    # derived (the DFT's decimation-in-time identity): folding the analytic signal's
    # spectrum to N/step bins gives exactly every step-th sample of the full envelope
    from identify._fftlen import fast_length
    from identify.conditioning._segment import _hilbert_envelope

    assert fast_length(n) % step == 0
    y = np.random.default_rng(n + step).standard_normal(n) + np.sin(np.arange(n) * 0.05)
    full, mag = _hilbert_envelope(y)
    every, mag_step = _hilbert_envelope(y, step=step)
    assert every.size == full[::step].size
    np.testing.assert_allclose(every, full[::step], rtol=1e-12, atol=1e-12 * full.max())
    np.testing.assert_array_equal(mag, mag_step)


def test_long_record_envelope_on_every_step_th_sample_finds_the_same_decay(monkeypatch):
    # a 300,000-sample hammer record: the envelope at every q-th sample (q up to 1/64 of
    # the period) gives the trigger exactly, the ring-down start within a tenth of a period
    # and the end within 5 %: both are where a slowly falling smoothed envelope crosses a
    # level (95 % of its peak, 3 noise std), which the average over 64 samples of a
    # period instead of all of them moves a little (common practice, no source)
    from _decay_synth import make_decay

    import identify.conditioning._segment as seg

    fs, n, pre = 10_000.0, 300_000, 4000
    t, y, _, s = make_decay([(12.0, 0.002, 1.0, 0.0)], fs=fs, n=n, snr_db=40, pretrigger=pre, seed=7)
    stepped = detect_decay_segment(t, y)
    monkeypatch.setattr(seg, "DECIMATED_ENVELOPE_SAMPLES", 10 ** 9)
    full = detect_decay_segment(t, y)
    step = seg._envelope_step(seg.fast_length(n - pre), round(fs / 12.0))
    assert step > 1
    assert stepped.trigger_s == full.trigger_s
    assert abs(stepped.start_s - full.start_s) <= 0.1 / 12.0
    assert stepped.end_s == pytest.approx(full.end_s, rel=0.05)
    assert stepped.noise_std == full.noise_std
