"""Field value <-> raw <-> bits conversions."""

from __future__ import annotations

import numpy as np
import pytest
from bitstring import BitArray, Bits
from hypothesis import example, given, settings
from hypothesis import strategies as st

from ookframe.bits import (
    air_order,
    bits_to_int,
    from_raw,
    int_to_bits,
    order_bits,
    to_raw,
    to_signed,
    to_unsigned,
    uint_matrix_to_bits,
)
from ookframe.errors import ValueRangeError
from ookframe.spec.model import FieldSpec


def test_scaled_decimal_value_is_exact():
    """21.5 with scale 0.1 is raw 215 and back (decimal arithmetic; worked example)."""
    f = FieldSpec("t", 12, signed=True, scale=0.1)
    assert to_raw(f, 21.5) == 215
    assert from_raw(f, 215) == 21.5
    assert to_raw(f, -20.4) == -204


def test_offset_and_range_error_names_allowed_values():
    f = FieldSpec("battery_v", 4, scale=0.1, offset=2.4)
    assert to_raw(f, 3.0) == 6
    with pytest.raises(ValueRangeError, match=r"allowed 2\.4\.\.3\.9"):
        to_raw(f, 4.0)


def test_unscaled_rejects_fraction_and_overflow():
    f = FieldSpec("n", 8)
    with pytest.raises(ValueRangeError, match="not an integer"):
        to_raw(f, 2.5)
    with pytest.raises(ValueRangeError, match="allowed 0..255"):
        to_raw(f, 256)


def test_twos_complement_matches_numpy():
    """Two's complement against numpy's int8 -> uint8 view (numpy, reference behaviour)."""
    vals = np.arange(-128, 128, dtype=np.int8)
    assert [to_unsigned(int(v), 8) for v in vals] == vals.view(np.uint8).tolist()
    assert [to_signed(int(u), 8) for u in vals.view(np.uint8)] == vals.tolist()


def test_byte_and_bit_order_against_int_to_bytes():
    """Little-endian, LSB-first bits of 0x1234 against int.to_bytes (Python stdlib)."""
    got = int_to_bits(0x1234, 16, "lsb", "little")
    ref = np.unpackbits(np.frombuffer((0x1234).to_bytes(2, "little"), np.uint8), bitorder="little")
    assert got.tolist() == ref.tolist()


@given(st.integers(1, 64), st.data(), st.sampled_from(["msb", "lsb"]), st.sampled_from(["big", "little"]))
def test_bits_round_trip(width, data, bit_order, byte_order):
    u = data.draw(st.integers(0, (1 << width) - 1))
    bits = int_to_bits(u, width, bit_order, byte_order)
    assert bits.size == width
    assert bits_to_int(bits, bit_order, byte_order) == u


# -- bitstring as an independent oracle --------------------------------------------------

def bitstring_field(raw: int, width: int, signed: bool, bit_order: str, byte_order: str) -> str:
    """On-air bits of a raw field value built with bitstring (PyPI bitstring 4.x/5.x):
    two's complement by its int/uint tokens, whole bytes little-endian by intle/uintle, then
    LSB-first as a reversal inside every byte (whole-byte fields) or of the whole field."""
    kind = "int" if signed else "uint"
    whole_bytes = width % 8 == 0
    key = kind + ("le" if whole_bytes and byte_order == "little" else "")
    b = BitArray(**{key: raw, "length": width})
    if bit_order == "lsb":
        if whole_bytes:
            for i in range(0, width, 8):
                b.reverse(i, i + 8)
        else:
            b.reverse()
    return b.bin


def bitstring_read(text: str, signed: bool, bit_order: str, byte_order: str) -> int:
    """Inverse of :func:`bitstring_field`, read back with bitstring's interpretations."""
    b = BitArray(bin=text)
    whole_bytes = len(b) % 8 == 0
    if bit_order == "lsb":
        if whole_bytes:
            for i in range(0, len(b), 8):
                b.reverse(i, i + 8)
        else:
            b.reverse()
    if whole_bytes and byte_order == "little":
        return b.intle if signed else b.uintle
    return b.int if signed else b.uint


SCALES = [(1.0, 0.0), (0.1, 0.0), (0.5, -40.0), (0.25, 2.4), (2.0, 0.0), (-0.1, 0.0)]


