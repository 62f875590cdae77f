"""Sampled captures on disk: WAV (any rate, 8/16/24/32-bit integer or float, mono or
stereo), raw interleaved complex I/Q and raw real samples.

Every format is a small module with the same interface: ``NAME``, ``EXTENSIONS``,
``info(path, sample_rate_hz, sample_type) -> SampledInfo``,
``iter_read(info, block_samples, channel) -> Iterator[ndarray]`` and
``write(path, samples, sample_rate_hz, sample_type)``; adding a format is adding a file
and one line in ``SAMPLED_FORMATS``. Samples come back scaled to full scale = 1.0: real
captures as float32, I/Q captures (and a stereo WAV read with ``channel="iq"``) as
complex64. Reading streams in blocks of ``block_samples``, so memory does not grow with
the file.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType

import numpy as np

from ..._require import require_path
from ...errors import CaptureError
from . import iq_format, real_format, wav_format
from ._model import MAX_SAMPLE_RATE_HZ, RAW_SAMPLE_TYPES, WAV_SAMPLE_TYPES, SampledInfo

SAMPLED_FORMATS: dict[str, ModuleType] = {
    m.NAME: m for m in (wav_format, iq_format, real_format)}
#: samples read at a time by default (memory per block: a few MB)
BLOCK_SAMPLES = 1 << 18


def sampled_format(path: str | os.PathLike[str], fmt: str | None = None) -> str | None:
    """Return the sampled format name for ``path`` (``fmt`` if it names one, else from the
    file extension), or None when ``path`` is not a sampled capture."""
    if fmt is not None:
        return fmt if fmt in SAMPLED_FORMATS else None
    suffix = Path(path).suffix.lower()
    for name, mod in SAMPLED_FORMATS.items():
        if suffix in mod.EXTENSIONS:
            return name
    return None


def sampled_info(path: str | os.PathLike[str], *, fmt: str | None = None,
                 sample_rate_hz: float | None = None, sample_type: str | None = None,
                 channel: int | str | None = None) -> SampledInfo:
    """Return what a sampled capture holds (rate, length, channels, sample type), checking
    the file: CaptureError for an unknown format, a missing or wrong sample rate, a
    truncated file or a channel the file does not have."""
    require_path(path, "path")
    name = sampled_format(path, fmt)
    if name is None:
        allowed = ", ".join(ext for m in SAMPLED_FORMATS.values() for ext in m.EXTENSIONS)
        what = f"format {fmt!r}" if fmt is not None else f"extension {Path(path).suffix or 'none'}"
        raise CaptureError(f"{path}: {what} is not a sampled capture format; allowed: "
                           f"{', '.join(SAMPLED_FORMATS)} ({allowed})")
    if sample_rate_hz is not None:
        check_sample_rate(sample_rate_hz, str(path))
    info = SAMPLED_FORMATS[name].info(path, sample_rate_hz=sample_rate_hz,
                                      sample_type=sample_type)
    return info.with_channel(channel)


def iter_samples(info: SampledInfo, block_samples: int = BLOCK_SAMPLES) -> Iterator[np.ndarray]:
    """Yield the samples of the capture ``info`` describes in consecutive blocks of
    ``block_samples`` (the last may be shorter): float32 for a real capture, complex64 for
    I/Q, full scale 1.0."""
    if isinstance(block_samples, bool) or not isinstance(block_samples, int) or block_samples < 1:
        raise TypeError(f"block_samples must be a positive int, got {block_samples!r}")
    yield from SAMPLED_FORMATS[info.format].iter_read(info, block_samples)


def read_samples(path: str | os.PathLike[str], **options: object) -> tuple[np.ndarray, SampledInfo]:
    """Return all samples of a capture and its info (small captures; big ones: iter_samples)."""
    info = sampled_info(path, **options)  # type: ignore[arg-type]
    blocks = list(iter_samples(info))
    dtype = np.complex64 if info.is_complex else np.float32
    return (np.concatenate(blocks) if blocks else np.zeros(0, dtype)), info


def write_samples(path: str | os.PathLike[str], samples: np.ndarray | Iterator[np.ndarray],
                  sample_rate_hz: float, *, fmt: str | None = None,
                  sample_type: str | None = None) -> None:
    """Write ``samples`` (an array, or an iterable of blocks for a long capture; real or
    complex, full scale 1.0; a 2-D real array is a multi-channel WAV) to ``path`` in ``fmt``
    (default: from the extension); values beyond full scale are clipped for integer
    types. The file appears whole or not at all."""
    require_path(path, "path")
    name = sampled_format(path, fmt)
    if name is None:
        raise CaptureError(f"{path}: not a sampled capture format; allowed: "
                           f"{', '.join(SAMPLED_FORMATS)}")
    check_sample_rate(sample_rate_hz, str(path))
    SAMPLED_FORMATS[name].write(path, samples, float(sample_rate_hz), sample_type=sample_type)


def check_sample_rate(sample_rate_hz: object, where: str) -> float:
    """Return ``sample_rate_hz`` as a float if it is a finite number in (0, 10 GHz];
    CaptureError naming ``where`` otherwise."""
    try:
        rate = float(sample_rate_hz)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise CaptureError(f"{where}: sample rate {sample_rate_hz!r} is not a number") from None
    if not (0 < rate <= MAX_SAMPLE_RATE_HZ):
        raise CaptureError(f"{where}: sample rate {rate:g} Hz is out of range; allowed "
                           f"(0, {MAX_SAMPLE_RATE_HZ:g}] Hz")
    return rate


__all__ = ["BLOCK_SAMPLES", "RAW_SAMPLE_TYPES", "SAMPLED_FORMATS", "WAV_SAMPLE_TYPES",
           "SampledInfo", "check_sample_rate", "iter_samples", "read_samples", "sampled_format",
           "sampled_info", "write_samples"]
