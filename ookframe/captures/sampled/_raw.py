"""Raw sample files (no header): shared by the I/Q and real formats.

The sample type comes from the ``sample_type`` option or from a second suffix in the
file name (``gate.s16.iq``, ``probe.u8.raw``); the sample rate must be given.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from ...errors import CaptureError
from ._model import RAW_SAMPLE_TYPES, SampledInfo, as_blocks, write_atomic_binary


def sample_type_of(path: str | os.PathLike[str], sample_type: str | None) -> str:
    """Return the raw sample type: ``sample_type`` if given, else the name's second suffix."""
    if sample_type is None:
        suffixes = Path(path).suffixes
        guess = suffixes[-2].lstrip(".").lower() if len(suffixes) >= 2 else None
        if guess in RAW_SAMPLE_TYPES:
            return guess
        raise CaptureError(f"{path}: a raw capture needs its sample type: give it "
                           f"(--sample-type {'|'.join(RAW_SAMPLE_TYPES)}) or name the file "
                           f"like capture.s16{Path(path).suffix}")
    if sample_type not in RAW_SAMPLE_TYPES:
        raise CaptureError(f"{path}: raw sample type {sample_type!r} unknown; allowed: "
                           f"{', '.join(RAW_SAMPLE_TYPES)}")
    return sample_type


def raw_info(path: str | os.PathLike[str], name: str, values_per_sample: int,
             sample_rate_hz: float | None, sample_type: str | None) -> SampledInfo:
    """Return the info of a raw capture of ``values_per_sample`` numbers per sample (2 for
    interleaved I/Q); CaptureError when the rate is missing or the file is empty or ends
    inside a sample."""
    st = sample_type_of(path, sample_type)
    if sample_rate_hz is None:
        raise CaptureError(f"{path}: a raw capture has no header: give its sample rate "
                           "(--sample-rate HZ)")
    try:
        size = os.path.getsize(path)
    except OSError as exc:
        raise CaptureError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    frame = np.dtype(RAW_SAMPLE_TYPES[st][0]).itemsize * values_per_sample
    if size == 0:
        raise CaptureError(f"{path}: the file is empty")
    if size % frame:
        raise CaptureError(f"{path}: truncated: {size} bytes is not a whole number of {st} "
                           f"{'I/Q ' if values_per_sample == 2 else ''}samples ({frame} bytes "
                           f"each; {size % frame} byte(s) left over)")
    return SampledInfo(path=os.fspath(path), format=name, sample_rate_hz=float(sample_rate_hz),
                       n_samples=size // frame, channels=1, sample_type=st,
                       is_complex=values_per_sample == 2)


def _converter(sample_type: str):
    """Return raw values -> float32 at full scale 1.0 for ``sample_type``: ``(float32(raw) -
    offset) * float32(1 / scale)``, converting while subtracting (no separate cast pass)."""
    _, offset, scale = RAW_SAMPLE_TYPES[sample_type]
    off, inv = np.float32(offset), np.float32(1.0 / scale)
    if offset:
        def shifted(raw: np.ndarray) -> np.ndarray:
            x = np.subtract(raw, off, dtype=np.float32)
            x *= inv
            return x
        return shifted
    if scale != 1.0:
        return lambda raw: np.multiply(raw, inv, dtype=np.float32)
    return lambda raw: raw.astype(np.float32, copy=False)


def raw_iter(info: SampledInfo, block_samples: int) -> Iterator[np.ndarray]:
    """Yield the samples of a raw capture in blocks, scaled to full scale 1.0."""
    code = RAW_SAMPLE_TYPES[info.sample_type][0]
    convert = _converter(info.sample_type)
    per = 2 if info.is_complex else 1
    try:
        fh = open(info.path, "rb")
    except OSError as exc:
        raise CaptureError(f"{info.path}: cannot read: {exc.strerror or exc}") from exc
    with fh:
        fh.seek(info.header_bytes)
        left = info.n_samples
        while left > 0:
            n = min(block_samples, left)
            raw = np.fromfile(fh, dtype=code, count=n * per)
            if raw.size != n * per:
                raise CaptureError(f"{info.path}: the file got shorter while being read")
            x = convert(raw)
            yield x.view(np.complex64) if per == 2 else x
            left -= n


def raw_write(path: str | os.PathLike[str], samples, sample_type: str | None,
              is_complex: bool) -> None:
    """Write samples (full scale 1.0) as a raw file; integer types are rounded and clipped."""
    st = sample_type_of(path, sample_type)
    code, offset, scale = RAW_SAMPLE_TYPES[st]
    dtype = np.dtype(code)

    def fill(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            for block in as_blocks(samples):
                if is_complex:
                    block = np.asarray(block, dtype=np.complex128)
                    values = np.stack((block.real, block.imag), axis=-1).ravel()
                else:
                    if np.iscomplexobj(block):
                        raise CaptureError(f"{path}: complex samples need an I/Q format")
                    values = np.asarray(block, dtype=np.float64).ravel()
                raw = values * scale + offset
                if dtype.kind in "iu":
                    info = np.iinfo(dtype)
                    raw = np.clip(np.rint(raw), info.min, info.max)
                raw.astype(dtype).tofile(fh)

    write_atomic_binary(path, fill)
