"""Tests for ookframe.whitening: PN9 against published bytes and scipy, generic LFSRs."""

from __future__ import annotations

import numpy as np
import pytest
import scipy
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.signal import max_len_seq

from ookframe.errors import SpecError
from ookframe.spec.model import WhiteningSpec
from ookframe.whitening import lfsr_bits, lfsr_sequence, whiten

PN9 = WhiteningSpec(kind="pn9", width=9, poly=0x021, seed=0x1FF)


def scipy_lfsr(width: int, poly: int, seed: int, n_bits: int) -> tuple[np.ndarray, np.ndarray]:
    """Our (width, poly, seed) through scipy.signal.max_len_seq.

    scipy's convention (read from its implementation): ``state`` holds the next ``nbits``
    outputs in time order and ``taps`` are the exponents k (0 < k < nbits) of the middle
    terms, giving s[i+nbits] = s[i] ^ XOR s[i+k]. Ours: register bit k = state[k], and
    poly = x^0 term | the bits of the taps.
    """
    taps = [k for k in range(1, width) if poly >> k & 1]
    state = [(seed >> k) & 1 for k in range(width)]
    seq, end = max_len_seq(width, state=state, length=n_bits, taps=taps)
    return seq.astype(np.uint8), end


def state_bits(state: int, width: int) -> list[int]:
    return [(state >> k) & 1 for k in range(width)]


def test_pn9_first_bytes():
    """PN9 x^9+x^5+1 from seed 0x1FF: whitening bytes FF E1 1D 9A ED 85 33 24 — TI design
    note DN509 "Data whitening and random TX mode" and TI SWRU295C (CC112X user's guide)
    table 24 show FF E1 1D 9A; the last four bytes are from memory."""
    mask = lfsr_bits(PN9, 64)
    assert np.packbits(mask).tobytes() == bytes([0xFF, 0xE1, 0x1D, 0x9A, 0xED, 0x85, 0x33, 0x24])
    seq, _ = lfsr_sequence(9, 0x021, 0x1FF, 64)
    # the same bytes read from the plain sequence, first output as the LSB of each byte
    assert np.packbits(seq, bitorder="little").tobytes() == np.packbits(mask).tobytes()


def test_pn9_matches_scipy_max_len_seq():
    """PN9 over one full period (511 bits) equals scipy.signal.max_len_seq(9, taps=[5])
    (scipy >= 1.11; also its default taps for nbits=9) from the all-ones state, and the
    register state after it matches scipy's returned state."""
    seq, end = lfsr_sequence(9, 0x021, 0x1FF, 511)
    ref, ref_end = scipy_lfsr(9, 0x021, 0x1FF, 511)
    assert np.array_equal(seq, ref)
    assert np.array_equal(seq, max_len_seq(9)[0])
    assert state_bits(end, 9) == ref_end.tolist()
    assert tuple(int(x) for x in scipy.__version__.split(".")[:2]) >= (1, 11)


def test_pn9_period_and_balance():
    """A maximal-length 9-bit LFSR has period 2^9 - 1 = 511 with 256 ones (m-sequence
    property, common practice, no source); no shorter period divides 511 (7, 73)."""
    seq, end = lfsr_sequence(9, 0x021, 0x1FF, 1022)
    assert int(seq[:511].sum()) == 256
    assert np.array_equal(seq[:511], seq[511:])
    for p in (7, 73):
        assert not np.array_equal(seq[:511 - p], seq[p:511])
    assert end == 0x1FF


@pytest.mark.parametrize("width", range(2, 33))
def test_generic_widths_match_scipy(width):
    """For every width 2..32, an arbitrary odd polynomial and seed give the same 300 bits
    and end state as scipy.signal.max_len_seq with the matching taps (scipy >= 1.11): the
    register/tap correspondence holds for any LFSR, maximal or not."""
    rng = np.random.default_rng(width)
    poly = int(rng.integers(0, 1 << (width - 1))) << 1 | 1
    seed = int(rng.integers(1, 1 << width))
    seq, end = lfsr_sequence(width, poly, seed, 300)
    ref, ref_end = scipy_lfsr(width, poly, seed, 300)
    assert np.array_equal(seq, ref)
    assert state_bits(end, width) == ref_end.tolist()