@settings(deadline=None)
@given(width=st.integers(1, 64), signed=st.booleans(), bit_order=st.sampled_from(["msb", "lsb"]),
       byte_order=st.sampled_from(["big", "little"]), scale=st.sampled_from(SCALES),
       data=st.data())
@example(width=12, signed=True, bit_order="lsb", byte_order="big", scale=(0.1, 0.0),
         data=None)
@example(width=16, signed=True, bit_order="msb", byte_order="little", scale=(1.0, 0.0),
         data=None)
@example(width=54, signed=False, bit_order="msb", byte_order="big", scale=(0.1, 0.0),
         data=None)
def test_field_packing_against_bitstring(width, signed, bit_order, byte_order, scale, data):
    """Field packing (sign, scale/offset, bit order, byte order, odd widths 1..64) against
    bitstring's own two's-complement and little-endian interpretations (PyPI bitstring):
    raw -> physical -> raw is exact, our on-air bits equal bitstring's, and bitstring reads
    our bits back to the raw value."""
    f = FieldSpec("x", width, signed=signed and width > 1, scale=scale[0], offset=scale[1])
    raw = f.raw_min if data is None else data.draw(st.integers(f.raw_min, f.raw_max))
    if f.is_scaled and abs(raw) >= 1 << 52:
        # a scaled physical value is a float: beyond 2**52 raw steps it cannot hold every
        # step (IEEE 754 double, 53-bit significand), so the round trip is not exact there
        raw = raw >> (abs(raw).bit_length() - 52)
    assert to_raw(f, from_raw(f, raw)) == raw
    bits = int_to_bits(to_unsigned(raw, width), width, bit_order, byte_order)
    text = "".join(map(str, bits.tolist()))
    assert text == bitstring_field(raw, width, f.signed, bit_order, byte_order)
    assert bitstring_read(text, f.signed, bit_order, byte_order) == raw
    assert to_signed(bits_to_int(bits, bit_order, byte_order), width) == (
        raw if f.signed else to_signed(raw, width))


def test_bitstring_oracle_worked_example():
    """The oracle itself, by hand: -2 in 12 signed bits is 1111 1111 1110; LSB-first that is
    0111 1111 1111. 0x1234 little-endian LSB-first is 0x34 = 00110100 -> 00101100 then
    0x12 = 00010010 -> 01001000 (bitstring gives the same)."""
    assert bitstring_field(-2, 12, True, "msb", "big") == "111111111110"
    assert bitstring_field(-2, 12, True, "lsb", "big") == "011111111111"
    assert bitstring_field(0x1234, 16, False, "lsb", "little") == "0010110001001000"
    assert Bits(uintle=0x1234, length=16).hex == "3412"


@settings(max_examples=200, deadline=None)
@given(width=st.integers(1, 64), bit_order=st.sampled_from(["msb", "lsb"]),
       byte_order=st.sampled_from(["big", "little"]))
def test_air_order_is_order_bits_of_the_indices(width, bit_order, byte_order):
    """air_order lists what order_bits does to the indices 0..width-1 (the two must agree:
    the plan's bit weights come from one, the encoder's bits from the other)."""
    want = order_bits(np.arange(width), bit_order, byte_order).tolist()
    assert air_order(width, bit_order, byte_order) == want


@pytest.mark.parametrize("bit_order", ["msb", "lsb"])
@pytest.mark.parametrize("byte_order", ["big", "little"])
def test_uint_matrix_to_bits_is_int_to_bits_per_value(bit_order, byte_order):
    """Every width 0..64: row i is int_to_bits of value i's low width bits (the one-value
    form); values with high bits above the width set too, and the largest uint64."""
    rng = np.random.default_rng(7)
    u = np.concatenate((rng.integers(0, 2**64 - 1, 40, dtype=np.uint64, endpoint=True),
                        np.array([0, 1, 2**63, 2**64 - 1], np.uint64)))
    for width in range(65):
        got = uint_matrix_to_bits(u, width, bit_order, byte_order)
        assert got.dtype == np.uint8 and got.shape == (u.size, width)
        for row, value in zip(got, u.tolist(), strict=True):
            low = value & ((1 << width) - 1)
            assert row.tolist() == int_to_bits(low, width, bit_order, byte_order).tolist()
    with pytest.raises(ValueError, match="width_bits"):
        uint_matrix_to_bits(u, 65)
