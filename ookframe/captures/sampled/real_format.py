"""Raw real captures: one number per sample (unsigned 8-bit with offset 127.5, signed
8-bit, signed 16-bit little-endian or float32 little-endian), no header; for example a
receiver's data pin or an audio output sampled by a logic analyser or an ADC.

The sample type is the ``sample_type`` option or the name's second suffix
(``probe.s16.raw``); the sample rate must be given. Samples come back as float32 with full
scale 1.0.
"""

from __future__ import annotations

import os
from collections.abc import Iterator

import numpy as np

from ._model import SampledInfo
from ._raw import raw_info, raw_iter, raw_write

NAME = "real"
EXTENSIONS = (".raw",)


def info(path: str | os.PathLike[str], *, sample_rate_hz: float | None = None,
         sample_type: str | None = None) -> SampledInfo:
    """Return the capture's info (rate as given, length from the file size)."""
    return raw_info(path, NAME, 1, sample_rate_hz, sample_type)


def iter_read(info: SampledInfo, block_samples: int) -> Iterator[np.ndarray]:
    """Yield float32 blocks."""
    return raw_iter(info, block_samples)


def write(path: str | os.PathLike[str], samples, sample_rate_hz: float, *,
          sample_type: str | None = None) -> None:
    """Write real samples (an array or an iterable of blocks)."""
    raw_write(path, samples, sample_type, is_complex=False)
