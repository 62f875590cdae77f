"""Test oracle: the one-frame encoder and parser as ``ookframe.frame`` had them before the
encoder became the batch encoder with n = 1 and ``parse_frame`` became ``parse_frames``
with one row (a verbatim copy, imports made absolute). Tests compare the new code with
these functions bit for bit; nothing in ``ookframe`` uses this module.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from decimal import Decimal
from functools import lru_cache

import numpy as np

from ookframe import bits as _b
from ookframe.errors import ValueRangeError
from ookframe.pulses import PulseTrain, chips_to_train, concat
from ookframe.spec.model import FieldSpec, FrameSpec

Values = Mapping[str, object]


@dataclass(frozen=True)
class ParsedFrame:
    """Fields read from received bits: physical values, raw integers/bytes, check result."""

    fields: dict[str, object]
    raw: dict[str, object]
    payload_hex: str
    check_ok: bool
    n_bits: int


@lru_cache(maxsize=64)
def _line_code(spec: FrameSpec):
    from ookframe.linecodes import get_line_code

    return get_line_code(spec.line_code)


@lru_cache(maxsize=64)
def _check(spec: FrameSpec):
    from ookframe.checks import make_check

    return make_check(spec.check)


def head_bits(spec: FrameSpec) -> np.ndarray:
    """Preamble + sync bits (constant part of every frame)."""
    return np.array(spec.preamble.bits() + spec.sync.bits(), dtype=np.uint8)


def sync_bits(spec: FrameSpec) -> np.ndarray:
    return np.array(spec.sync.bits(), dtype=np.uint8)


def _blob(f: FieldSpec, value: object) -> bytes:
    if isinstance(value, str):
        try:
            value = bytes.fromhex(value)
        except ValueError:
            raise ValueRangeError(f"field '{f.name}': {value!r} is not hex") from None
    if not isinstance(value, bytes | bytearray):
        raise ValueRangeError(f"field '{f.name}': expected bytes or a hex string")
    if len(value) > f.max_len_bytes:
        raise ValueRangeError(f"field '{f.name}': {len(value)} bytes; allowed 0..{f.max_len_bytes}")
    return bytes(value)


def raw_values(spec: FrameSpec, values: Values) -> dict[str, object]:
    """Return raw values (ints, bytes) for every field; the length field is derived.

    Raises ValueRangeError naming a missing, unknown or out-of-range field.
    """
    unknown = [k for k in values if k not in {f.name for f in spec.fields}]
    if unknown:
        import difflib

        close = difflib.get_close_matches(unknown[0], [f.name for f in spec.fields], n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        raise ValueRangeError(f"unknown field '{unknown[0]}'{hint}; fields: "
                              + ", ".join(f.name for f in spec.fields))
    raw: dict[str, object] = {}
    blob_len: int | None = None
    for f in spec.fields:
        if f.kind == "bytes":
            b = _blob(f, values.get(f.name, b""))
            raw[f.name] = b
            blob_len = len(b)
    for f in spec.fields:
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
        raw[f.name] = _b.to_raw(f, values[f.name])
    return raw


def to_int_or_none(v: object) -> int | None:
    try:
        return int(v)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return None


def field_bits(spec: FrameSpec, raw: Mapping[str, object]) -> np.ndarray:
    """On-air bits of the fields section (un-whitened)."""
    parts = []
    for f in spec.fields:
        r = raw[f.name]
        if f.kind == "bytes":
            assert isinstance(r, bytes)
            if r:
                b = np.unpackbits(np.frombuffer(r, dtype=np.uint8))
                if spec.bit_order == "lsb":
                    b = b.reshape(-1, 8)[:, ::-1].ravel()
                parts.append(b)
        else:
            assert isinstance(r, int)
            parts.append(_b.int_to_bits(_b.to_unsigned(r, f.width_bits), f.width_bits,
                                        spec.bit_order, spec.byte_order))
    return np.concatenate(parts) if parts else np.zeros(0, np.uint8)


def check_bits(spec: FrameSpec, fbits: np.ndarray) -> np.ndarray:
    """On-air bits of the check over the covered sections (sync and/or fields)."""
    if spec.check.kind == "none":
        return np.zeros(0, np.uint8)
    covered = []
    if "sync" in spec.check.covers:
        covered.append(sync_bits(spec))
    if "fields" in spec.check.covers:
        covered.append(fbits)
    value = _check(spec).compute(_b.pack_bits(np.concatenate(covered)))
    w = spec.check.width_bits
    return _b.int_to_bits(value, w, spec.bit_order, spec.check.byte_order)


def whitening_mask(spec: FrameSpec, n_field_bits: int, n_check_bits: int) -> np.ndarray:
    """XOR mask over fields + check (zeros where whitening does not cover)."""
    n = n_field_bits + n_check_bits
    if spec.whitening.kind == "none":
        return np.zeros(n, np.uint8)
    from ookframe.whitening import lfsr_bits

    w = spec.whitening
    start = 0 if "fields" in w.covers else n_field_bits
    stop = n if "check" in w.covers else n_field_bits
    mask = np.zeros(n, np.uint8)
    mask[start:stop] = lfsr_bits(w, stop - start)
    return mask


def body_bits(spec: FrameSpec, values: Values) -> np.ndarray:
    """Fields + check bits as sent (whitened, not stuffed)."""
    raw = raw_values(spec, values)
    fb = field_bits(spec, raw)
    cb = check_bits(spec, fb)
    body = np.concatenate((fb, cb))
    return body ^ whitening_mask(spec, fb.size, cb.size)


def frame_bits(spec: FrameSpec, values: Values) -> np.ndarray:
    """Return the complete on-air bit stream of one frame before line coding (no stuffing)."""
    return np.concatenate((head_bits(spec), body_bits(spec, values)))


def frame_chips(spec: FrameSpec, values: Values) -> np.ndarray:
    """Return the chips of one frame (bit stuffing after the sync, then line code)."""
    lc = _line_code(spec)
    bits = np.concatenate((head_bits(spec), lc.stuff(body_bits(spec, values))))
    return lc.encode(bits)


def frame_train(spec: FrameSpec, values: Values) -> PulseTrain:
    """Pulse train of one frame (no repeats)."""
    return chips_to_train(frame_chips(spec, values), spec.unit_us)


def encode(spec: FrameSpec, values: Values) -> PulseTrain:
    """Return the pulse train of one whole transmission: ``repeats`` frames, ``gap_us`` apart."""
    one = frame_train(spec, values)
    return concat([one] * spec.repeats, spec.gap_us)


def encode_many(spec: FrameSpec, values_list: Sequence[Values]) -> list[PulseTrain]:
    """Return one transmission per entry of ``values_list``."""
    return [encode(spec, v) for v in values_list]


def random_values(spec: FrameSpec, rng: np.random.Generator) -> dict[str, object]:
    """Return valid random field values (physical) for every settable field."""
    out: dict[str, object] = {}
    for f in spec.fields:
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
            out[f.name] = _b.from_raw(f, raw)
    return out


def values_equal(spec: FrameSpec, a: Values, b: Values) -> bool:
    """True when two value sets give the same raw fields (length field derived)."""
    try:
        return raw_values(spec, _settable(spec, a)) == raw_values(spec, _settable(spec, b))
    except ValueRangeError:
        return False


def _settable(spec: FrameSpec, v: Values) -> dict[str, object]:
    return {f.name: v[f.name] for f in spec.fields if f.role != "length" and f.name in v}


def max_body_bits(spec: FrameSpec) -> int:
    """Longest fields + check section in bits (before stuffing)."""
    n = sum(f.width_bits if f.kind == "int" else 8 * f.max_len_bytes for f in spec.fields)
    return n + spec.check.width_bits


def min_body_bits(spec: FrameSpec) -> int:
    """Shortest fields + check section in bits (bytes field empty)."""
    return sum(f.width_bits for f in spec.fields if f.kind == "int") + spec.check.width_bits


@dataclass(frozen=True)
class _FieldPlan:
    """How to read one field: kind, width, sign, on-air bit weights, decimal scale/offset."""

    f: FieldSpec
    weights: np.ndarray | None  # uint64 weight of every on-air bit (None: wider than 64)
    scale: Decimal | None  # None when the field is unscaled
    offset: Decimal | None


@dataclass(frozen=True)
class _ParsePlan:
    """Everything ``parse_frame`` needs from a spec, worked out once per spec."""

    spec: FrameSpec
    fields: tuple[_FieldPlan, ...]
    min_body_bits: int
    max_body_bits: int
    n_check_bits: int
    fields_mask: np.ndarray | None  # whitening of the longest fields section, or None
    check_weights: np.ndarray | None
    check: object
    sync_bits: np.ndarray | None  # sync bits when the check covers the sync, else None
    check_masks: dict[int, np.ndarray]  # whitening of the check bits by fields length


def _bit_weights(width_bits: int, bit_order: _b.BitOrder, byte_order: _b.ByteOrder
                 ) -> np.ndarray | None:
    """Return the uint64 weight of every on-air bit of a ``width_bits`` value, so that
    ``bits @ weights`` equals :func:`bits.bits_to_int`; None above 64 bits."""
    if width_bits > 64:
        return None
    perm = _b.order_bits(np.arange(width_bits), bit_order, byte_order)
    return np.left_shift(np.uint64(1), (width_bits - 1 - perm).astype(np.uint64))


def _dot_int(bits: np.ndarray, weights: np.ndarray | None, bit_order: _b.BitOrder,
             byte_order: _b.ByteOrder) -> int:
    if weights is None:
        return _b.bits_to_int(bits, bit_order, byte_order)
    return int(np.dot(bits, weights))


#: parse plans by id(spec); each entry holds its spec, so an id is not reused while cached
_PLANS: dict[int, _ParsePlan] = {}


def _parse_plan(spec: FrameSpec) -> _ParsePlan:
    """Return the parse plan of ``spec`` (built on first use; no hashing of the spec)."""
    plan = _PLANS.get(id(spec))
    if plan is not None and plan.spec is spec:
        return plan
    fields = []
    for f in spec.fields:
        wts = None if f.kind == "bytes" else _bit_weights(f.width_bits, spec.bit_order,
                                                          spec.byte_order)
        sc = (_b.exact_decimal(f.scale), _b.exact_decimal(f.offset)) if f.is_scaled else (None, None)
        fields.append(_FieldPlan(f, wts, *sc))
    w = spec.whitening
    n_max = max_body_bits(spec)
    fields_mask = None
    if w.kind != "none" and "fields" in w.covers:
        from ookframe.whitening import lfsr_bits

        fields_mask = lfsr_bits(w, n_max)
    n_cb = spec.check.width_bits
    plan = _ParsePlan(
        spec=spec, fields=tuple(fields), min_body_bits=min_body_bits(spec),
        max_body_bits=n_max, n_check_bits=n_cb, fields_mask=fields_mask,
        check_weights=_bit_weights(n_cb, spec.bit_order, spec.check.byte_order) if n_cb else None,
        check=_check(spec) if n_cb else None,
        sync_bits=sync_bits(spec) if "sync" in spec.check.covers else None,
        check_masks={})
    if len(_PLANS) >= 64:
        _PLANS.clear()
    _PLANS[id(spec)] = plan
    return plan


def _check_mask(p: _ParsePlan, n_field_bits: int) -> np.ndarray:
    """Return (cached in the plan) the whitening of the check bits after ``n_field_bits``."""
    mask = p.check_masks.get(n_field_bits)
    if mask is None:
        mask = p.check_masks[n_field_bits] = whitening_mask(
            p.spec, n_field_bits, p.n_check_bits)[n_field_bits:]
    return mask


def parse_frame(spec: FrameSpec, bits_after_sync: np.ndarray) -> ParsedFrame | None:
    """Read fields and verify the check from the bits after the sync word.

    ``bits_after_sync`` is already unstuffed and still whitened; it may run past the end of
    the frame. Returns None when too few bits are present (truncated frame).
    """
    p = _parse_plan(spec)
    rx = np.asarray(bits_after_sync, dtype=np.uint8)
    n_cb = p.n_check_bits
    # de-whiten assuming the longest layout; the mask for a shorter frame is its prefix
    # when whitening starts at the fields, which is the case that needs the length field.
    if rx.size < p.min_body_bits:
        return None
    n_max = min(rx.size, p.max_body_bits)
    plain = rx[:n_max] ^ p.fields_mask[:n_max] if p.fields_mask is not None else rx[:n_max]
    got = _read_fields(p, plain, n_cb)
    if got is None:
        return None
    raw, pos = got
    n_fb = pos
    fb = plain[:n_fb]
    if pos + n_cb > rx.size:
        return None
    if n_cb:
        cb = rx[pos:pos + n_cb] ^ _check_mask(p, n_fb)
        covered = fb if p.sync_bits is None else np.concatenate((p.sync_bits, fb))
        value = p.check.compute(_b.pack_bits(covered))  # type: ignore[attr-defined]
        got_value = _dot_int(cb, p.check_weights, spec.bit_order, spec.check.byte_order)
        ok = got_value == value & ((1 << n_cb) - 1)
    else:
        ok = True
    fields = _physical(p, raw)
    return ParsedFrame(fields=fields, raw=raw, payload_hex=_b.pack_bits(fb).hex(),
                       check_ok=ok, n_bits=n_fb + n_cb)


def fixed_body_bits(spec: FrameSpec) -> int | None:
    """Return the fields + check bits when every frame of ``spec`` has the same layout of
    integer fields of at most 64 bits (what :func:`parse_frames` reads), else None."""
    p = _parse_plan(spec)
    if p.min_body_bits != p.max_body_bits or any(fp.weights is None for fp in p.fields):
        return None
    if p.n_check_bits and p.check_weights is None:
        return None
    return p.min_body_bits


@dataclass(frozen=True, eq=False)
class ParsedFrames:
    """Frames of one fixed layout parsed together (see :func:`parse_frames`).

    raw: per field (spec order) the uint64 bit pattern read for every frame; payload:
    (frames x bytes) uint8, the fields bytes as packed on air, de-whitened; check_ok: bool
    per frame; n_bits: fields + check bits of every frame.
    """

    spec: FrameSpec
    raw: tuple[np.ndarray, ...]
    payload: np.ndarray
    check_ok: np.ndarray
    n_bits: int

    def frames(self) -> list[ParsedFrame]:
        """Return every frame as :func:`parse_frame` gives it."""
        p = _parse_plan(self.spec)
        names = [fp.f.name for fp in p.fields]
        raws = [[_b.to_signed(u, fp.f.width_bits) for u in col.tolist()] if fp.f.signed
                else col.tolist() for fp, col in zip(p.fields, self.raw, strict=True)]
        w = 2 * self.payload.shape[1]
        hexes = self.payload.tobytes().hex()
        out = []
        for i, (values, ok) in enumerate(zip(zip(*raws, strict=True), self.check_ok.tolist(),
                                             strict=True)):
            raw = dict(zip(names, values, strict=True))
            out.append(ParsedFrame(fields=_physical(p, raw), raw=raw,
                                   payload_hex=hexes[i * w:(i + 1) * w], check_ok=ok,
                                   n_bits=self.n_bits))
        return out


def parse_frames(spec: FrameSpec, bodies: np.ndarray) -> ParsedFrames:
    """Read fields and verify the check of many frames at once.

    ``bodies`` is (frames x :func:`fixed_body_bits`) uint8: the bits after the sync word,
    unstuffed and still whitened. Row ``i`` gives what ``parse_frame`` gives for it.
    Raises ValueError when the spec has no fixed layout or the rows have the wrong width.
    """
    n_body = fixed_body_bits(spec)
    rx = np.asarray(bodies, dtype=np.uint8)
    if n_body is None or rx.ndim != 2 or rx.shape[1] != n_body:
        raise ValueError(f"parse_frames needs a fixed layout and rows of {n_body} bits")
    p = _parse_plan(spec)
    plain = rx ^ p.fields_mask[:n_body] if p.fields_mask is not None else rx
    raw = []
    pos = 0
    for fp in p.fields:
        end = pos + fp.f.width_bits
        raw.append(np.dot(plain[:, pos:end], fp.weights))
        pos = end
    fb = plain[:, :pos]
    n_cb = p.n_check_bits
    if n_cb:
        got = np.dot(rx[:, pos:pos + n_cb] ^ _check_mask(p, pos), p.check_weights).tolist()
        covered = fb if p.sync_bits is None else np.concatenate(
            (np.broadcast_to(p.sync_bits, (fb.shape[0], p.sync_bits.size)), fb), axis=1)
        keep = (1 << n_cb) - 1
        compute = p.check.compute  # type: ignore[attr-defined]
        ok = np.array([g == compute(row.tobytes()) & keep
                       for g, row in zip(got, np.packbits(covered, axis=1), strict=True)],
                      dtype=bool).reshape(-1)
    else:
        ok = np.ones(rx.shape[0], bool)
    return ParsedFrames(spec, tuple(raw), np.packbits(fb, axis=1), ok, n_body)


def read_fields(spec: FrameSpec, plain: np.ndarray, reserve_bits: int = 0
                ) -> tuple[dict[str, object], int] | None:
    """Read raw field values from un-whitened fields bits; returns (raw, bits used).

    None when the bits run out (``reserve_bits`` more must follow the fields).
    """
    return _read_fields(_parse_plan(spec), np.asarray(plain, dtype=np.uint8), reserve_bits)


def _read_fields(p: _ParsePlan, plain: np.ndarray, reserve_bits: int
                 ) -> tuple[dict[str, object], int] | None:
    spec = p.spec
    raw: dict[str, object] = {}
    pos = 0
    blob_len = 0
    for fp in p.fields:
        f = fp.f
        if f.kind == "bytes":
            n = 8 * blob_len
            if pos + n + reserve_bits > plain.size or blob_len > f.max_len_bytes:
                return None
            b = plain[pos:pos + n]
            if spec.bit_order == "lsb" and n:
                b = b.reshape(-1, 8)[:, ::-1].ravel()
            raw[f.name] = np.packbits(b).tobytes() if n else b""
            pos += n
            continue
        end = pos + f.width_bits
        if end > plain.size:
            return None
        u = _dot_int(plain[pos:end], fp.weights, spec.bit_order, spec.byte_order)
        pos = end
        r = _b.to_signed(u, f.width_bits) if f.signed else u
        raw[f.name] = r
        if f.role == "length":
            blob_len = r
    return raw, pos


def _physical(p: _ParsePlan, raw: Mapping[str, object]) -> dict[str, object]:
    """Same as :func:`physical_values`, with the plan's decimal scale and offset."""
    out: dict[str, object] = {}
    for fp in p.fields:
        r = raw[fp.f.name]
        if isinstance(r, bytes):
            out[fp.f.name] = r.hex()
        elif fp.scale is None:
            out[fp.f.name] = int(r)  # type: ignore[call-overload]
        else:
            out[fp.f.name] = float(Decimal(int(r)) * fp.scale + fp.offset)  # type: ignore[call-overload,operator]
    return out


def physical_values(spec: FrameSpec, raw: Mapping[str, object]) -> dict[str, object]:
    """Physical values (bytes fields as hex strings) from raw values."""
    return {f.name: (raw[f.name].hex() if isinstance(raw[f.name], bytes)  # type: ignore[union-attr]
                     else _b.from_raw(f, raw[f.name]))  # type: ignore[arg-type]
            for f in spec.fields}


def values_from_payload(spec: FrameSpec, payload: bytes) -> dict[str, object]:
    """Field values from the raw fields bytes (as packed on air before whitening).

    Raises ValueRangeError when the payload is too short or has bytes left over.
    """
    plain = np.unpackbits(np.frombuffer(payload, dtype=np.uint8))
    got = read_fields(spec, plain)
    if got is None:
        raise ValueRangeError(f"payload of {len(payload)} bytes is too short for the fields of "
                              f"'{spec.name}' (at least {(min_body_bits(spec) - spec.check.width_bits + 7) // 8})")
    raw, pos = got
    if (pos + 7) // 8 != len(payload):
        raise ValueRangeError(f"payload has {len(payload)} bytes; the fields use {(pos + 7) // 8}")
    values = physical_values(spec, raw)
    return {f.name: values[f.name] for f in spec.fields if f.role != "length"}
