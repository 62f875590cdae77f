"""Frame assembly and parsing: values -> on-air bits -> values, exactly."""

from __future__ import annotations

import numpy as np
import pytest
from crccheck.crc import CrcKermit
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe import ValueRangeError, frame_bits, parse_frame, random_values, values_equal
from ookframe.bits import pack_bits
from ookframe.frame import head_bits, values_from_payload
from tests.conftest import example_spec


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), name=st.sampled_from(
    ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml", "tank_level.toml",
     "coldframe_vent.toml"]))
def test_parse_inverts_frame_bits(seed, name):
    spec, _ = example_spec(name)
    values = random_values(spec, np.random.default_rng(seed))
    bits = frame_bits(spec, values)
    head = head_bits(spec)
    assert bits[: head.size].tolist() == head.tolist()
    got = parse_frame(spec, np.concatenate((bits[head.size:], np.ones(13, np.uint8))))
    assert got is not None and got.check_ok
    assert got.n_bits == bits.size - head.size
    assert values_equal(spec, got.fields, values)


def test_hive_frame_against_crccheck_and_pn9():
    """The hive frame's CRC equals crccheck 1.3 CrcKermit over the field bytes, sent
    little-endian, and the body is XORed with PN9 from seed 0x1FF (first bytes 0xFF 0xE1,
    TI DN509, from memory)."""
    spec, values = example_spec("hive_scale.toml")
    bits = frame_bits(spec, values)
    body = bits[head_bits(spec).size:]
    payload = bytes.fromhex("03" "00a122" "15a" "6")  # hive=3, 41250 g, 34.6 °C -> 346, 3.0 V -> 6
    crc = CrcKermit.calc(payload)
    plain = np.unpackbits(np.frombuffer(payload + crc.to_bytes(2, "little"), np.uint8))
    pn9_head = np.unpackbits(np.frombuffer(bytes([0xFF, 0xE1]), np.uint8))
    assert (body[:16] ^ plain[:16]).tolist() == pn9_head.tolist()
    got = parse_frame(spec, body)
    assert got.payload_hex == payload.hex()
    assert pack_bits(plain[:48]) == payload


def test_corrupted_bit_fails_check():
    spec, values = example_spec("greenhouse_probe.toml")
    bits = frame_bits(spec, values)[head_bits(spec).size:].copy()
    bits[3] ^= 1
    got = parse_frame(spec, bits)
    assert got is not None and not got.check_ok


def test_truncated_returns_none():
    spec, values = example_spec("tank_level.toml")
    body = frame_bits(spec, values)[head_bits(spec).size:]
    assert parse_frame(spec, body[:-1]) is None


def test_values_errors_name_the_field():
    spec, values = example_spec("hive_scale.toml")
    with pytest.raises(ValueRangeError, match="did you mean 'weight_g'"):
        frame_bits(spec, {**values, "wieght_g": 1})
    with pytest.raises(ValueRangeError, match="'hive' has no value"):
        frame_bits(spec, {k: v for k, v in values.items() if k != "hive"})


def test_payload_hex_round_trip():
    spec, values = example_spec("tank_level.toml")
    got = parse_frame(spec, frame_bits(spec, values)[head_bits(spec).size:])
    assert values_equal(spec, values_from_payload(spec, bytes.fromhex(got.payload_hex)), values)
    with pytest.raises(ValueRangeError, match="too short"):
        values_from_payload(spec, b"\x01")


def test_scaled_values_equal_decimal_arithmetic():
    """frame._scaled (exact int division where the decimal context is exact) gives
    float(Decimal(r) * scale + offset) of Python's decimal module (3.11 docs: arithmetic
    exact within the context precision, float() correctly rounded) for every raw value,
    scales and offsets of many digits included."""
    import random
    from decimal import Decimal

    from ookframe.frame import _scaled

    rnd = random.Random(1)
    scales = ["0.1", "0.01", "0.25", "1e-9", "123.456", "7", "-0.5", "3.3e5", "1e-30",
              "0.3333333333333333333333333"]
    offsets = ["0", "2.4", "-20", "-0.001", "1e10", "5e-9", "0.1234567890123456789"]
    for _ in range(400):
        sc, of = Decimal(rnd.choice(scales)), Decimal(rnd.choice(offsets))
        w = rnd.choice([1, 8, 16, 24, 32, 48, 64])
        raws = [rnd.randrange(-(1 << (w - 1)), 1 << w) for _ in range(20)]
        want = [float(Decimal(r) * sc + of) for r in raws]
        assert _scaled(raws, sc, of) == want
        # the array form (as ParsedFrames.columns passes a field's column) gives the same
        if max(raws) < 1 << 63:
            assert _scaled(np.array(raws, np.int64), sc, of) == want
        if min(raws) >= 0:
            assert _scaled(np.array(raws, np.uint64), sc, of) == want


@pytest.mark.parametrize("width", [1, 2, 7, 8, 12, 31, 32, 33, 63, 64])
def test_signed_column_equals_to_signed(width):
    """frame._signed of a uint64 column gives bits.to_signed of every pattern (extremes
    included)."""
    from ookframe.bits import to_signed
    from ookframe.frame import _signed

    rng = np.random.default_rng(width)
    top = (1 << width) - 1
    u = [0, 1, top, top >> 1, (top >> 1) + 1] + [int(x) & top for x in rng.integers(
        0, np.iinfo(np.uint64).max, 50, dtype=np.uint64, endpoint=True)]
    assert _signed(np.array(u, np.uint64), width).tolist() == [to_signed(x, width) for x in u]


@pytest.mark.parametrize("name", ["hive_scale.toml", "tank_level.toml", "coldframe_vent.toml"])
def test_parse_ragged_equals_parse_frames(name):
    """parse_ragged over rows laid end to end gives parse_frames of the same rows (short,
    long and empty rows, fixed and variable layouts)."""
    from ookframe.frame import parse_frames, parse_ragged

    spec, _ = example_spec(name)
    rng = np.random.default_rng(3)
    good = [np.concatenate((frame_bits(spec, random_values(spec, rng))[head_bits(spec).size:],
                            np.zeros(3, np.uint8))) for _ in range(20)]
    noise = [rng.integers(0, 2, int(rng.integers(0, 300)), dtype=np.uint8) for _ in range(20)]
    rows = good + noise
    got = parse_ragged(spec, np.concatenate(rows), np.array([r.size for r in rows])).frames()
    assert got == parse_frames(spec, rows).frames()
    assert all(f is not None and f.check_ok for f in got[:20])
