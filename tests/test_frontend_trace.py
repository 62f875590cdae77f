"""Tests for ookframe.frontend.trace: the front end's per-sample view over a time window,
on WAV files the physical model writes (ookframe.channel.physical.write_wav).

References: the trace is held to the front end's own per-sample view of the whole capture
(EnvelopeStage + track(), held to a per-sample loop in tests/test_frontend.py), to the
samples as read_samples gives them (soundfile / libsndfile), and to slice_capture's train.
"""

from __future__ import annotations

from unittest import mock

import numpy as np
import pytest

import ookframe
from ookframe.captures.sampled import read_samples, sampled_info
from ookframe.channel.physical import PhysicalChannel, render_baseband, write_wav
from ookframe.frontend import config_for_unit, slice_capture, trace_capture
from ookframe.frontend import slicer as slicer_module
from ookframe.frontend import trace as trace_module
from ookframe.frontend.envelope import EnvelopeStage
from ookframe.frontend.tracker import start_state, track
from ookframe.pulses import PulseTrain
from tests.conftest import example_spec

RATE_HZ = 250_000.0


def physical_wav(path, kind: str = "envelope", power_dbm: float = -85.0,
                 seed: int = 0) -> tuple:
    """Write the gate sensor's transmission (5 ms of idle before and after) as received at
    ``power_dbm`` by the physical model's default receiver; return (path, spec)."""
    spec, values = example_spec("gate_sensor.toml")
    train = ookframe.encode(spec, values)
    padded = PulseTrain(np.concatenate(([0], train.levels, [0])),
                        np.concatenate(([5000.0], train.durations_us, [5000.0])))
    channel = PhysicalChannel(distance_m=None, rx_power_dbm=power_dbm)
    x = render_baseband(padded, channel, RATE_HZ, np.random.default_rng(seed))
    write_wav(path, x, RATE_HZ, kind, "s16")
    return path, spec


@pytest.mark.parametrize("kind,decimate", [("envelope", 1), ("iq", 1), ("envelope", 4)])
def test_window_equals_the_whole_capture_view(tmp_path, kind, decimate):
    """A window from the middle of a capture (sliced in internal blocks of 8192 samples and
    read in 20,000-sample pieces, so the window spans blocks) holds the samples as read (magnitude for I/Q) and the envelope,
    thresholds, levels and comparator output of the front end run over the whole capture
    from its start; its pulses are the ones slice_capture gives there."""
    path, spec = physical_wav(tmp_path / f"c_{kind}.wav", kind)
    options = {"channel": "iq"} if kind == "iq" else {}
    info = sampled_info(path, **options)
    cfg = config_for_unit(spec.unit_us, decimate=decimate)
    with mock.patch.object(slicer_module, "BLOCK_SAMPLES", 8192):
        tr, _ = trace_capture(info, cfg, start_s=0.031, span_s=0.045, block_samples=20_000)
    a, b = int(0.031 * RATE_HZ), int(0.031 * RATE_HZ) + int(np.ceil(0.045 * RATE_HZ))
    x, _ = read_samples(path, **options)
    want = np.abs(x[a:b]) if kind == "iq" else x[a:b]
    assert np.array_equal(tr.samples, want.astype(np.float64))
    np.testing.assert_allclose(tr.sample_time_s, np.arange(a, b) / RATE_HZ, rtol=1e-12)
    env = EnvelopeStage(cfg, RATE_HZ, kind == "iq")
    e, _ = env.process(x)
    out_rate = RATE_HZ / decimate
    full, _ = track(e, start_state(float(e[0]), cfg, out_rate), cfg, out_rate)
    j = np.arange(-(-a // decimate), -(-b // decimate))
    np.testing.assert_allclose(tr.envelope_time_s, j * decimate / RATE_HZ, rtol=1e-12)
    np.testing.assert_allclose(tr.envelope, e[j], rtol=1e-9, atol=1e-12)
    for name in ("high", "low", "carrier", "floor"):
        np.testing.assert_allclose(getattr(tr, name), getattr(full, name)[j], rtol=1e-9,
                                   atol=1e-12)
    assert np.array_equal(tr.marks, full.marks[j])
    with mock.patch.object(slicer_module, "BLOCK_SAMPLES", 8192):
        train, _ = slice_capture(path, cfg, **options)
    edges = np.concatenate(([0.0], np.cumsum(train.durations_us)))
    inside = np.flatnonzero((edges[1:] > a / RATE_HZ * 1e6) & (edges[:-1] < b / RATE_HZ * 1e6))
    assert tr.pulses_start_us == pytest.approx(edges[inside[0]], abs=1e-6)
    assert np.array_equal(tr.pulses.levels, train.levels[inside])
    np.testing.assert_allclose(tr.pulses.durations_us, train.durations_us[inside], atol=1e-6)
    assert tr.marks.any() and (~tr.marks).any() and len(tr.pulses) > 10
    assert info.n_samples > 3 * 8192


def test_window_limits(tmp_path):
    """A window outside the capture, a span not above zero or one over the sample limit is
    refused naming the allowed range; no span runs to the capture's end."""
    path, spec = physical_wav(tmp_path / "c.wav")
    info = sampled_info(path)
    with pytest.raises(ValueError, match="outside the capture"):
        trace_capture(info, start_s=info.duration_s)
    with pytest.raises(ValueError, match="span_s"):
        trace_capture(info, span_s=0.0)
    with mock.patch.object(trace_module, "MAX_TRACE_SAMPLES", 1000):
        with pytest.raises(ValueError, match="at most 0.004 s"):
            trace_capture(info, span_s=0.01)
    tr, report = trace_capture(info, start_s=0.05)
    assert tr.stop_s == pytest.approx(info.duration_s)
    assert report.n_samples == info.n_samples
