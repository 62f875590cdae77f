"""Raw complex I/Q captures: interleaved I, Q numbers (unsigned 8-bit with offset 127.5,
signed 8-bit, signed 16-bit little-endian or float32 little-endian), no header.

The sample type is the ``sample_type`` option or the name's second suffix
(``gate.u8.iq``); the sample rate must be given. Samples come back as complex64 with full
scale 1.0.
"""

from __future__ import annotations

import os
from collections.abc import Iterator

import numpy as np

from ._model import SampledInfo
from ._raw import raw_info, raw_iter, raw_write

NAME = "iq"
EXTENSIONS = (".iq",)


def info(path: str | os.PathLike[str], *, sample_rate_hz: float | None = None,
         sample_type: str | None = None) -> SampledInfo:
    """Return the capture's info (rate as given, length from the file size)."""
    return raw_info(path, NAME, 2, sample_rate_hz, sample_type)


def iter_read(info: SampledInfo, block_samples: int) -> Iterator[np.ndarray]:
    """Yield complex64 blocks."""
    return raw_iter(info, block_samples)


def write(path: str | os.PathLike[str], samples, sample_rate_hz: float, *,
          sample_type: str | None = None) -> None:
    """Write complex samples (an array or an iterable of blocks) as interleaved I/Q."""
    raw_write(path, samples, sample_type, is_complex=True)
