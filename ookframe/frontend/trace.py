"""The front end's per-sample view over a time window of a sampled capture, for plots:
samples, envelope, thresholds, tracked levels, comparator output and sliced pulses."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..captures.sampled import BLOCK_SAMPLES, SampledInfo, iter_samples
from ..pulses import PulseTrain
from .capture import open_slicer
from .config import FrontEndConfig
from .slicer import SliceReport, _join

#: most input samples one trace may hold (memory and drawing time; about 100 MB of arrays)
MAX_TRACE_SAMPLES = 4_000_000


@dataclass(frozen=True)
class SliceTrace:
    """The front end over ``start_s`` .. ``stop_s`` of a capture.

    Input side (input rate): ``sample_time_s`` and ``samples`` (the magnitude |I + jQ| for
    I/Q captures, ``is_complex``). Output side (after decimation): ``envelope_time_s``,
    ``envelope`` (smoothed; every edge late by the low-pass delay), ``high`` / ``low``
    thresholds (+inf where squelched), ``carrier`` / ``floor`` tracked levels (NaN with fixed
    thresholds) and the comparator output ``marks``. ``pulses`` are the sliced pulses that
    overlap the window, the first starting at ``pulses_start_us`` (from the capture start).
    """

    start_s: float
    stop_s: float
    sample_rate_hz: float
    decimate: int
    is_complex: bool
    sample_time_s: np.ndarray
    samples: np.ndarray
    envelope_time_s: np.ndarray
    envelope: np.ndarray
    high: np.ndarray
    low: np.ndarray
    carrier: np.ndarray
    floor: np.ndarray
    marks: np.ndarray
    pulses: PulseTrain
    pulses_start_us: float


def trace_capture(info: SampledInfo, config: FrontEndConfig | None = None, *,
                  start_s: float = 0.0, span_s: float | None = None,
                  block_samples: int = BLOCK_SAMPLES) -> tuple[SliceTrace, SliceReport]:
    """Return the front end's view of ``span_s`` seconds of the capture from ``start_s``
    (default: to the end) and the report over the part read.

    The capture is read from its start (the trackers need the history) to one block past the
    window, through the same slicer as ``slice``; only the window is kept per sample. A
    window of more than ``MAX_TRACE_SAMPLES`` input samples is refused (ValueError naming
    the limit), as is one starting outside the capture.
    """
    rate = info.sample_rate_hz
    if not (np.isfinite(start_s) and 0.0 <= start_s < info.duration_s):
        raise ValueError(f"start_s {start_s!r} is outside the capture; allowed "
                         f"[0, {info.duration_s:g}) s")
    if span_s is not None and not (np.isfinite(span_s) and span_s > 0):
        raise ValueError(f"span_s must be > 0 s, got {span_s!r}")
    a = int(np.floor(start_s * rate))
    b = info.n_samples if span_s is None else min(info.n_samples,
                                                  a + max(1, int(np.ceil(span_s * rate))))
    if b - a > MAX_TRACE_SAMPLES:
        raise ValueError(f"the window holds {b - a} samples, more than {MAX_TRACE_SAMPLES} a "
                         f"trace may hold; give a span of at most "
                         f"{MAX_TRACE_SAMPLES / rate:.6g} s")
    slicer = open_slicer(info, config, trace_window=(a, b))
    read_until = min(info.n_samples, b + block_samples)
    trains, n_read = [], 0
    blocks = iter_samples(info, block_samples)
    try:
        for block in blocks:
            trains.append(slicer.feed(block))
            n_read += block.size
            if n_read >= read_until:
                break
    finally:
        blocks.close()
    trains.append(slicer.finish())
    return _assemble(slicer, _join([t for t in trains if len(t)]), a, b), slicer.report()


def _assemble(slicer, train: PulseTrain, a: int, b: int) -> SliceTrace:
    rate, q = slicer.sample_rate_hz, slicer.config.decimate
    pieces = slicer.trace_pieces
    first_in, first_out = pieces[0][0], pieces[0][2]
    samples = np.concatenate([p[1] for p in pieces])
    envelope = np.concatenate([p[3] for p in pieces])
    views = [p[4] for p in pieces]

    def cat(name: str) -> np.ndarray:
        return np.concatenate([getattr(v, name) for v in views])

    edges_us = np.concatenate(([0.0], np.cumsum(train.durations_us)))
    a_us, b_us = a * 1e6 / rate, b * 1e6 / rate
    keep = np.flatnonzero((edges_us[1:] > a_us) & (edges_us[:-1] < b_us))
    if keep.size:
        i, j = int(keep[0]), int(keep[-1]) + 1
        pulses = PulseTrain(train.levels[i:j], train.durations_us[i:j])
        start_us = float(edges_us[keep[0]])
    else:
        pulses, start_us = PulseTrain(np.zeros(0, np.uint8), np.zeros(0)), a_us
    return SliceTrace(
        start_s=a / rate, stop_s=b / rate, sample_rate_hz=rate, decimate=q,
        is_complex=slicer.is_complex,
        sample_time_s=(first_in + np.arange(samples.size)) / rate, samples=samples,
        envelope_time_s=(first_out + np.arange(envelope.size)) * q / rate,
        envelope=envelope, high=cat("high"), low=cat("low"), carrier=cat("carrier"),
        floor=cat("floor"), marks=cat("marks"), pulses=pulses, pulses_start_us=start_us)
