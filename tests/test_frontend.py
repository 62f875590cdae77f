"""Tests for ookframe.frontend: trackers, comparator, streaming, slicing and decoding of
synthetic sampled captures made from ookframe-encoded trains (tests/sampled_signals.py).

The trackers are checked against a plain per-sample loop of the recursions written in
``ookframe/frontend/tracker.py``'s docstring (the textbook one-pole average
``m[n] = d m[n-1] + (1 - d) e[n]`` and a peak hold with exponential decay); the
hysteresis comparator against a per-sample loop of its definition. SNR figures are
carrier power over noise power in the sampled bandwidth (sampled_signals.py).
"""

from __future__ import annotations

from unittest import mock

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import ookframe
from ookframe.captures.sampled import sampled_info, write_samples
from ookframe.decode import decode_stream
from ookframe.frontend import (
    FrontEndConfig,
    SampleSlicer,
    config_for_unit,
    iter_sliced,
    open_slicer,
    slice_samples,
)
from ookframe.frontend import slicer as slicer_module
from ookframe.frontend.envelope import EnvelopeStage
from ookframe.frontend.tracker import (
    _running_max,
    changes,
    compare,
    decay_factor,
    start_state,
    track,
)
from ookframe.pulses import PulseTrain, merge_runs
from tests.conftest import example_spec
from tests.sampled_signals import baseband_capture, iq_capture, keying, tone_capture

GATE = example_spec("gate_sensor.toml")


# ---------------------------------------------------------------------------- trackers
def _tracker_loop(e: np.ndarray, cfg: FrontEndConfig, rate_hz: float):
    """Per-sample reference: mean, peak and valley with exponential decay, thresholds,
    optional attack low-pass and the hysteresis comparator."""
    d = decay_factor(cfg.decay_us, rate_hz)
    a = decay_factor(cfg.attack_us, rate_hz) if cfg.attack_us > 0 else None
    m, y, z, mark = e[0], 0.0, 0.0, False
    pa = va = e[0]
    out = {k: np.zeros(e.size) for k in ("high", "low", "carrier", "floor")}
    out["marks"] = np.zeros(e.size, bool)
    for n, x in enumerate(e):
        m = d * m + (1 - d) * x
        y = max(x - m, d * y, 0.0)
        z = max(m - x, d * z, 0.0)
        p, v = m + y, m - z
        if a is not None:
            pa = a * pa + (1 - a) * p
            va = a * va + (1 - a) * v
            p, v = pa, va
        c = p - v
        low = v + (cfg.threshold_fraction - cfg.hysteresis / 2) * c
        high = low + cfg.hysteresis * c
        if c < cfg.min_contrast:
            high = low = np.inf
        if x > high:
            mark = True
        elif x < low:
            mark = False
        for k, val in (("high", high), ("low", low), ("carrier", p), ("floor", v),
                       ("marks", mark)):
            out[k][n] = val
    return out


@pytest.mark.parametrize("cfg", [
    FrontEndConfig(decay_us=300.0),
    FrontEndConfig(decay_us=2000.0, attack_us=40.0, hysteresis=0.4, threshold_fraction=0.4),
    FrontEndConfig(decay_us=100.0, min_contrast=0.3),
])
def test_trackers_match_per_sample_loop(cfg):
    """track() over three blocks with its state carried equals the per-sample loop."""
    rng = np.random.default_rng(1)
    rate = 100_000.0
    e = np.repeat(rng.choice([0.1, 0.9], 60), rng.integers(5, 80, 60))
    e = e + 0.05 * rng.standard_normal(e.size)
    ref = _tracker_loop(e, cfg, rate)
    state = start_state(float(e[0]), cfg, rate)
    parts = []
    for piece in np.array_split(e, [e.size // 3, e.size // 2]):
        t, state = track(piece, state, cfg, rate)
        parts.append(t)
    for k in ("high", "low", "carrier", "floor"):
        got = np.concatenate([getattr(p, k) for p in parts])
        np.testing.assert_allclose(got, ref[k], rtol=1e-9, atol=1e-12)
    assert np.array_equal(np.concatenate([p.marks for p in parts]), ref["marks"])


def test_comparator_hysteresis():
    """Mark from a sample above high until one below low; between them the state holds."""
    e = np.array([0.0, 0.6, 0.8, 0.5, 0.3, 0.1, 0.5, 0.9, 0.45])
    got = compare(e, np.full(e.size, 0.7), np.full(e.size, 0.2), False)
    assert got.tolist() == [False, False, True, True, True, False, False, True, True]
    assert compare(e[1:], np.full(8, 0.7), np.full(8, 0.2), True).tolist()[:4] == [True] * 4


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 3000), ramp=st.floats(0.0, 0.01))
def test_running_max_equals_accumulate(seed, n, ramp):
    """The chunked running maximum is np.maximum.accumulate exactly (numpy 2.x), on noise
    with a rising trend (many chunks with a new maximum) or none (few); with a scale row
    it is that times the scale, also exactly."""
    rng = np.random.default_rng(seed)
    v = rng.standard_normal(n) + ramp * np.arange(n)
    got = v.copy()
    _running_max(got)
    assert np.array_equal(got, np.maximum.accumulate(v))
    scale = rng.uniform(0.5, 1.0, n)
    got = v.copy()
    _running_max(got, scale)
    assert np.array_equal(got, np.maximum.accumulate(v) * scale)


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(1, 600), mark=st.booleans(),
       squelch=st.booleans())