@pytest.mark.parametrize(
    ("width", "poly"),
    [(7, 0x41), (15, 0x4001), (16, 0xA011)],  # x^7+x^6+1, x^15+x^14+1, x^16+x^15+x^13+x^4+1
)
def test_primitive_polynomials_match_scipy_defaults(width, poly):
    """Primitive polynomials (from memory) equal scipy.signal.max_len_seq's default
    maximal taps for that width: same 2000 bits from the all-ones state; x^7+x^6+1 has
    period 127 with 64 ones (m-sequence property, common practice, no source)."""
    seq, _ = lfsr_sequence(width, poly, (1 << width) - 1, 2000)
    assert np.array_equal(seq, max_len_seq(width, length=2000)[0])
    if width == 7:
        assert int(seq[:127].sum()) == 64
        assert np.array_equal(seq[:127], seq[127:254])
        assert not np.array_equal(seq[:126], seq[1:127])


@settings(max_examples=40, deadline=None)
@given(cuts=st.lists(st.integers(0, 200), max_size=5))
def test_chunks_chain_to_one_call(cuts):
    """Generating in chunks, passing the returned state on, equals one long call."""
    total = sum(cuts)
    whole, whole_end = lfsr_sequence(9, 0x021, 0x1FF, total)
    state, parts = 0x1FF, []
    for n in cuts:
        part, state = lfsr_sequence(9, 0x021, state, n)
        parts.append(part)
    assert np.array_equal(np.concatenate([whole[:0], *parts]), whole)
    assert state == whole_end


@settings(max_examples=40, deadline=None)
@given(n=st.integers(0, 3000), m=st.integers(0, 3000))
def test_mask_prefix_property(n, m):
    """The mask of n bits is the prefix of any longer one (the framer relies on it)."""
    lo, hi = sorted((n, m))
    assert np.array_equal(lfsr_bits(PN9, hi)[:lo], lfsr_bits(PN9, lo))
    assert lfsr_bits(PN9, lo).shape == (lo,)


@settings(max_examples=40, deadline=None)
@given(bits=st.lists(st.integers(0, 1), max_size=300),
       seed=st.integers(1, 0x1FF))
def test_whiten_is_self_inverse(bits, seed):
    """whiten(whiten(b)) == b and whitening XORs the mask (definition)."""
    spec = WhiteningSpec(kind="pn9", seed=seed)
    b = np.array(bits, np.uint8)
    w = whiten(b, spec)
    assert np.array_equal(whiten(w, spec), b)
    assert np.array_equal(w ^ b, lfsr_bits(spec, b.size))


def test_whiten_2d_rows_and_none():
    """2-D input (frames x bits) whitens every row alike; kind "none" changes nothing."""
    rng = np.random.default_rng(7)
    frames = rng.integers(0, 2, (4, 40)).astype(np.uint8)
    out = whiten(frames, PN9)
    for row, w in zip(frames, out, strict=True):
        assert np.array_equal(whiten(row, PN9), w)
    none = WhiteningSpec(kind="none")
    assert np.array_equal(whiten(frames, none), frames)
    assert not lfsr_bits(none, 16).any()


def test_mask_is_a_fresh_array():
    """Callers may modify the returned mask without corrupting the cache."""
    a = lfsr_bits(PN9, 16)
    a[:] = 0
    assert np.packbits(lfsr_bits(PN9, 16)).tobytes() == bytes([0xFF, 0xE1])


@pytest.mark.parametrize(
    ("kwargs", "path", "words"),
    [
        ({"seed": 0}, "whitening.seed", ["non-zero", "0x1..0x1FF"]),
        ({"seed": 0x200}, "whitening.seed", ["0x1..0x1FF"]),
        ({"poly": 0x020}, "whitening.poly", ["x^0 term"]),
        ({"poly": 0x221}, "whitening.poly", ["0x1..0x1FF"]),
        ({"width": 1}, "whitening.width", ["2..32"]),
        ({"width": 33, "seed": 1, "poly": 1}, "whitening.width", ["2..32"]),
    ],
)
def test_bad_lfsr_params(kwargs, path, words):
    """A zero seed, a seed or polynomial wider than the register, a polynomial without the
    x^0 term or an unsupported width raise SpecError naming the key and the range."""
    spec = WhiteningSpec(**{"kind": "lfsr", **kwargs})
    with pytest.raises(SpecError) as e:
        lfsr_bits(spec, 8)
    assert e.value.path == path
    for w in words:
        assert w in e.value.message
