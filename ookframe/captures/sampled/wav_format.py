"""WAV captures through soundfile (libsndfile): any sample rate, mono or multi-channel,
unsigned 8-bit, signed 16/24/32-bit integer and 32/64-bit float samples.

Integer samples are scaled to full scale 1.0 (libsndfile's convention: value / 2^(bits-1)).
A file whose data chunk is shorter than its header says (a capture cut off while being
written) is refused rather than read short.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator

import numpy as np

from ...errors import CaptureError
from ._model import WAV_SAMPLE_TYPES, SampledInfo, as_blocks, write_atomic_binary

NAME = "wav"
EXTENSIONS = (".wav",)
#: libsndfile's note when the data chunk is shorter than the header says
_TRUNCATED = re.compile(r"data\s*:\s*\d+\s*\(should be \d+\)")


def _soundfile():
    try:
        import soundfile
    except (ImportError, OSError) as exc:  # OSError: the libsndfile library is missing
        raise CaptureError(f"reading WAV needs the soundfile package with libsndfile "
                           f"(pip install soundfile): {exc}") from exc
    return soundfile


def info(path: str | os.PathLike[str], *, sample_rate_hz: float | None = None,
         sample_type: str | None = None) -> SampledInfo:
    """Return the WAV header's rate, length, channels and subtype; CaptureError when the file
    cannot be read, is truncated or ``sample_rate_hz`` disagrees with the header."""
    sf = _soundfile()
    if sample_type is not None:
        raise CaptureError(f"{path}: a WAV file states its sample type in its header; leave "
                           "out the sample type")
    try:
        i = sf.info(os.fspath(path))
    except (sf.LibsndfileError, RuntimeError, OSError) as exc:
        raise CaptureError(f"{path}: cannot read as WAV: {exc}") from exc
    if i.format != "WAV" and i.format != "WAVEX":
        raise CaptureError(f"{path}: not a WAV file (libsndfile reads it as {i.format})")
    if _TRUNCATED.search(i.extra_info or ""):
        raise CaptureError(f"{path}: truncated WAV: the data chunk is shorter than its header "
                           "says (was the recording cut off?)")
    if i.frames <= 0:
        raise CaptureError(f"{path}: the WAV file holds no samples")
    if sample_rate_hz is not None and float(sample_rate_hz) != float(i.samplerate):
        raise CaptureError(f"{path}: the WAV header says {i.samplerate} Hz but the sample "
                           f"rate given is {float(sample_rate_hz):g} Hz; leave it out for WAV")
    return SampledInfo(path=os.fspath(path), format=NAME, sample_rate_hz=float(i.samplerate),
                       n_samples=int(i.frames), channels=int(i.channels),
                       sample_type=str(i.subtype), is_complex=False)


#: 16-bit PCM is read as integers and scaled here: libsndfile's float conversion of PCM_16
#: is value / 32768 too (the same float32 for every one of the 65536 codes), at twice the cost
_PCM16_SCALE = np.float32(1.0 / 32768.0)


def iter_read(info: SampledInfo, block_samples: int) -> Iterator[np.ndarray]:
    """Yield the chosen channel (or I + jQ for ``channel="iq"``) in blocks."""
    sf = _soundfile()
    pcm16 = info.sample_type == "PCM_16"
    try:
        for block in sf.blocks(info.path, blocksize=block_samples,
                               dtype="int16" if pcm16 else "float32", always_2d=True):
            if info.channel == "iq":  # two float32 columns side by side are I/Q pairs
                pairs = np.multiply(block, _PCM16_SCALE, dtype=np.float32) if pcm16 \
                    else np.ascontiguousarray(block)
                yield pairs.view(np.complex64)[:, 0]
            elif pcm16:
                yield np.multiply(block[:, info.channel or 0], _PCM16_SCALE, dtype=np.float32)
            else:
                yield np.ascontiguousarray(block[:, info.channel or 0])
    except sf.LibsndfileError as exc:
        raise CaptureError(f"{info.path}: error while reading: {exc}") from exc


def write(path: str | os.PathLike[str], samples, sample_rate_hz: float, *,
          sample_type: str | None = None) -> None:
    """Write real samples (1-D, or 2-D frames x channels) as WAV; ``sample_type`` one of
    ``WAV_SAMPLE_TYPES`` (default s16). Complex samples are written as two channels
    (left = I, right = Q)."""
    sf = _soundfile()
    st = sample_type or "s16"
    if st not in WAV_SAMPLE_TYPES:
        raise CaptureError(f"{path}: WAV sample type {st!r} unknown; allowed: "
                           f"{', '.join(WAV_SAMPLE_TYPES)}")
    rate = int(round(sample_rate_hz))
    if rate != sample_rate_hz:
        raise CaptureError(f"{path}: a WAV sample rate is a whole number of Hz, got "
                           f"{sample_rate_hz:g}")

    def fill(tmp: str) -> None:
        out = None
        try:
            for block in as_blocks(samples):
                if np.iscomplexobj(block):
                    block = np.stack((block.real, block.imag), axis=-1)
                block = np.asarray(block, dtype=np.float64)
                if out is None:
                    channels = 1 if block.ndim == 1 else block.shape[1]
                    out = sf.SoundFile(tmp, "w", samplerate=rate, channels=channels,
                                       subtype=WAV_SAMPLE_TYPES[st], format="WAV")
                if WAV_SAMPLE_TYPES[st].startswith("PCM"):
                    block = np.clip(block, -1.0, 1.0)
                out.write(block)
            if out is None:
                raise CaptureError(f"{path}: no samples to write")
        finally:
            if out is not None:
                out.close()

    write_atomic_binary(path, fill)
