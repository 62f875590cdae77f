"""What a sampled capture holds (``SampledInfo``) and the sample types the formats know."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable, Iterator
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ...errors import CaptureError, excerpt

#: highest sample rate accepted (Hz); a larger one is a typo (kHz/MHz mixed up)
MAX_SAMPLE_RATE_HZ = 1e10

#: raw sample types: numpy dtype (little-endian), offset and scale so that
#: value = (raw - offset) / scale has full scale 1.0 (u8: offset 127.5, the usual
#: unsigned 8-bit I/Q convention, common practice, no source)
RAW_SAMPLE_TYPES: dict[str, tuple[str, float, float]] = {
    "u8": ("u1", 127.5, 127.5),
    "s8": ("i1", 0.0, 128.0),
    "s16": ("<i2", 0.0, 32768.0),
    "f32": ("<f4", 0.0, 1.0),
}
#: WAV sample types written (soundfile subtype names) and their names in options
WAV_SAMPLE_TYPES: dict[str, str] = {
    "u8": "PCM_U8", "s16": "PCM_16", "s24": "PCM_24", "s32": "PCM_32",
    "f32": "FLOAT", "f64": "DOUBLE",
}


@dataclass(frozen=True)
class SampledInfo:
    """A sampled capture: ``path``, ``format`` name, ``sample_rate_hz``, ``n_samples`` (per
    channel), ``channels`` in the file, ``sample_type`` (raw type or WAV subtype),
    ``is_complex`` (I/Q samples), ``channel`` read (index, ``"iq"`` = left as I and right as
    Q, or None for a one-channel file) and ``header_bytes`` skipped before the samples."""

    path: str
    format: str
    sample_rate_hz: float
    n_samples: int
    channels: int
    sample_type: str
    is_complex: bool
    channel: int | str | None = None
    header_bytes: int = 0

    @property
    def duration_s(self) -> float:
        """Length of the capture in seconds."""
        return self.n_samples / self.sample_rate_hz

    def with_channel(self, channel: int | str | None) -> SampledInfo:
        """Return this info reading ``channel``; CaptureError if the file has no such
        channel (default for a multi-channel file: channel 0)."""
        if channel is None:
            return replace(self, channel=0 if self.channels > 1 else None)
        if channel == "iq":
            if self.channels != 2 or self.is_complex:
                raise CaptureError(f"{self.path}: channel 'iq' (left = I, right = Q) needs a "
                                   f"two-channel real capture; this one has {self.channels} "
                                   f"{'complex ' if self.is_complex else ''}channel(s)")
            return replace(self, channel="iq", is_complex=True)
        if isinstance(channel, bool) or not isinstance(channel, int | np.integer):
            raise CaptureError(f"{self.path}: channel {excerpt(channel)} must be an index "
                               f"0..{self.channels - 1} or 'iq'")
        if not 0 <= channel < self.channels:
            raise CaptureError(f"{self.path}: channel {channel} does not exist; the file has "
                               f"{self.channels} channel(s), allowed 0..{self.channels - 1}")
        return replace(self, channel=int(channel) if self.channels > 1 else None)


def write_atomic_binary(path: str | os.PathLike[str], fill: Callable[[str], None]) -> None:
    """Call ``fill(tmp_path)`` to write a temporary file next to ``path``, then move it
    onto ``path``; nothing is left behind on failure."""
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", dir=target.parent or ".")
    os.close(fd)
    try:
        fill(tmp)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def as_blocks(samples: np.ndarray | Iterator[np.ndarray]) -> Iterator[np.ndarray]:
    """Yield ``samples`` as blocks: an array is one block, an iterable yields its items."""
    if isinstance(samples, np.ndarray):
        yield samples
        return
    for block in samples:
        yield np.asarray(block)
