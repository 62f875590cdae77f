"""Sampled capture files through the front end: streamed pulses and the report."""

from __future__ import annotations

import os
from collections.abc import Iterator

from ..captures.sampled import BLOCK_SAMPLES, SampledInfo, iter_samples, sampled_info
from ..pulses import PulseTrain
from .config import FrontEndConfig
from .slicer import SampleSlicer, SliceReport, _join


def open_slicer(info: SampledInfo, config: FrontEndConfig | None = None, *,
                trace_window: tuple[int, int] | None = None) -> SampleSlicer:
    """Return a slicer for the capture ``info`` describes (its rate and sample kind);
    ``trace_window`` as in ``SampleSlicer``."""
    return SampleSlicer(config or FrontEndConfig(), info.sample_rate_hz, info.is_complex,
                        trace_window=trace_window)


def iter_sliced(info: SampledInfo, slicer: SampleSlicer,
                block_samples: int = BLOCK_SAMPLES) -> Iterator[PulseTrain]:
    """Yield the pulses of the capture ``info`` describes, read in blocks of
    ``block_samples`` (memory bounded by the block, not the file); ``slicer.report()``
    holds the levels and thresholds afterwards. Pieces are never empty; joined they are
    the capture's whole train."""
    yield from slicer.slice(iter_samples(info, block_samples))


def slice_capture(path: str | os.PathLike[str], config: FrontEndConfig | None = None, *,
                  fmt: str | None = None, sample_rate_hz: float | None = None,
                  sample_type: str | None = None, channel: int | str | None = None
                  ) -> tuple[PulseTrain, SliceReport]:
    """Return the pulse train of a sampled capture (WAV, I/Q or raw real) and the front
    end's report (every level and threshold chosen)."""
    info = sampled_info(path, fmt=fmt, sample_rate_hz=sample_rate_hz,
                        sample_type=sample_type, channel=channel)
    slicer = open_slicer(info, config)
    train = _join(list(iter_sliced(info, slicer)))
    return train, slicer.report()
