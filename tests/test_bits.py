"""Field value <-> raw <-> bits conversions."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
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


@settings(max_examples=200, deadline=None)
@given(width=st.integers(1, 64), bit_order=st.sampled_from(["msb", "lsb"]),
       byte_order=st.sampled_from(["big", "little"]))
def test_air_order_is_order_bits_of_the_indices(width, bit_order, byte_order):
    """air_order lists what order_bits does to the indices 0..width-1 (the two must agree:
    the plan's bit weights come from one, the encoder's bits from the other)."""
    want = order_bits(np.arange(width), bit_order, byte_order).tolist()
    assert air_order(width, bit_order, byte_order) == want