def test_changes_are_where_the_comparator_changes(seed, n, mark, squelch):
    """changes() lists exactly the samples where compare()'s output differs from the sample
    before (``mark`` before the first), also where squelched samples hold both thresholds
    at +inf (every sample below: space)."""
    rng = np.random.default_rng(seed)
    e = np.cumsum(rng.normal(0, 0.2, n))
    low = rng.normal(0, 0.5, n)
    high = low + rng.uniform(0, 0.5, n)
    if squelch:
        off = rng.random(n) < 0.3
        high[off] = low[off] = np.inf
    marks = compare(e, high, low, mark)
    want = np.flatnonzero(marks != np.concatenate(([mark], marks[:-1])))
    assert np.array_equal(changes(e, high, low, mark), want)


@pytest.mark.parametrize("cfg", [
    FrontEndConfig(decay_us=2000.0),
    FrontEndConfig(decay_us=400.0, attack_us=30.0, min_contrast=0.05),
    FrontEndConfig(decay_us=2000.0, decimate=3),
])
def test_fast_path_equals_per_sample_view(cfg):
    """The slicer's fast path (changes only, level sums over runs) gives the train and the
    report that the per-sample view gives: track()'s comparator output (held to the
    per-sample loop above), its changes with the crossing interpolated linearly between
    the samples around them, and the level figures over per-sample masks leaving out every
    sample within the guard of a change."""
    rng = np.random.default_rng(7)
    spec, values = GATE
    rate = 250_000.0
    x = iq_capture(ookframe.encode(spec, values), rate, 9.0, rng).astype(np.complex64)
    with mock.patch.object(slicer_module, "BLOCK_SAMPLES", 1 << 30):  # one block
        got, rep = slice_samples(x, rate, cfg)
    env = EnvelopeStage(cfg, rate, True)
    e, _ = env.process(x)
    out_rate = rate / cfg.decimate
    t, _ = track(e, start_state(float(e[0]), cfg, out_rate), cfg, out_rate)
    prev = np.concatenate(([False], t.marks[:-1]))
    idx = np.flatnonzero(t.marks != prev)
    thr = np.where(t.marks[idx], t.high[idx], t.low[idx])
    e_prev = np.where(idx > 0, e[np.maximum(idx - 1, 0)], e[0])
    frac = np.clip((thr - e_prev) / (e[idx] - e_prev), 1e-6, 1.0)
    bounds = np.concatenate(([0.0], idx - 1 + frac, [e.size]))
    if idx.size and idx[0] == 0:  # the capture starts in a mark
        bounds = np.delete(bounds, 1)
    us = 1e6 / out_rate
    assert np.array_equal(got.levels[1:], t.marks[idx].astype(np.uint8))
    np.testing.assert_allclose(got.durations_us, np.diff(bounds) * us, rtol=0, atol=1e-9)
    guard = max(1, int(np.ceil(1.5 * env.smoothing.rise_us / us)))
    near = np.zeros(e.size, bool)
    for i in idx:
        near[max(i - guard, 0):i + guard + 1] = True
    for level, name in ((0, "floor"), (1, "carrier")):
        v = e[(t.marks == bool(level)) & ~near]
        np.testing.assert_allclose(getattr(rep, f"{name}_level"), v.mean(), rtol=1e-12)
        np.testing.assert_allclose(getattr(rep, f"{name}_rms"), v.std(), rtol=1e-9)
    ok = ~t.squelched
    assert rep.squelched_fraction == t.squelched.mean()
    np.testing.assert_allclose(rep.threshold_high_mean, t.high[ok].mean(), rtol=1e-12)
    assert rep.threshold_low_min == t.low[ok].min() and rep.threshold_high_max == t.high[ok].max()


