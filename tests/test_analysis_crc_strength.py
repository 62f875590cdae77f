"""Tests for ookframe.analysis.crc_strength (Hamming distance of CRC polynomials)."""

from __future__ import annotations

import itertools
import math

import crcmod
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe.checks import _gf2
from ookframe.checks.crc_strength import (
    crc_strength,
    hd_reach,
    koopman_to_normal,
    lightest_undetected,
    normal_to_koopman,
    syndromes,
    undetected_probability,
)
from ookframe.errors import ValueRangeError


def _brute_lightest(width: int, poly: int, n_bits: int, max_weight: int) -> tuple[int, int] | None:
    """(weight, count) of the lightest multiple of g(x) of length <= n_bits, by enumeration
    of every error pattern of weight <= max_weight and plain polynomial division."""
    g = poly | (1 << width)
    for w in range(1, max_weight + 1):
        count = 0
        for pos in itertools.combinations(range(n_bits), w):
            e = 0
            for p in pos:
                e |= 1 << p
            if _gf2.mod(e, g) == 0:
                count += 1
        if count:
            return w, count
    return None


def test_notation_conversion():
    """Koopman's notation (x^W as the top bit, +1 implied) against the normal notation:
    CCITT-16 0x1021 <-> 0x8810, CRC-32 0x04C11DB7 <-> 0x82608EDB, CRC-8 0x07 <-> 0x83
    (P. Koopman, CRC polynomial zoo notation page; pairs from memory)."""
    assert koopman_to_normal(0x8810, 16) == 0x1021
    assert koopman_to_normal(0x82608EDB, 32) == 0x04C11DB7
    assert koopman_to_normal(0x83, 8) == 0x07
    assert normal_to_koopman(0x1EDC6F41, 32) == 0x8F6E37A0
    for w, p in ((8, 0x2F), (16, 0x3D65), (24, 0x864CFB)):
        assert koopman_to_normal(normal_to_koopman(p, w), w) == p
    with pytest.raises(ValueRangeError, match="top bit"):
        koopman_to_normal(0x0810, 16)
    with pytest.raises(ValueRangeError, match=r"\+1 term"):
        crc_strength(16, 0x1020, 64)
    with pytest.raises(ValueRangeError, match="1..64"):
        crc_strength(65, 0x1, 64)


def test_order_of_x_primitive_and_not():
    """x^4+x+1 is primitive (order 15) and x^4+x^3+x^2+x+1 is irreducible with order 5
    (tables of irreducible polynomials over GF(2), e.g. Lin & Costello, "Error Control
    Coding", 2nd ed., Table 2.7 / appendix B; from memory). x^16+x^12+x^5+1 =
    (x+1)(primitive of degree 15): order 32767 (common practice, no source)."""
    assert _gf2.order_of_x(0b10011) == 15
    assert _gf2.order_of_x(0b11111) == 5
    assert _gf2.order_of_x(0x11021) == 32767
    assert _gf2.order_of_x(0b101) == 2  # (x+1)^2: order 2
    # brute force: the first i > 0 with x^i == 1
    for g in (0b1011, 0b1101, 0x107, 0x12F, 0x11D, 0x1A7, 0b111, 0b11011):
        i, v = 1, 2
        while _gf2.mod(v, g) != 1:
            v, i = _gf2.mod(v << 1, g), i + 1
        assert _gf2.order_of_x(g) == i


def test_syndromes_match_division():
    """x^i mod g(x) from the vectorised generator equals plain polynomial division."""
    for width, poly in ((3, 0x3), (8, 0x07), (16, 0x1021), (32, 0x04C11DB7), (64, 0x1B)):
        s = syndromes(width, poly, 300)
        g = poly | (1 << width)
        assert [int(v) for v in s] == [_gf2.mod(1 << i, g) for i in range(300)]


@settings(max_examples=60, deadline=None)
@given(width=st.integers(3, 7), poly_seed=st.integers(0, 1 << 7),
       data_bits=st.integers(1, 11))
def test_lightest_weight_and_count_match_brute_force(width, poly_seed, data_bits):
    """Meet-in-the-middle search equals enumeration of every error pattern of weight <= 5
    (including the number of undetected patterns of that weight)."""
    poly = (poly_seed % (1 << width)) | 1
    got, _ = lightest_undetected(width, poly, data_bits, max_weight=5)
    want = _brute_lightest(width, poly, data_bits + width, 5)
    assert (None if got is None else (got.weight, got.count)) == want


def test_hd_against_crcmod_codewords():
    """HD and minimum-weight count from enumerating every data word of 2 bytes through
    crcmod 1.7 (independent CRC implementation: init 0, no reflection, xorout 0):
    codeword weight = weight(data) + weight(crc(data))."""
    for width, poly in ((8, 0x07), (8, 0x2F), (8, 0x9B), (16, 0x1021), (16, 0x8005),
                        (16, 0x3D65)):
        fn = crcmod.mkCrcFun(poly | (1 << width), initCrc=0, rev=False, xorOut=0)
        weights = np.array([bin(d).count("1") + bin(fn(d.to_bytes(2, "big"))).count("1")
                            for d in range(1, 1 << 16)])
        hd = int(weights.min())
        got = crc_strength(width, poly, 16, reach=False)
        assert got.hd_exact and got.hd == hd
        assert got.undetected == int((weights == hd).sum())


