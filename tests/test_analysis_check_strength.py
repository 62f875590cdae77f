"""Tests for ookframe.checks.strength (checks at the frame's covered length)."""

from __future__ import annotations

import itertools
import tomllib

import numpy as np
import pytest

import ookframe
from ookframe.checks import Fletcher16, Sum8, Xor8
from ookframe.checks.strength import (
    alternatives,
    check_strength,
    checksum_strength,
    covered_bits,
    stronger_alternative,
)
from ookframe.errors import ValueRangeError

IMPL = {"sum8": Sum8(), "xor8": Xor8(), "fletcher16": Fletcher16()}


def _undetected(kind: str, data: bytes, flips: tuple[int, ...]) -> bool:
    """True when flipping bit positions (data bytes then check bytes, MSB first) leaves the
    received check equal to the check of the received data (ookframe.checks code)."""
    chk = IMPL[kind]
    w = chk.width_bits // 8
    word = bytearray(data + chk.compute(data).to_bytes(w, "big"))
    for p in flips:
        word[p // 8] ^= 0x80 >> (p % 8)
    rx_data, rx_check = bytes(word[:-w]), int.from_bytes(word[-w:], "big")
    return bytes(word) != data + chk.compute(data).to_bytes(w, "big") and \
        chk.compute(rx_data) == rx_check


def _min_weight_found(kind: str, n_bytes: int, max_weight: int, rng, samples: int) -> int | None:
    w = IMPL[kind].width_bits // 8
    n_bits = 8 * (n_bytes + w)
    for weight in range(1, max_weight + 1):
        for _ in range(samples):
            data = rng.integers(0, 256, n_bytes, dtype=np.uint8).tobytes()
            if any(_undetected(kind, data, f) for f in itertools.combinations(range(n_bits), weight)):
                return weight
    return None


@pytest.mark.parametrize("kind,want", [("xor8", 2), ("sum8", 2), ("fletcher16", 3)])
def test_checksum_hd_by_search(kind, want):
    """The stated HD is confirmed by search over every error pattern of weight <= HD on
    random 3-byte data words through the ookframe.checks implementations."""
    assert checksum_strength(kind, 24).hd == want
    assert _min_weight_found(kind, 3, want, np.random.default_rng(3), 12) == want


def test_fletcher16_hd_drops_at_256_bytes():
    """Two flips of the same bit in opposite directions 255 bytes apart cancel both mod-255
    sums (J. G. Fletcher, "An arithmetic checksum for serial transmissions", IEEE Trans.
    Commun. 1982; reasoning in the module docstring): HD 2 from 256 bytes on."""
    data = bytearray(256)
    data[0] = 0x01  # bit 0 set here, clear 255 bytes later
    flips = (7, 255 * 8 + 7)
    assert _undetected("fletcher16", bytes(data), flips)
    assert checksum_strength("fletcher16", 255 * 8).hd == 3
    assert checksum_strength("fletcher16", 256 * 8).hd == 2


def test_xor8_pattern_count_exact():
    """xor8 is linear: the undetected 2-bit patterns are same-column pairs among the B
    bytes (data + check): 8 C(B, 2); counted here by enumeration (any data)."""
    data = bytes([0x5A, 0x11])
    n_bits = 24
    found = sum(_undetected("xor8", data, f) for f in itertools.combinations(range(n_bits), 2))
    assert found == checksum_strength("xor8", 16).count == 8 * 3


SPEC = """
[frame]
name = "probe"
unit_us = 500
[line_code]
name = "manchester"
[preamble]
pattern = 0xAA
[sync]
value = 0x2DD4
length_bits = 16
[[fields]]
name = "a"
width_bits = 20
default = 0
[[fields]]
name = "b"
width_bits = 12
default = 0
[check]
kind = "crc"
model = "CRC-16/KERMIT"
covers = ["sync", "fields"]
"""


def test_spec_check_and_suggestion():
    """CRC-16/KERMIT (0x1021) has HD 4 at any length (Koopman's zoo, 0x8810, from memory);
    at 48 covered bits a catalogue poly with HD 6 exists and is suggested."""
    spec = ookframe.spec_from_dict(tomllib.loads(SPEC))
    n = covered_bits(spec)
    assert n == 48
    chosen = check_strength(spec.check, n)
    assert (chosen.kind, chosen.hd, chosen.hd_exact) == ("crc", 4, True)
    alts = alternatives(16, n)
    assert [a.key() for a in alts] == sorted((a.key() for a in alts), reverse=True)
    better = stronger_alternative(chosen, alts)
    assert better is not None and better.hd >= 6
    assert {"sum8", "fletcher16"} & {a.kind for a in alts} == {"fletcher16"}
    best = alts[0]
    assert stronger_alternative(best, alts) is None


def test_no_check_and_errors():
    """No check: HD 1, P(undetected) = P(any bit error) = 1 - (1-p)^n (binomial)."""
    s = check_strength(ookframe.CheckSpec(), 100, 1e-3)
    assert s.hd == 1 and s.undetected_per_frame_at_ber == pytest.approx(1 - 0.999**100)
    with pytest.raises(ValueRangeError, match="allowed"):
        checksum_strength("crc9", 10)