# --------------------------------------------------------------------------- streaming
@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), cuts=st.lists(st.integers(0, 30_000), max_size=8),
       decimate=st.sampled_from([1, 3]), attack_us=st.sampled_from([0.0, 30.0]),
       complex_=st.booleans())
def test_chunked_equals_one_shot(seed, cuts, decimate, attack_us, complex_):
    """Feeding a capture in any pieces gives exactly the train of feeding it whole (the
    internal blocks, here 4096 samples, are counted from the first sample)."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 40))
    train = PulseTrain(np.arange(n) % 2, rng.uniform(50, 3000, n))
    x = (iq_capture if complex_ else baseband_capture)(train, 200_000.0, 10.0, rng)
    x = x.astype(np.complex64 if complex_ else np.float32)
    cfg = FrontEndConfig(smooth_us=20.0, decimate=decimate, attack_us=attack_us,
                         decay_us=5000.0)
    with mock.patch.object(slicer_module, "BLOCK_SAMPLES", 4096):
        whole, rep1 = slice_samples(x, 200_000.0, cfg)
        pieces, rep2 = slice_samples(np.split(x, sorted(c % x.size for c in cuts)),
                                     200_000.0, cfg)
    assert pieces == whole
    assert rep1 == rep2
    assert abs(whole.total_us - x.size / 0.2) < 1e-6 * whole.total_us + 1e-6


def test_internal_block_size_only_changes_rounding():
    """Other internal block sizes give the same pulses to float rounding."""
    rng = np.random.default_rng(4)
    spec, values = GATE
    x = iq_capture(ookframe.encode(spec, values), 500_000.0, 8.0, rng).astype(np.complex64)
    cfg = config_for_unit(spec.unit_us)
    trains = []
    for block in (5000, 1 << 17):
        with mock.patch.object(slicer_module, "BLOCK_SAMPLES", block):
            trains.append(slice_samples(x, 500_000.0, cfg)[0])
    assert np.array_equal(trains[0].levels, trains[1].levels)
    np.testing.assert_allclose(trains[0].durations_us, trains[1].durations_us, atol=1e-6)


# ----------------------------------------------------------------------- clean captures
def _as_captured(train: PulseTrain) -> PulseTrain:
    """The train between the captures' lead-in and tail-off spaces (keying(): 5 ms each)."""
    return merge_runs(np.concatenate(([0], train.levels, [0])),
                      np.concatenate(([5000.0], train.durations_us, [5000.0])))


@pytest.mark.parametrize("name", ["gate_sensor", "hive_scale", "greenhouse_probe",
                                  "tank_level", "coldframe_vent"])
@pytest.mark.parametrize("kind", ["iq", "baseband"])
def test_clean_capture_gives_the_encoded_train(name, kind):
    """A noiseless capture at 1 MS/s slices into the encoded train: the same levels, and
    every duration after the first two (the slicer settles on the first mark: its peak
    tracker starts at the floor) within 3 samples (3 µs) + 1 % of a unit, except next to a gap between
    repeats (the trackers decay in the gap; within 15 % of a unit there); it decodes into every frame sent
    with the values sent. A squelch keeps the idle lead-in quiet: without one the slicer
    chatters on any noise floor, as a receiver's slicer does."""
    spec, values = example_spec(f"{name}.toml")
    train = ookframe.encode(spec, values)
    rng = np.random.default_rng(0)
    make = iq_capture if kind == "iq" else baseband_capture
    x = make(train, 1e6, 200.0, rng)
    got, report = slice_samples(x, 1e6, config_for_unit(spec.unit_us, min_contrast=0.01))
    want = _as_captured(train)
    assert np.array_equal(got.levels, want.levels)
    error_us = np.abs(got.durations_us - want.durations_us)[2:-1]
    after_gap = (want.durations_us[1:-2] > 8 * spec.unit_us) | \
        (want.durations_us[2:-1] > 8 * spec.unit_us)
    assert np.max(error_us[~after_gap]) <= 3.0 + 0.01 * spec.unit_us
    assert np.max(error_us[after_gap], initial=0.0) <= 0.15 * spec.unit_us
    assert abs(got.total_us - x.size) < 1e-6 * x.size  # 1 µs per sample
    frames = ookframe.decode_frames(spec, got)
    assert len(frames) == spec.repeats and all(f.crc_ok for f in frames)
    assert all(ookframe.values_equal(spec, f.fields, values) for f in frames)
    assert report.floor_level < report.threshold_low_mean < report.threshold_high_mean \
        < report.carrier_level


