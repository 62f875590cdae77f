"""Field values <-> raw integers <-> bits (sign, scale/offset, bit order, byte order).

Physical value = raw * scale + offset, computed in decimal so that a value written as a
decimal literal (21.5 with scale 0.1) maps to the raw integer exactly and back.
"""

from __future__ import annotations

from decimal import ROUND_HALF_EVEN, Decimal

import numpy as np

from .errors import ValueRangeError, excerpt
from .spec.model import BitOrder, ByteOrder, FieldSpec


def exact_decimal(x: float) -> Decimal:
    """Return the decimal written by ``repr(x)`` (0.1 -> Decimal("0.1"), not its binary value)."""
    return Decimal(repr(float(x)))


def to_raw(f: FieldSpec, value: object) -> int:
    """Return the raw integer sent for a physical ``value`` of int field ``f``.

    Raises ValueRangeError when the value is not a number or does not fit the field.
    """
    if f.kind != "int":
        raise ValueRangeError(f"field '{f.name}' holds bytes, not a number")
    if isinstance(value, bool) or not isinstance(value, int | float | str):
        raise ValueRangeError(f"field '{f.name}': expected a number, got {type(value).__name__}")
    try:
        v = Decimal(value.strip()) if isinstance(value, str) else (
            Decimal(value) if isinstance(value, int) else exact_decimal(value))
    except ArithmeticError:
        raise ValueRangeError(f"field '{f.name}': {excerpt(value)} is not a number") from None
    if not v.is_finite():
        raise ValueRangeError(f"field '{f.name}': {excerpt(value)} is not a finite number")
    if f.is_scaled:
        v = (v - exact_decimal(f.offset)) / exact_decimal(f.scale)
    raw = int(v.to_integral_value(rounding=ROUND_HALF_EVEN))
    if f.role == "value" and not f.is_scaled and raw != v:
        raise ValueRangeError(f"field '{f.name}': {excerpt(value)} is not an integer")
    if not f.raw_min <= raw <= f.raw_max:
        lo, hi = from_raw(f, f.raw_min), from_raw(f, f.raw_max)
        if f.scale < 0:
            lo, hi = hi, lo
        raise ValueRangeError(
            f"field '{f.name}': {excerpt(value)} does not fit {f.width_bits} "
            f"{'signed' if f.signed else 'unsigned'} bits; allowed {lo}..{hi}"
        )
    return raw


def to_blob(f: FieldSpec, value: object) -> bytes:
    """Return the bytes sent for ``value`` (bytes or a hex string) of bytes field ``f``.

    Raises ValueRangeError when the value is not bytes/hex or longer than ``max_len_bytes``.
    """
    if isinstance(value, str):
        try:
            value = bytes.fromhex(value)
        except ValueError:
            raise ValueRangeError(f"field '{f.name}': {excerpt(value)} is not hex") from None
    if not isinstance(value, bytes | bytearray):
        raise ValueRangeError(f"field '{f.name}': expected bytes or a hex string")
    if len(value) > f.max_len_bytes:
        raise ValueRangeError(f"field '{f.name}': {len(value)} bytes; allowed 0..{f.max_len_bytes}")
    return bytes(value)


def from_raw(f: FieldSpec, raw: int) -> int | float:
    """Return the physical value of raw integer ``raw`` (int when the field is unscaled)."""
    if not f.is_scaled:
        return int(raw)
    return float(Decimal(int(raw)) * exact_decimal(f.scale) + exact_decimal(f.offset))


def to_unsigned(raw: int, width_bits: int) -> int:
    """Two's complement of ``raw`` in ``width_bits``."""
    return raw & ((1 << width_bits) - 1)


def to_signed(u: int, width_bits: int) -> int:
    """Signed value of an unsigned ``width_bits`` pattern."""
    return u - (1 << width_bits) if u >> (width_bits - 1) & 1 else u


def int_to_bits(u: int, width_bits: int, bit_order: BitOrder = "msb",
                byte_order: ByteOrder = "big") -> np.ndarray:
    """Return the bits (uint8) of unsigned ``u`` as sent on air.

    Fields of a whole number of bytes are split into bytes (``byte_order``), each sent
    ``bit_order`` first; other widths are sent as one bit string, reversed for LSB-first.
    """
    bits = np.array([(u >> (width_bits - 1 - i)) & 1 for i in range(width_bits)], dtype=np.uint8)
    return order_bits(bits, bit_order, byte_order)


def order_bits(msb_first: np.ndarray, bit_order: BitOrder, byte_order: ByteOrder) -> np.ndarray:
    """Reorder MSB-first bits (last axis) into on-air order; self-inverse."""
    w = msb_first.shape[-1]
    if w % 8 == 0 and w > 8:
        b = msb_first.reshape(*msb_first.shape[:-1], w // 8, 8)
        if byte_order == "little":
            b = b[..., ::-1, :]
        if bit_order == "lsb":
            b = b[..., ::-1]
        return b.reshape(msb_first.shape).copy()
    return msb_first[..., ::-1].copy() if bit_order == "lsb" else msb_first.copy()


def air_order(width_bits: int, bit_order: BitOrder, byte_order: ByteOrder) -> list[int]:
    """Return, for every on-air position of a ``width_bits`` value, the index of the bit
    (MSB first) sent there: ``order_bits(np.arange(width_bits), ...)`` as a list."""
    idx = list(range(width_bits))
    if width_bits % 8 == 0 and width_bits > 8:
        groups = [idx[k:k + 8] for k in range(0, width_bits, 8)]
        if byte_order == "little":
            groups.reverse()
        if bit_order == "lsb":
            groups = [g[::-1] for g in groups]
        return [i for g in groups for i in g]
    return idx[::-1] if bit_order == "lsb" else idx


def bits_to_int(bits: np.ndarray, bit_order: BitOrder = "msb", byte_order: ByteOrder = "big") -> int:
    """Inverse of :func:`int_to_bits`: the unsigned integer of on-air bits."""
    msb = order_bits(np.asarray(bits, dtype=np.uint8), bit_order, byte_order)
    out = 0
    for b in msb.tolist():
        out = (out << 1) | b
    return out


def uint_matrix_to_bits(u: np.ndarray, width_bits: int, bit_order: BitOrder = "msb",
                        byte_order: ByteOrder = "big") -> np.ndarray:
    """Vectorised int_to_bits: (n,) uint64 -> (n, width_bits) uint8 on-air bits (the low
    ``width_bits`` <= 64 bits of each value; unpacked from its big-endian bytes, a few
    times cheaper than shifting by every bit position)."""
    if not 0 <= width_bits <= 64:
        raise ValueError(f"width_bits must be in 0..64, got {width_bits}")
    big = np.asarray(u, dtype=np.uint64).astype(">u8")
    msb = np.unpackbits(big.view(np.uint8).reshape(-1, 8), axis=1)[:, 64 - width_bits:]
    return order_bits(msb, bit_order, byte_order)


def pack_bits(bits: np.ndarray) -> bytes:
    """Pack bits MSB-first into bytes, the last partial byte zero-padded at its low end."""
    return np.packbits(np.asarray(bits, dtype=np.uint8)).tobytes()
