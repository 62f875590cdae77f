"""Vectorised batch encoding of fixed-layout frames (hot path for stress runs).

A frame has a fixed layout when it has no bytes field; for such specs every frame has the
same number of bits, so many frames are one 2-D array (frames x bits).
"""

from __future__ import annotations

import numpy as np

from . import frame as _f
from .bits import from_raw, uint_matrix_to_bits
from .spec.model import FrameSpec


def is_fixed_layout(spec: FrameSpec) -> bool:
    """True when every frame of ``spec`` has the same bit length (no bytes field)."""
    return not spec.is_variable


def random_raw_batch(spec: FrameSpec, n: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Random raw field values, one int64/uint64 array of length ``n`` per field."""
    out: dict[str, np.ndarray] = {}
    for f in spec.fields:
        if f.width_bits < 64:
            out[f.name] = rng.integers(f.raw_min, f.raw_max, size=n, endpoint=True, dtype=np.int64)
        else:
            u = rng.integers(0, np.iinfo(np.uint64).max, size=n, endpoint=True, dtype=np.uint64)
            out[f.name] = u.view(np.int64) if f.signed else u
    return out


def raw_row(spec: FrameSpec, raws: dict[str, np.ndarray], i: int) -> dict[str, object]:
    """Physical values of frame ``i`` of a raw batch (for comparison with decoded fields)."""
    return {f.name: from_raw(f, int(raws[f.name][i])) for f in spec.fields}


def frame_bits_batch(spec: FrameSpec, raws: dict[str, np.ndarray]) -> np.ndarray:
    """Return on-air bits (frames x bits, uint8) of fixed-layout frames; equals
    :func:`ookframe.frame.frame_bits` row by row."""
    if not is_fixed_layout(spec):
        raise ValueError("frame_bits_batch needs a fixed-layout spec (no bytes field)")
    n = len(next(iter(raws.values())))
    parts = []
    for f in spec.fields:
        r = np.asarray(raws[f.name])
        u = r if r.dtype == np.uint64 else r.astype(np.int64).view(np.uint64)
        if f.width_bits < 64:
            u = u & np.uint64((1 << f.width_bits) - 1)
        parts.append(uint_matrix_to_bits(u, f.width_bits, spec.bit_order, spec.byte_order))
    fb = np.concatenate(parts, axis=1) if parts else np.zeros((n, 0), np.uint8)
    cw = spec.check.width_bits
    if cw:
        covered_parts = []
        if "sync" in spec.check.covers:
            covered_parts.append(np.broadcast_to(_f.sync_bits(spec), (n, spec.sync.length_bits)))
        if "fields" in spec.check.covers:
            covered_parts.append(fb)
        covered = np.concatenate(covered_parts, axis=1)
        packed = np.packbits(covered, axis=1)
        chk = _f._check(spec)
        values = np.fromiter((chk.compute(row.tobytes()) for row in packed), dtype=np.uint64, count=n)
        cb = uint_matrix_to_bits(values, cw, spec.bit_order, spec.check.byte_order)
    else:
        cb = np.zeros((n, 0), np.uint8)
    body = np.concatenate((fb, cb), axis=1) ^ _f.whitening_mask(spec, fb.shape[1], cw)
    head = np.broadcast_to(_f.head_bits(spec), (n, _f.head_bits(spec).size))
    return np.concatenate((head, body), axis=1)


def frame_chips_batch(spec: FrameSpec, bits: np.ndarray) -> np.ndarray | list[np.ndarray]:
    """Chips for a batch of frame bits: 2-D when the line code has a fixed chip count and no
    stuffing, else a list of 1-D arrays."""
    lc = _f._line_code(spec)
    head_n = _f.head_bits(spec).size
    if lc.chips_per_block is not None and lc.max_stuffed_bits(bits.shape[1]) == 0:
        return lc.encode(bits)
    return [lc.encode(np.concatenate((row[:head_n], lc.stuff(row[head_n:])))) for row in bits]