def test_report_levels_of_a_data_pin():
    """On a data pin at -0.2 / +0.3 with 26 dB SNR (squelch above the idle noise) the
    report finds floor and carrier to within 0.01, thresholds at 0.5 -+ 0.1 of the way
    between, and the SNR of the smoothed envelope to within 2 dB: the input's 26 dB plus
    the low-pass's noise reduction, 1 / sum(h^2) for its impulse response h (white noise
    through a linear filter, textbook)."""
    from scipy import signal

    spec, values = GATE
    rng = np.random.default_rng(9)
    x = baseband_capture(ookframe.encode(spec, values), 250_000.0, 26.0, rng, 0.5, -0.2)
    cfg = config_for_unit(spec.unit_us, min_contrast=0.1)
    slicer = SampleSlicer(cfg, 250_000.0, False)
    list(slicer.slice([x.astype(np.float32)]))
    r = slicer.report()
    assert abs(r.floor_level + 0.2) < 0.01 and abs(r.carrier_level - 0.3) < 0.01
    impulse = np.zeros(20_000)
    impulse[0] = 1.0
    h = signal.sosfilt(slicer.smoothing.sos, impulse)
    assert abs(r.snr_db - (26.0 - 10 * np.log10(np.sum(h * h)))) < 2.0
    span = r.carrier_level - r.floor_level
    assert abs((r.threshold_low_mean - r.floor_level) / span - 0.4) < 0.05
    assert abs((r.threshold_high_mean - r.floor_level) / span - 0.6) < 0.05
    assert r.thresholds == "adaptive" and r.envelope == "baseband" and r.clipped_fraction == 0


def test_fixed_thresholds_and_invert():
    """Fixed thresholds are used and reported as given; --invert reads an active-low pin."""
    spec, values = GATE
    train = ookframe.encode(spec, values)
    x = 1.0 - keying(train, 200_000.0)  # active low, no noise
    cfg = config_for_unit(spec.unit_us, invert=True, threshold_high=-0.4, threshold_low=-0.6)
    got, r = slice_samples(x, 200_000.0, cfg)
    assert r.thresholds == "fixed" and r.threshold_high_mean == -0.4 \
        and r.threshold_low_min == -0.6
    assert np.array_equal(got.levels, _as_captured(train).levels)


def test_tone_audio_rectified():
    """A keyed 8 kHz tone in 48 kHz audio (a receiver's audio output) decodes with the
    rectify envelope, whose low-pass removes the 16 kHz ripple."""
    spec, values = GATE
    x = tone_capture(ookframe.encode(spec, values), 48_000.0, 8000.0, 20.0,
                     np.random.default_rng(2))
    got, r = slice_samples(x, 48_000.0, config_for_unit(spec.unit_us, envelope="rectify"))
    assert r.envelope == "rectify"
    frames = [f for f in ookframe.decode_frames(spec, got) if f.crc_ok]
    assert len(frames) == spec.repeats


def test_squelch_silences_noise_only():
    """Noise alone chatters through the slicer; a squelch above its contrast keeps it quiet."""
    rng = np.random.default_rng(3)
    noise = (0.02 * (rng.standard_normal(200_000) + 1j * rng.standard_normal(200_000)))
    loud, _ = slice_samples(noise, 1e6, FrontEndConfig())
    quiet, r = slice_samples(noise, 1e6, FrontEndConfig(min_contrast=0.2))
    assert len(loud) > 100 and len(quiet) == 1 and quiet.levels[0] == 0
    assert r.squelched_fraction > 0.99


def test_decimation_keeps_frames():
    """Decimating 2.4 MS/s I/Q by 8 still decodes every frame; the report says so."""
    spec, values = GATE
    x = iq_capture(ookframe.encode(spec, values), 2.4e6, 15.0, np.random.default_rng(5))
    got, r = slice_samples(x.astype(np.complex64), 2.4e6, config_for_unit(spec.unit_us,
                                                                           decimate=8))
    assert r.decimate == 8 and r.output_rate_hz == 300_000.0
    assert sum(f.crc_ok for f in ookframe.decode_frames(spec, got)) == spec.repeats


