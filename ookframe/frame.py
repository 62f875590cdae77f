"""Frames: field values -> on-air bits -> chips -> pulse train, and received bits -> fields.

See :mod:`ookframe.spec.model` for the frame layout and the order of check, whitening and
bit stuffing. There is one encoder and one parser, both array-wide: the one-frame
functions here are :mod:`ookframe.batch` with n = 1 and :func:`parse_frames` with one row.
Every function takes a :class:`~ookframe.plan.FramePlan` or a FrameSpec (compiled on
entry); callers that run many frames compile the plan once and pass it.
"""

from __future__ import annotations

import difflib
import itertools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from decimal import Decimal, getcontext

import numpy as np

from . import batch as _batch
from ._require import require_rng, require_spec, require_values
from .bits import from_raw, to_blob, to_raw, to_signed, to_unsigned
from .checks.base import check_rows
from .errors import ValueRangeError, excerpt
from .plan import FramePlan, as_plan, spec_of
from .pulses import PulseTrain, chips_to_train, concat
from .spec.model import FrameSpec

Values = Mapping[str, object]
SpecOrPlan = FrameSpec | FramePlan


@dataclass(frozen=True)
class ParsedFrame:
    """Fields read from received bits: physical values, raw integers/bytes, check result."""

    fields: dict[str, object]
    raw: dict[str, object]
    payload_hex: str
    check_ok: bool
    n_bits: int


def head_bits(spec: SpecOrPlan) -> np.ndarray:
    """Preamble + sync bits (constant part of every frame)."""
    return as_plan(spec).head_bits.copy()


def sync_bits(spec: SpecOrPlan) -> np.ndarray:
    return as_plan(spec).sync_bits.copy()


