"""The frame encoder, array-wide: raw field values of ``n`` frames -> on-air bits -> chips.

This is the only encoder; the one-frame functions of :mod:`ookframe.frame` call it with
n = 1. Every layout is served: a fixed layout gives 2-D arrays (frames x bits); with a
bytes field the frames differ in length, and the bits are kept left-justified in a 2-D
array with a length per row (:class:`EncodedBits`) and handed out as a list of rows.

Raw values (``Raws``): per int field an integer array of length ``n`` (two's complement
patterns as uint64, or signed int64); per bytes field a sequence of ``n`` bytes objects
(the length field must hold their lengths), or an (n x max_len_bytes) uint8 array whose
row ``i`` holds frame ``i``'s bytes in its first (length field's value) entries.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .bits import from_raw, uint_matrix_to_bits
from .checks.base import check_rows
from .linecodes.base import LineCode
from .plan import FramePlan, as_plan
from .ragged import ragged_index
from .spec.model import FrameSpec

Raws = Mapping[str, np.ndarray | Sequence[bytes]]


@dataclass(frozen=True, eq=False)
class EncodedBits:
    """Bits of ``n`` frames after the sync word, row ``i`` left-justified and zero-padded.

    fields: (n x max fields bits) uint8, the fields section before whitening; its first
    ``n_field_bits[i]`` entries belong to frame i. body: (n x max body bits), fields +
    check as sent (whitened, not stuffed), ``n_body_bits[i]`` long.
    """

    plan: FramePlan
    fields: np.ndarray
    n_field_bits: np.ndarray
    body: np.ndarray
    n_body_bits: np.ndarray

    @property
    def n(self) -> int:
        return self.body.shape[0]

    def payload_hex(self) -> tuple[str, ...]:
        """Return the fields section of every frame packed into bytes (MSB first, the last
        partial byte zero-padded), as hex: what ``ParsedFrame.payload_hex`` reports."""
        packed = np.packbits(self.fields, axis=1)
        width = 2 * packed.shape[1]
        if width == 0:
            return ("",) * packed.shape[0]
        text = packed.tobytes().hex()
        if self.plan.is_fixed:
            return tuple([text[i:i + width] for i in range(0, len(text), width)])
        begin = np.arange(packed.shape[0]) * width
        end = begin + 2 * ((np.asarray(self.n_field_bits, np.int64) + 7) // 8)
        return tuple([text[a:b] for a, b in zip(begin.tolist(), end.tolist(), strict=True)])


def is_fixed_layout(spec: FrameSpec | FramePlan) -> bool:
    """True when every frame of ``spec`` has the same bit length (no bytes field)."""
    return as_plan(spec).is_fixed


def random_raw_batch(spec: FrameSpec | FramePlan, n: int, rng: np.random.Generator
                     ) -> dict[str, np.ndarray | list[bytes]]:
    """Random raw field values: one int64/uint64 array of length ``n`` per int field; for a
    bytes field ``n`` random byte strings of uniform length 0..max_len_bytes (the length
    field holds their lengths)."""
    plan = as_plan(spec)
    out: dict[str, np.ndarray | list[bytes]] = dict(random_raw_arrays(plan, n, rng))
    if plan.bytes_field is not None:
        data = out[plan.bytes_field.name]
        assert isinstance(data, np.ndarray) and plan.length_field is not None
        lengths = out[plan.length_field.name]
        out[plan.bytes_field.name] = [row[:k].tobytes() for row, k in zip(data, lengths.tolist(),
                                                                           strict=True)]
    return out


def random_raw_arrays(spec: FrameSpec | FramePlan, n: int, rng: np.random.Generator
                      ) -> dict[str, np.ndarray]:
    """The raw values of :func:`random_raw_batch` (the same draws), a bytes field as an
    (n x max_len_bytes) uint8 array, row ``i`` zero past its length (the length field's
    value), which :func:`field_bits_batch` also takes."""
    plan = as_plan(spec)
    out: dict[str, np.ndarray] = {}
    for fp in plan.fields:
        f = fp.field
        if fp.width_bits is None:
            continue
        if f.width_bits < 64:
            out[f.name] = rng.integers(f.raw_min, f.raw_max, size=n, endpoint=True, dtype=np.int64)
        else:
            u = rng.integers(0, np.iinfo(np.uint64).max, size=n, endpoint=True, dtype=np.uint64)
            out[f.name] = u.view(np.int64) if f.signed else u
    if plan.bytes_field is not None:
        m = plan.bytes_field.field.max_len_bytes
        lengths = rng.integers(0, m + 1, size=n)
        data = rng.integers(0, 256, size=(n, m), dtype=np.uint8)
        data[np.arange(m) >= lengths[:, None]] = 0
        out[plan.bytes_field.name] = data
        assert plan.length_field is not None
        out[plan.length_field.name] = lengths.astype(np.int64)
    return out


def raw_row(spec: FrameSpec | FramePlan, raws: Raws, i: int) -> dict[str, object]:
    """Values of frame ``i`` of a raw batch (physical for int fields, bytes as bytes)."""
    plan = as_plan(spec)
    return {fp.name: (raws[fp.name][i] if fp.width_bits is None
                      else from_raw(fp.field, int(raws[fp.name][i])))  # type: ignore[arg-type]
            for fp in plan.fields}


def _unsigned(r: object, width_bits: int) -> np.ndarray:
    a = np.asarray(r)
    u = a if a.dtype == np.uint64 else a.astype(np.int64).view(np.uint64)
    if width_bits < 64:
        u = u & np.uint64((1 << width_bits) - 1)
    return u


def field_bits_batch(spec: FrameSpec | FramePlan, raws: Raws) -> tuple[np.ndarray, np.ndarray]:
    """Return (fields bits, fields bits per frame): (n x max fields bits) uint8 on-air bits
    before whitening, left-justified and zero-padded, and an int64 length per frame."""
    plan = as_plan(spec)
    spec = plan.spec
    n = len(next(iter(raws.values()))) if raws else 0
    parts = []
    blob = plan.bytes_field
    lengths = None
    for fp in plan.fields:
        if fp.width_bits is None:
            blobs = raws[fp.name]
            m = fp.field.max_len_bytes
            if isinstance(blobs, np.ndarray):  # (n x m) bytes, zero past each length
                assert plan.length_field is not None
                lengths = np.asarray(raws[plan.length_field.name], np.int64)
                buf = np.where(np.arange(m) < lengths[:, None], blobs, 0).astype(np.uint8, copy=False)
            else:
                lengths = np.fromiter((len(b) for b in blobs), np.int64, n)
                buf = np.zeros((n, m), np.uint8)
                buf[np.arange(m) < lengths[:, None]] = np.frombuffer(b"".join(blobs), np.uint8)
            bits = np.unpackbits(buf, axis=1)
            if spec.bit_order == "lsb":
                bits = bits.reshape(n, m, 8)[:, :, ::-1].reshape(n, 8 * m)
            parts.append(bits)
            continue
        u = _unsigned(raws[fp.name], fp.width_bits)
        parts.append(uint_matrix_to_bits(u, fp.width_bits, spec.bit_order, spec.byte_order))
    fb = np.concatenate(parts, axis=1) if parts else np.zeros((n, 0), np.uint8)
    if blob is None or lengths is None:
        return fb, np.full(n, fb.shape[1], np.int64)
    start = blob.offset_bits + 8 * blob.field.max_len_bytes  # fields after the bytes field
    n_after = fb.shape[1] - start
    if n_after:
        after = fb[:, start:].copy()
        fb[:, start:] = 0  # the bytes are zero-padded already
        cols = blob.offset_bits + 8 * lengths[:, None] + np.arange(n_after)
        np.put_along_axis(fb, cols, after, axis=1)
    return fb, plan.min_field_bits + 8 * lengths


def check_bits_batch(spec: FrameSpec | FramePlan, fields: np.ndarray, n_field_bits: np.ndarray
                     ) -> np.ndarray:
    """Return the on-air check bits (n x check width, before whitening) over the covered
    sections of frames with these (left-justified, zero-padded) fields bits."""
    plan = as_plan(spec)
    n = fields.shape[0]
    cw = plan.n_check_bits
    if not cw:
        return np.zeros((n, 0), np.uint8)
    spec = plan.spec
    covered_parts = []
    if plan.check_covers_sync:
        covered_parts.append(np.broadcast_to(plan.sync_bits, (n, plan.sync_bits.size)))
    covers_fields = "fields" in spec.check.covers
    if covers_fields:
        covered_parts.append(fields)
    covered = np.concatenate(covered_parts, axis=1)
    packed = np.packbits(covered, axis=1)
    n_bytes = None
    if not (plan.is_fixed or not covers_fields):
        # each frame's own bytes: zero padding past its bits only fills whole bytes
        n_bytes = (n_field_bits + (plan.sync_bits.size if plan.check_covers_sync else 0) + 7) // 8
    values = check_rows(plan.check, packed, n_bytes)  # type: ignore[arg-type]
    return uint_matrix_to_bits(values, cw, spec.bit_order, spec.check.byte_order)


def encode_bits(spec: FrameSpec | FramePlan, raws: Raws) -> EncodedBits:
    """Return the fields and body bits of the frames of ``raws`` (see :class:`EncodedBits`)."""
    plan = as_plan(spec)
    fb, n_fb = field_bits_batch(plan, raws)
    cb = check_bits_batch(plan, fb, n_fb)
    cw = plan.n_check_bits
    if plan.is_fixed:
        body = np.concatenate((fb ^ plan.fields_mask, cb ^ plan.check_masks[0]), axis=1)
        return EncodedBits(plan, fb, n_fb, body, n_fb + cw)
    n = fb.shape[0]
    body = np.zeros((n, plan.max_body_bits), np.uint8)
    inside = np.arange(fb.shape[1]) < n_fb[:, None]
    body[:, :fb.shape[1]] = fb ^ (plan.fields_mask & inside)
    if cw:
        masks = plan.check_masks[plan.blob_len(n_fb)]
        np.put_along_axis(body, n_fb[:, None] + np.arange(cw), cb ^ masks, axis=1)
    return EncodedBits(plan, fb, n_fb, body, n_fb + cw)


def rows_of(matrix: np.ndarray, lengths: np.ndarray) -> list[np.ndarray]:
    """Return row ``i`` of ``matrix`` cut to ``lengths[i]`` entries, for every row."""
    flat = matrix[np.arange(matrix.shape[1]) < lengths[:, None]]
    return split_rows(flat, lengths)


def split_rows(flat: np.ndarray, lengths: np.ndarray) -> list[np.ndarray]:
    """Return the rows (views) of ``flat``, rows of ``lengths[i]`` entries laid end to end:
    ``np.split(flat, np.cumsum(lengths)[:-1])`` without its per-row overhead (``[]`` for
    no rows)."""
    if lengths.size == 0:
        return []
    ends = np.cumsum(lengths).tolist()
    return [flat[a:b] for a, b in zip([0, *ends[:-1]], ends, strict=True)]


def frame_bits_batch(spec: FrameSpec | FramePlan, raws: Raws) -> np.ndarray | list[np.ndarray]:
    """Return the on-air bits (head + body, before stuffing and line coding) of every frame:
    a 2-D uint8 array (frames x bits) for a fixed layout, else a list of 1-D rows."""
    plan = as_plan(spec)
    return frame_bits_of(plan, encode_bits(plan, raws))


def frame_bits_of(plan: FramePlan, enc: EncodedBits) -> np.ndarray | list[np.ndarray]:
    """Head + body bits of encoded frames (2-D for a fixed layout, else a list of rows)."""
    padded, lengths = _padded_bits(plan, enc)
    if plan.is_fixed:
        return padded
    return split_rows(padded[np.arange(padded.shape[1]) < lengths[:, None]], lengths)


def _padded_bits(plan: FramePlan, enc: EncodedBits) -> tuple[np.ndarray, np.ndarray]:
    """Return (head + body bits of every frame as an (n x head + body width) matrix, a row
    valid up to its length; bits per frame)."""
    n, width = enc.body.shape
    h = plan.head_bits.size
    padded = np.empty((n, h + width), np.result_type(plan.head_bits, enc.body))
    padded[:, :h] = plan.head_bits
    padded[:, h:] = enc.body
    if plan.is_fixed:
        return padded, np.full(n, h + width, np.int64)
    return padded, h + np.asarray(enc.n_body_bits, np.int64)


def frame_bits_flat(plan: FramePlan, enc: EncodedBits) -> tuple[np.ndarray, np.ndarray]:
    """Return (head + body bits of every encoded frame laid end to end, bits per frame):
    the rows of :func:`frame_bits_of` in one uint8 array."""
    padded, lengths = _padded_bits(plan, enc)
    if plan.is_fixed:
        return padded.reshape(-1), lengths
    return padded[np.arange(padded.shape[1]) < lengths[:, None]], lengths


def frame_chips_batch(spec: FrameSpec | FramePlan, bits: np.ndarray | Sequence[np.ndarray]
                      ) -> np.ndarray | list[np.ndarray]:
    """Chips of frame bits (from :func:`frame_bits_batch`): bit stuffing after the sync,
    then the line code. 2-D when the rows are and the line code has a fixed chip count
    and no stuffing, else a list of 1-D arrays."""
    plan = as_plan(spec)
    lc = plan.line_code
    if (isinstance(bits, np.ndarray) and bits.ndim == 2 and lc.chips_per_block is not None
            and lc.max_stuffed_bits(bits.shape[1]) == 0):
        return lc.encode(bits)
    rows = list(bits)
    if not rows:
        return []
    sizes = np.array([r.size for r in rows], np.int64)
    chips, n_chips = frame_chips_flat(plan, np.concatenate(rows), sizes)
    return split_rows(chips, n_chips)


def frame_chips_flat(plan: FramePlan, bits: np.ndarray, sizes: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Return (chips of every frame laid end to end, chips per frame) for frame bits laid
    end to end in ``bits`` (``sizes[i]`` bits each, head first): bit stuffing after the
    sync, then the line code, each frame on its own (the rows of
    :func:`frame_chips_batch` in one array)."""
    lc = plan.line_code
    head_n = plan.head_bits.size
    flat = np.asarray(bits).astype(np.uint8, copy=False)
    sizes = np.asarray(sizes, np.int64)
    if type(lc).stuff_rows is LineCode.stuff_rows:  # no stuffing: the bits as they are
        return lc.encode_rows(flat, sizes)
    row_start = np.cumsum(sizes) - sizes
    body, n_body = lc.stuff_rows(flat[ragged_index(row_start + head_n, sizes - head_n)],
                                 sizes - head_n)
    lengths = head_n + n_body
    out = np.empty(int(lengths.sum()), np.uint8)
    out_start = np.cumsum(lengths) - lengths
    heads = (row_start[:, None] + np.arange(head_n)).ravel()
    out[(out_start[:, None] + np.arange(head_n)).ravel()] = flat[heads]
    out[ragged_index(out_start + head_n, n_body)] = body
    return lc.encode_rows(out, lengths)