def test_bad_config_and_input():
    """Settings out of range and samples of the wrong kind are refused with their name."""
    for kwargs, text in [({"envelope": "hilbert"}, "envelope"), ({"decimate": 0}, "decimate"),
                         ({"hysteresis": 1.5}, "hysteresis"), ({"threshold_high": 1.0},
                                                              "both"),
                         ({"threshold_fraction": 0.05, "hysteresis": 0.2}, "inside")]:
        with pytest.raises(ValueError, match=text):
            FrontEndConfig(**kwargs)
    s = SampleSlicer(FrontEndConfig(), 1e6, is_complex=False)
    with pytest.raises(ValueError, match="complex"):
        s.feed(np.ones(3, np.complex64))
    with pytest.raises(ValueError, match="sample_rate_hz"):
        SampleSlicer(FrontEndConfig(), 0.0, False)


# --------------------------------------------------------------- files and SNR sweeps
def _decoded_good(spec, path, **options) -> int:
    info = sampled_info(path, **options)
    slicer = open_slicer(info, config_for_unit(spec.unit_us))
    return sum(f.crc_ok for f in decode_stream(spec, iter_sliced(info, slicer, 50_000)))


@pytest.mark.parametrize("sample_type", ["u8", "s16", "f32"])
def test_iq_decode_success_rises_with_snr(tmp_path, sample_type):
    """I/Q files (u8, s16, f32 at 250 kS/s) of the gate sensor's five repeats with complex
    Gaussian noise: the share of frames decoded with a passing check rises with SNR, from
    at most 20 % at -6 dB to every frame at 12 dB."""
    spec, values = GATE
    train = ookframe.encode(spec, values)
    rng = np.random.default_rng(21)
    snrs, trials, rates = (-6.0, 0.0, 3.0, 12.0), 6, []
    for snr in snrs:
        good = 0
        for k in range(trials):
            path = tmp_path / f"c{snr}_{k}.{sample_type}.iq"
            write_samples(path, iq_capture(train, 250_000.0, snr, rng), 250_000.0)
            good += _decoded_good(spec, path, sample_rate_hz=250_000.0)
        rates.append(good / (trials * spec.repeats))
    assert rates[0] <= 0.2 and rates[-1] == 1.0, rates
    assert all(b >= a - 0.1 for a, b in zip(rates, rates[1:], strict=False)), rates


def test_wav_decode_success_rises_with_snr(tmp_path):
    """16-bit WAV of a data pin with Gaussian noise: the share of good frames rises with
    SNR, from at most 20 % at -3 dB to every frame at 15 dB."""
    spec, values = GATE
    train = ookframe.encode(spec, values)
    rng = np.random.default_rng(22)
    rates = []
    for snr in (-3.0, 3.0, 8.0, 15.0):
        good = 0
        for k in range(5):
            path = tmp_path / f"c{snr}_{k}.wav"
            write_samples(path, 0.8 * baseband_capture(train, 48_000.0, snr, rng), 48_000)
            good += _decoded_good(spec, path)
        rates.append(good / (5 * spec.repeats))
    assert rates[0] <= 0.2 and rates[-1] == 1.0, rates
    assert all(b >= a - 0.1 for a, b in zip(rates, rates[1:], strict=False)), rates


@pytest.mark.parametrize("rate_hz", [22_050, 48_000, 96_000])
@pytest.mark.parametrize("sample_type", ["u8", "s16", "s24", "s32", "f32", "f64"])
@pytest.mark.parametrize("channels", [1, 2])
def test_wav_every_depth_decodes(tmp_path, rate_hz, sample_type, channels):
    """Every WAV bit depth, mono and stereo (the pin on the right channel), at several rates
    decodes every frame at 20 dB."""
    spec, values = GATE
    x = 0.8 * baseband_capture(ookframe.encode(spec, values), rate_hz, 20.0,
                               np.random.default_rng(rate_hz))
    path = tmp_path / "c.wav"
    data = x if channels == 1 else np.stack((np.zeros_like(x), x), axis=1)
    write_samples(path, data, rate_hz, sample_type=sample_type)
    assert _decoded_good(spec, path, channel=1 if channels == 2 else None) == spec.repeats


@pytest.mark.parametrize("rate_hz", [250_000.0, 1e6, 2.4e6])
def test_iq_rates_decode(tmp_path, rate_hz):
    """u8 I/Q at several rates, carrier 30 kHz off tune, decodes every frame at 15 dB."""
    spec, values = GATE
    x = iq_capture(ookframe.encode(spec, values), rate_hz, 15.0, np.random.default_rng(1),
                   offset_hz=30e3)
    path = tmp_path / "c.u8.iq"
    write_samples(path, x, rate_hz)
    assert _decoded_good(spec, path, sample_rate_hz=rate_hz) == spec.repeats