def raw_values(spec: SpecOrPlan, values: Values) -> dict[str, object]:
    """Return raw values (ints, bytes) for every field; the length field is derived.

    Raises ValueRangeError naming a missing, unknown or out-of-range field.
    """
    fields = spec_of(spec).fields
    unknown = [k for k in values if k not in {f.name for f in fields}]
    if unknown:
        close = difflib.get_close_matches(str(unknown[0])[:100], [f.name for f in fields], n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        raise ValueRangeError(f"unknown field {excerpt(unknown[0])}{hint}; fields: "
                              + ", ".join(f.name for f in fields))
    raw: dict[str, object] = {}
    blob_len: int | None = None
    for f in fields:
        if f.kind == "bytes":
            b = to_blob(f, values.get(f.name, b""))
            raw[f.name] = b
            blob_len = len(b)
    for f in fields:
        if f.kind == "bytes":
            continue
        if f.role == "length":
            assert blob_len is not None
            if f.name in values and to_int_or_none(values[f.name]) != blob_len:
                raise ValueRangeError(f"field '{f.name}' is the length field; it is set from the "
                                      f"bytes field ({blob_len}), leave it out")
            raw[f.name] = blob_len
            continue
        if f.name not in values:
            raise ValueRangeError(f"field '{f.name}' has no value (set it or give a default)")
        raw[f.name] = to_raw(f, values[f.name])
    return raw


def to_int_or_none(v: object) -> int | None:
    try:
        return int(v)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None


def raws_batch(spec: SpecOrPlan, raws: Sequence[Mapping[str, object]]) -> dict[str, object]:
    """Return the batch form (:data:`ookframe.batch.Raws`) of per-frame raw value dicts."""
    plan = as_plan(spec)
    out: dict[str, object] = {}
    for fp in plan.fields:
        col = [r[fp.name] for r in raws]
        if fp.width_bits is None:
            out[fp.name] = col
        else:
            out[fp.name] = np.array([to_unsigned(int(v), fp.width_bits) for v in col],  # type: ignore[call-overload]
                                    dtype=np.uint64)
    return out


def _encoded(spec: SpecOrPlan, values_list: Sequence[Values]) -> _batch.EncodedBits:
    plan = as_plan(spec)
    return _batch.encode_bits(plan, raws_batch(plan, [raw_values(plan, v) for v in values_list]))


def field_bits(spec: SpecOrPlan, raw: Mapping[str, object]) -> np.ndarray:
    """On-air bits of the fields section (un-whitened)."""
    plan = as_plan(spec)
    fb, n_fb = _batch.field_bits_batch(plan, raws_batch(plan, [raw]))
    return fb[0, :int(n_fb[0])]


def check_bits(spec: SpecOrPlan, fbits: np.ndarray) -> np.ndarray:
    """On-air bits of the check over the covered sections (sync and/or fields)."""
    fb = np.asarray(fbits, dtype=np.uint8)
    return _batch.check_bits_batch(spec, fb[None, :], np.array([fb.size]))[0]


def whitening_mask(spec: SpecOrPlan, n_field_bits: int, n_check_bits: int) -> np.ndarray:
    """XOR mask over fields + check (zeros where whitening does not cover) of a frame with
    ``n_field_bits`` fields bits; ``n_check_bits`` (at most the check width) of the check."""
    plan = as_plan(spec)
    return np.concatenate((plan.fields_mask[:n_field_bits],
                           plan.check_mask(n_field_bits)[:n_check_bits]))


def body_bits(spec: SpecOrPlan, values: Values) -> np.ndarray:
    """Fields + check bits as sent (whitened, not stuffed)."""
    enc = _encoded(spec, [values])
    return enc.body[0, :int(enc.n_body_bits[0])]


def frame_bits(spec: SpecOrPlan, values: Values) -> np.ndarray:
    """Return the complete on-air bit stream of one frame before line coding (no stuffing)."""
    require_spec(spec, "spec")
    require_values(values, "values")
    plan = as_plan(spec)
    return np.asarray(_batch.frame_bits_of(plan, _encoded(plan, [values]))[0])


def frame_chips(spec: SpecOrPlan, values: Values) -> np.ndarray:
    """Return the chips of one frame (bit stuffing after the sync, then line code)."""
    require_spec(spec, "spec")
    require_values(values, "values")
    return frame_chips_many(spec, [values])[0]


def frame_chips_many(spec: SpecOrPlan, values_list: Sequence[Values]) -> list[np.ndarray]:
    """Return the chips of one frame per entry of ``values_list``."""
    plan = as_plan(spec)
    bits = _batch.frame_bits_of(plan, _encoded(plan, values_list))
    return [np.asarray(c) for c in _batch.frame_chips_batch(plan, bits)]


def frame_train(spec: SpecOrPlan, values: Values) -> PulseTrain:
    """Pulse train of one frame (no repeats)."""
    plan = as_plan(spec)
    return chips_to_train(frame_chips(plan, values), plan.unit_us)


def encode(spec: SpecOrPlan, values: Values) -> PulseTrain:
    """Return the pulse train of one whole transmission: ``repeats`` frames, ``gap_us`` apart."""
    require_spec(spec, "spec")
    require_values(values, "values")
    return encode_many(spec, [values])[0]


def encode_many(spec: SpecOrPlan, values_list: Sequence[Values]) -> list[PulseTrain]:
    """Return one transmission per entry of ``values_list``."""
    require_spec(spec, "spec")
    plan = as_plan(spec)
    return [concat([chips_to_train(c, plan.unit_us)] * plan.repeats, plan.gap_us)
            for c in frame_chips_many(plan, values_list)]


def random_values(spec: SpecOrPlan, rng: np.random.Generator) -> dict[str, object]:
    """Return valid random field values (physical) for every settable field."""
    require_spec(spec, "spec")
    require_rng(rng, "rng")
    out: dict[str, object] = {}
    for f in spec_of(spec).fields:
        if f.role == "length":
            continue
        if f.kind == "bytes":
            n = int(rng.integers(0, f.max_len_bytes + 1))
            out[f.name] = rng.integers(0, 256, n, dtype=np.uint8).tobytes()
        else:
            if f.width_bits < 64:
                raw = int(rng.integers(f.raw_min, f.raw_max, endpoint=True, dtype=np.int64))
            else:  # 64-bit: combine two 32-bit draws
                hi, lo = (int(x) for x in rng.integers(0, 1 << 32, 2, dtype=np.uint64))
                raw = f.raw_min + ((hi << 32) | lo)
            out[f.name] = from_raw(f, raw)
    return out


def values_equal(spec: SpecOrPlan, a: Values, b: Values) -> bool:
    """True when two value sets give the same raw fields (length field derived)."""
    require_spec(spec, "spec")
    require_values(a, "a")
    require_values(b, "b")
    try:
        return raw_values(spec, _settable(spec, a)) == raw_values(spec, _settable(spec, b))
    except ValueRangeError:
        return False


def _settable(spec: SpecOrPlan, v: Values) -> dict[str, object]:
    return {f.name: v[f.name] for f in spec_of(spec).fields if f.role != "length" and f.name in v}


def max_body_bits(spec: SpecOrPlan) -> int:
    """Longest fields + check section in bits (before stuffing)."""
    return as_plan(spec).max_body_bits


def min_body_bits(spec: SpecOrPlan) -> int:
    """Shortest fields + check section in bits (bytes field empty)."""
    return as_plan(spec).min_body_bits


def fixed_body_bits(spec: SpecOrPlan) -> int | None:
    """Return the fields + check bits when every frame of ``spec`` has the same layout of
    integer fields of at most 64 bits, else None."""
    return as_plan(spec).fixed_body_bits


@dataclass(frozen=True, eq=False)
class ParsedFrames:
    """Frames parsed together (see :func:`parse_frames`), one entry per row given.

    raw: per field (spec order) the uint64 bit pattern read for every frame, or for the
    bytes field a tuple of bytes; payload: (frames x bytes) uint8, the fields bytes as
    packed on air, de-whitened (zero after a shorter frame's own bytes); check_ok: bool
    per frame; n_bits: fields + check bits per frame (int64); complete: False where the
    row ran out of bits or held an impossible length (no frame: ``parse_frame`` gives None).
    """

    plan: FramePlan
    raw: tuple[np.ndarray | tuple[bytes, ...], ...]
    payload: np.ndarray
    check_ok: np.ndarray
    n_bits: np.ndarray
    complete: np.ndarray

    @property
    def spec(self) -> FrameSpec:
        return self.plan.spec

    def frames(self) -> list[ParsedFrame | None]:
        """Return every frame as :func:`parse_frame` gives it (None where not complete)."""
        out: list[ParsedFrame | None] = [None] * self.complete.size
        rows = np.flatnonzero(self.complete)
        c = self.columns(rows)
        for k, fields, raw, hx, ok, n_bits in zip(rows.tolist(), c.fields, c.raw,
                                                  c.payload_hex, c.check_ok, c.n_bits,
                                                  strict=True):
            out[k] = ParsedFrame(fields=fields, raw=raw, payload_hex=hx, check_ok=ok,
                                 n_bits=n_bits)
        return out

    def columns(self, rows: np.ndarray) -> FrameColumns:
        """Return what :class:`ParsedFrame` holds of each of ``rows`` (indices of complete
        frames) as lists, one entry per row; the values are converted column by column."""
        p = self.plan
        names = [fp.field.name for fp in p.fields]
        raws, phys = [], []
        idx = rows.tolist()
        for fp, col in zip(p.fields, self.raw, strict=True):
            if isinstance(col, tuple):
                blobs = [col[k] for k in idx]
                raws.append(blobs)
                phys.append([b.hex() for b in blobs])
                continue
            u = col[rows]
            if fp.field.signed:
                u = _signed(u, fp.field.width_bits)
            values = u.tolist()
            raws.append(values)
            phys.append(values if fp.scale is None else _scaled(u, fp.scale, fp.offset))
        n = rows.size
        n_bits = self.n_bits[rows]
        hex_len = 2 * ((n_bits - p.n_check_bits + 7) // 8)
        width = 2 * self.payload.shape[1]
        text = self.payload[rows].tobytes().hex()
        if n and width and (hex_len == width).all():  # one string cut into n equal pieces
            hexes = np.array([text]).view(f"<U{width}").tolist()
        else:
            hexes = [text[i * width:i * width + k] for i, k in enumerate(hex_len.tolist())]
        raw = _dicts(names, raws, n)
        if all(a is b for a, b in zip(phys, raws, strict=True)):
            fields = list(map(dict.copy, raw))  # the same values: copy each dict
        else:
            fields = _dicts(names, phys, n)
        return FrameColumns(fields=fields, raw=raw, payload_hex=hexes,
                            check_ok=self.check_ok[rows].tolist(), n_bits=n_bits.tolist())


def _dicts(names: list[str], columns: list[list], n: int) -> list[dict[str, object]]:
    """Return ``n`` dicts, the i-th mapping ``names`` to entry i of every column (copies
    of one dict of the names, filled column by column: about half the cost of building
    each from pairs)."""
    out = list(map(dict.copy, itertools.repeat(dict.fromkeys(names), n)))
    for name, col in zip(names, columns, strict=True):
        for d, v in zip(out, col, strict=True):
            d[name] = v
    return out


@dataclass(frozen=True, eq=False)
class FrameColumns:
    """Frames parsed together (:meth:`ParsedFrames.columns`): per frame what
    :class:`ParsedFrame` holds, each as a list with one entry per frame."""

    fields: list[dict[str, object]]
    raw: list[dict[str, object]]
    payload_hex: list[str]
    check_ok: list[bool]
    n_bits: list[int]


def _signed(u: np.ndarray, width_bits: int) -> np.ndarray:
    """Return the signed values (int64) of unsigned ``width_bits`` patterns (uint64), as
    :func:`ookframe.bits.to_signed` gives them one by one."""
    if width_bits == 64:
        return u.view(np.int64)
    s = u.astype(np.int64)
    return s - (((s >> (width_bits - 1)) & 1) << width_bits)


def _rows_matrix(rows: np.ndarray | Sequence[np.ndarray], width: int
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Return (rows as an n x ``width`` uint8 matrix, cut or zero-padded; bits per row)."""
    if isinstance(rows, np.ndarray) and rows.ndim == 2:
        rx = rows.astype(np.uint8, copy=False)
        n, have = rx.shape
        if have < width:
            rx = np.concatenate((rx, np.zeros((n, width - have), np.uint8)), axis=1)
        return rx[:, :width], np.full(n, min(have, width), np.int64)
    arrs = [np.asarray(r, dtype=np.uint8)[:width] for r in rows]
    sizes = [a.size for a in arrs]
    rx = np.zeros((len(arrs), width), np.uint8)
    if len(arrs) <= 16:  # a few rows: copy each (cheaper than the mask below)
        for i, a in enumerate(arrs):
            rx[i, :a.size] = a
    else:
        rx[np.arange(width) < np.array(sizes)[:, None]] = np.concatenate(arrs)
    return rx, np.array(sizes, np.int64)


@dataclass(frozen=True, eq=False)
class _Fields:
    raw: list[np.ndarray | tuple[bytes, ...]]
    n_field_bits: np.ndarray
    readable: np.ndarray
    plain: np.ndarray  # (n x max fields bits) fields bits, zero after each row's own


def _read(p: FramePlan, plain: np.ndarray, avail: np.ndarray, reserve_bits: int) -> _Fields:
    """Read every field of un-whitened (n x max fields bits) rows with ``avail`` bits each;
    a row is readable when its fields and ``reserve_bits`` more fit and its length is allowed."""
    n = plain.shape[0]
    raw: list[np.ndarray | tuple[bytes, ...]] = []
    blob = p.bytes_field
    if blob is None:
        for fp in p.fields:
            raw.append(np.dot(plain[:, fp.offset_bits:fp.offset_bits + fp.width_bits],  # type: ignore[operator]
                              fp.weights))
        n_fb = np.full(n, p.min_field_bits, np.int64)
        return _Fields(raw, n_fb, avail >= p.min_field_bits + reserve_bits, plain)
    m = blob.field.max_len_bytes
    length = np.zeros(n, np.int64)
    for fp in p.fields:
        if fp.width_bits is None:
            bits = plain[:, fp.offset_bits:fp.offset_bits + 8 * m]
            if p.spec.bit_order == "lsb":
                bits = bits.reshape(n, m, 8)[:, :, ::-1].reshape(n, 8 * m)
            text = np.packbits(bits, axis=1).tobytes()  # m bytes per row, cut below
            rows = range(0, n * m, m) if m else [0] * n
            raw.append(tuple(text[i:i + k] for i, k in zip(rows, length.tolist(), strict=True)))
            continue
        if fp.offset_bits < blob.offset_bits:
            cols = plain[:, fp.offset_bits:fp.offset_bits + fp.width_bits]
        else:
            idx = 8 * length[:, None] + fp.offset_bits + np.arange(fp.width_bits)
            cols = plain[np.arange(n)[:, None], idx]
        u = np.dot(cols, fp.weights)
        raw.append(u)
        if fp is p.length_field:
            length = np.where(u <= np.uint64(m), u, np.uint64(0)).astype(np.int64)
            allowed = u <= np.uint64(m)
    n_fb = p.min_field_bits + 8 * length
    readable = allowed & (avail >= n_fb + reserve_bits)
    return _Fields(raw, n_fb, readable, plain * (np.arange(plain.shape[1]) < n_fb[:, None]))


def parse_frames(spec: SpecOrPlan, bodies: np.ndarray | Sequence[np.ndarray]) -> ParsedFrames:
    """Read fields and verify the check of many frames at once.

    ``bodies``: the bits after the sync word of every frame, unstuffed and still whitened,
    as a 2-D uint8 array (frames x bits) or a sequence of 1-D rows; a row may run past
    the end of its frame. Entry ``i`` of the result is what ``parse_frame`` gives for row i.
    """
    p = as_plan(spec)
    return _parse(p, *_rows_matrix(bodies, p.max_body_bits))


def parse_rows(spec: SpecOrPlan, rows: np.ndarray, avail: np.ndarray) -> ParsedFrames:
    """Return :func:`parse_frames` of the rows of ``rows`` (a uint8 array, frames x
    ``max_body_bits``) holding ``avail`` bits each (at most ``max_body_bits``), every row
    zero after its own bits."""
    p = as_plan(spec)
    return _parse(p, rows, np.asarray(avail, dtype=np.int64))


def parse_ragged(spec: SpecOrPlan, bits: np.ndarray, lengths: np.ndarray) -> ParsedFrames:
    """Return :func:`parse_frames` of the rows laid end to end in ``bits`` (uint8), row i
    holding ``lengths[i]`` bits (no list of rows is built)."""
    p = as_plan(spec)
    width = p.max_body_bits
    lengths = np.asarray(lengths, dtype=np.int64)
    avail = np.minimum(lengths, width)
    rx = np.zeros((lengths.size, width), np.uint8)
    row = np.repeat(np.arange(lengths.size), avail)
    col = np.arange(row.size) - np.repeat(np.cumsum(avail) - avail, avail)
    rx[row, col] = np.asarray(bits, dtype=np.uint8)[
        np.repeat(np.cumsum(lengths) - lengths, avail) + col]
    return _parse(p, rx, avail)


def _parse(p: FramePlan, rx: np.ndarray, avail: np.ndarray) -> ParsedFrames:
    """:func:`parse_frames` of the (n x max body bits) rows ``rx`` with ``avail`` bits each."""
    n_cb = p.n_check_bits
    plain = rx[:, :p.max_field_bits] ^ p.fields_mask
    got = _read(p, plain, avail, n_cb)
    n_fb = got.n_field_bits
    n = rx.shape[0]
    if n_cb:
        if p.is_fixed:
            cb = rx[:, p.min_field_bits:p.min_body_bits] ^ p.check_masks[0]
        else:
            cb = rx[np.arange(n)[:, None], n_fb[:, None] + np.arange(n_cb)]
            cb ^= p.check_masks[(n_fb - p.min_field_bits) // 8]
        sent = np.dot(cb, p.check_weights)  # type: ignore[arg-type]
        covered = got.plain
        n_sync = p.sync_bits.size if p.check_covers_sync else 0
        if n_sync:
            covered = np.empty((n, n_sync + got.plain.shape[1]), np.uint8)
            covered[:, :n_sync] = p.sync_bits
            covered[:, n_sync:] = got.plain
        packed = np.packbits(covered, axis=1)
        n_bytes = None if p.is_fixed else (n_fb + n_sync + 7) // 8
        keep = np.uint64((1 << n_cb) - 1)
        value = check_rows(p.check, packed, n_bytes) & keep  # type: ignore[arg-type]
        ok = got.readable & (sent == value)
    else:
        ok = got.readable.copy()
    return ParsedFrames(p, tuple(got.raw), np.packbits(got.plain, axis=1), ok, n_fb + n_cb,
                        got.readable)


def parse_frame(spec: SpecOrPlan, bits_after_sync: np.ndarray) -> ParsedFrame | None:
    """Read fields and verify the check from the bits after the sync word.

    ``bits_after_sync`` is already unstuffed and still whitened; it may run past the end of
    the frame. Returns None when too few bits are present (truncated frame).
    """
    require_spec(spec, "spec")
    return parse_frames(spec, [np.asarray(bits_after_sync, dtype=np.uint8)]).frames()[0]


def read_fields(spec: SpecOrPlan, plain: np.ndarray, reserve_bits: int = 0
                ) -> tuple[dict[str, object], int] | None:
    """Read raw field values from un-whitened fields bits; returns (raw, bits used).

    None when the bits run out (``reserve_bits`` more must follow the fields).
    """
    p = as_plan(spec)
    rx, avail = _rows_matrix([np.asarray(plain, dtype=np.uint8)], p.max_field_bits)
    got = _read(p, rx, avail, reserve_bits)
    if not got.readable[0]:
        return None
    raw: dict[str, object] = {}
    for fp, col in zip(p.fields, got.raw, strict=True):
        if isinstance(col, tuple):
            raw[fp.name] = col[0]
        else:
            u = int(col[0])
            raw[fp.name] = to_signed(u, fp.field.width_bits) if fp.field.signed else u
    return raw, int(got.n_field_bits[0])


def _physical(p: FramePlan, raw: Mapping[str, object]) -> dict[str, object]:
    """Same as :func:`physical_values`, with the plan's decimal scale and offset."""
    out: dict[str, object] = {}
    for fp in p.fields:
        r = raw[fp.name]
        if isinstance(r, bytes):
            out[fp.name] = r.hex()
        elif fp.scale is None:
            out[fp.name] = int(r)  # type: ignore[call-overload]
        else:
            out[fp.name] = _scaled([int(r)], fp.scale, fp.offset)[0]  # type: ignore[call-overload]
    return out


def _scaled(raws: list[int] | np.ndarray, scale: Decimal, offset: Decimal | None
            ) -> list[float]:
    """Return ``float(Decimal(r) * scale + offset)`` for every raw int ``r`` (a list, or an
    int64 / uint64 array).

    When every product and sum is exact in the current decimal context (within its
    precision), the value is the exact rational r * scale + offset rounded once to a float,
    which Python's int / int division gives directly (correctly rounded); else Decimal.
    For an array whose numerators and denominator stay below 2**53, that division is done
    in float64 array-wide: both operands are then exact floats and IEEE division rounds
    the same quotient correctly, so the floats are the same.
    """
    off = Decimal(0) if offset is None else offset
    sn, sd = scale.as_integer_ratio()
    on, od = off.as_integer_ratio()
    es, eo = scale.as_tuple().exponent, off.as_tuple().exponent
    array = isinstance(raws, np.ndarray)
    if array:
        top = max(int(raws.max()), -int(raws.min())) if raws.size else 0
    else:
        top = max((abs(r) for r in raws), default=0)
    limit = 10 ** getcontext().prec
    if isinstance(es, int) and isinstance(eo, int):
        cs = abs(int(scale.scaleb(-es)))  # the coefficients: scale = cs * 10**es
        co = abs(int(off.scaleb(-eo)))
        m = min(es, eo)
        if top * cs < limit and top * cs * 10 ** (es - m) + co * 10 ** (eo - m) < limit:
            num_s, num_o, den = sn * od, on * sd, sd * od
            if array and max(top, 1) * abs(num_s) + abs(num_o) < 2**53 and den < 2**53:
                a = raws.astype(np.int64) * num_s + num_o
                return (a.astype(np.float64) / float(den)).tolist()
            values = raws.tolist() if array else raws
            return [(r * num_s + num_o) / den for r in values]
    values = raws.tolist() if array else raws
    return [float(Decimal(r) * scale + off) for r in values]


def physical_values(spec: SpecOrPlan, raw: Mapping[str, object]) -> dict[str, object]:
    """Physical values (bytes fields as hex strings) from raw values."""
    return {f.name: (raw[f.name].hex() if isinstance(raw[f.name], bytes)  # type: ignore[union-attr]
                     else from_raw(f, raw[f.name]))  # type: ignore[arg-type]
            for f in spec_of(spec).fields}


def values_from_payload(spec: SpecOrPlan, payload: bytes) -> dict[str, object]:
    """Field values from the raw fields bytes (as packed on air before whitening).

    Raises ValueRangeError when the payload is too short or has bytes left over.
    """
    p = as_plan(spec)
    plain = np.unpackbits(np.frombuffer(payload, dtype=np.uint8))
    got = read_fields(p, plain)
    if got is None:
        raise ValueRangeError(f"payload of {len(payload)} bytes is too short for the fields of "
                              f"'{p.spec.name}' (at least {(p.min_field_bits + 7) // 8})")
    raw, pos = got
    if (pos + 7) // 8 != len(payload):
        raise ValueRangeError(f"payload has {len(payload)} bytes; the fields use {(pos + 7) // 8}")
    values = physical_values(p, raw)
    return {f.name: values[f.name] for f in p.spec.fields if f.role != "length"}