def test_koopman_8_and_16_bit():
    """Longest data words per HD, from P. Koopman & T. Chakravarty, "Cyclic Redundancy Code
    (CRC) Polynomial Selection for Embedded Networks", DSN 2004, and Koopman's CRC
    polynomial zoo (values from memory): 0x83 (CRC-8 0x07) and 0x97 (0x2F) HD=4 up to
    119 bits; 0x8810 (CCITT 0x1021) and 0xC002 (0x8005) HD=4 up to 32751 bits;
    0x9EB2 (DNP 0x3D65) HD=6 up to 135 bits; 0xBAAD HD=4 up to 7985 bits."""
    cases = {(8, 0x83): {4: 119}, (8, 0x97): {4: 119}, (16, 0x8810): {4: 32751},
             (16, 0xC002): {4: 32751}, (16, 0x9EB2): {6: 135}, (16, 0xBAAD): {4: 7985}}
    for (width, koop), want in cases.items():
        reach = hd_reach(width, koopman_to_normal(koop, width))
        for hd, bits in want.items():
            assert reach.max_data_bits[hd] == bits, (hex(koop), hd)
    # x+1 divides 0x1021 and the poly has weight 4: HD is exactly 4 at every length
    r = hd_reach(16, 0x1021)
    assert r.max_data_bits[3] == 32751 and r.max_data_bits[5] == 0


def test_koopman_32_bit():
    """From the same sources (from memory): CRC-32 0x82608EDB HD=3 up to 4294967263,
    HD=4 up to 91607, HD=5 up to 2974, HD=6 up to 268 bits; CRC-32C 0x8F6E37A0 HD=4
    up to 2147483615, HD=6 up to 5243 bits; CRC-32K 0xBA0DC66B HD=4 up to 114663, HD=6
    up to 16360 bits."""
    ieee = hd_reach(32, koopman_to_normal(0x82608EDB, 32),
                    limits={3: 100_000, 4: 3_100, 5: 400})
    assert [ieee.max_data_bits[k] for k in (3, 4, 5, 6)] == [4294967263, 91607, 2974, 268]
    c = hd_reach(32, koopman_to_normal(0x8F6E37A0, 32), limits={4: 5_400})
    assert c.max_data_bits[4] == 2147483615 and c.max_data_bits[6] == 5243
    k = hd_reach(32, koopman_to_normal(0xBA0DC66B, 32), limits={4: 16_400})
    assert k.max_data_bits[4] == 114663 and k.max_data_bits[6] == 16360


def test_hd_at_length_consistent_with_reach():
    """HD at a length agrees with the per-HD reach on both sides of each boundary
    (CRC-32: HD 6 at 268 data bits, 5 at 269 and at 2974, 4 at 2975)."""
    p = 0x04C11DB7
    assert crc_strength(32, p, 268, reach=False).hd == 6
    assert crc_strength(32, p, 269, reach=False).hd == 5
    assert crc_strength(32, p, 2974, reach=False, max_weight=4).hd_exact is False
    assert crc_strength(32, p, 2975, reach=False, max_weight=4).hd == 4


def test_lower_bound_when_budget_runs_out():
    """CRC-32C at 1024 data bits: weights 2..5 ruled out (odd ones by the x+1 factor),
    weight 6 needs more work than allowed -> HD reported as the lower bound 6."""
    r = crc_strength(32, 0x1EDC6F41, 1024, reach=False, max_work=1_000_000)
    assert (r.hd, r.hd_exact, r.undetected) == (6, False, None)
    assert r.odd_errors_detected


def test_search_limit_gives_lower_bound():
    """A weight not settled within the limit gives None plus a proven lower bound."""
    r = hd_reach(32, 0x04C11DB7, limits={3: 50_000, 4: 3_100, 5: 400})
    assert r.max_data_bits[4] is None and r.at_least_bits[4] == 50_000 - 32
    assert r.max_data_bits[5] == 2974  # weight 4 found first: still exact


def test_undetected_probability_leading_term():
    """Leading-term approximation A_d p^d (1-p)^(n-d) against the exact sum over the
    full weight distribution (enumerated with crcmod) for CRC-8 0x07 over 2 data bytes
    (standard result, e.g. Lin & Costello ch. 3, P_ud = sum_i A_i p^i (1-p)^(n-i))."""
    fn = crcmod.mkCrcFun(0x107, initCrc=0, rev=False, xorOut=0)
    n = 24
    a = np.bincount([bin(d).count("1") + bin(fn(d.to_bytes(2, "big"))).count("1")
                     for d in range(1, 1 << 16)], minlength=n + 1)
    p = 1e-4
    exact = sum(int(a[i]) * p**i * (1 - p) ** (n - i) for i in range(n + 1))
    got = crc_strength(8, 0x07, 16, reach=False).undetected_probability(p)
    assert got == pytest.approx(exact, rel=1e-2)
    assert undetected_probability(24, 4, None, p) == pytest.approx(
        math.comb(24, 4) * p**4 * (1 - p) ** 20)
    with pytest.raises(ValueRangeError, match="0..0.5"):
        undetected_probability(24, 4, 3, 0.7)
