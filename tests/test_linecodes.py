"""Tests for ookframe.linecodes: round trips, published code tables and conventions, params."""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe.errors import SpecError
from ookframe.linecodes import LINE_CODES, LineCode, get_line_code
from ookframe.linecodes._block import BlockCode
from ookframe.linecodes._transition import TransitionCode
from ookframe.linecodes.code3of6 import CODEWORDS_3OF6
from ookframe.linecodes.code4b6b import CODEWORDS_4B6B
from ookframe.pulses import chips_to_runs
from ookframe.spec.model import LineCodeSpec


def default_params(name: str) -> dict[str, object]:
    """The registered code's parameters at their defaults (its class's DEFAULTS)."""
    return dict(LINE_CODES[name].DEFAULTS)


# every registered code at its defaults, then parameter sets that change its behaviour
VARIANTS: list[tuple[str, dict[str, object]]] = [(n, default_params(n)) for n in LINE_CODES] + [
    ("nrz", {"stuff_after": 5}),
    ("nrz", {"stuff_after": 3, "stuff_value": "ones"}),
    ("manchester", {"convention": "thomas"}),
    ("pwm", {"short_units": 1, "long_units": 3}),
    ("pwm", {"short_units": 2, "long_units": 3}),
    ("pulse_distance", {"mark_units": 2, "zero_space_units": 4, "one_space_units": 2}),
]


def code(name: str, **params: object) -> LineCode:
    return get_line_code(LineCodeSpec(name, tuple(sorted(params.items()))))


#: the variants whose codes have a fixed chip count per block (2-D encode works)
FIXED = [v for v in VARIANTS if code(v[0], **v[1]).chips_per_block is not None]


def ids(variants: list[tuple[str, dict[str, object]]]) -> list[str]:
    return [f"{n}{'-' + '-'.join(f'{k}={v}' for k, v in p.items()) if p else ''}"
            for n, p in variants]


def max_run(chips: np.ndarray) -> int:
    _, runs = chips_to_runs(chips)
    return int(runs.max()) if runs.size else 0


def bits_strategy(block: int, max_blocks: int = 40) -> st.SearchStrategy[np.ndarray]:
    return st.lists(st.integers(0, 1), min_size=0, max_size=max_blocks * block).map(
        lambda b: np.array(b[: len(b) // block * block], dtype=np.uint8))


def first_chip_of_bits(lc: LineCode, bits: np.ndarray) -> np.ndarray:
    """Chip index where each bit (its block) starts, worked out by counting chips."""
    if lc.chips_per_block is not None:
        k = lc.bits_per_block
        return (np.arange(bits.size) // k) * lc.chips_per_block
    per_bit = lc.mark_units + np.where(bits == 1, lc.one_space_units, lc.zero_space_units)
    return (np.cumsum(per_bit) - per_bit).astype(np.int64)


# -- registry and parameters ------------------------------------------------------------

def test_registry_has_one_code_per_module():
    """Every public module of ookframe/linecodes defines exactly one LineCode subclass and
    it is registered under its own name; the registry holds nothing else (one file plus
    one registry line per code, the package's rule)."""
    import importlib
    import inspect
    import pkgutil

    import ookframe.linecodes as pkg

    found = {}
    for m in pkgutil.iter_modules(pkg.__path__):
        if m.name.startswith("_") or m.name == "base":
            continue
        mod = importlib.import_module(f"ookframe.linecodes.{m.name}")
        own = [c for _, c in inspect.getmembers(mod, inspect.isclass)
               if issubclass(c, LineCode) and c.__module__ == mod.__name__
               and not inspect.isabstract(c)]
        assert len(own) == 1, (m.name, own)
        found[own[0].name] = own[0]
    assert found == LINE_CODES
    for name, cls in LINE_CODES.items():
        assert cls.name == name


@pytest.mark.parametrize("name", list(LINE_CODES))
def test_params_documented_with_defaults(name):
    """Every parameter has a description that states its default (project convention)."""
    cls = LINE_CODES[name]
    assert set(cls.PARAMS) == set(cls.DEFAULTS)
    for key, default in cls.DEFAULTS.items():
        assert f"default {json.dumps(default)}" in cls.PARAMS[key], key
    lc = get_line_code(LineCodeSpec(name))  # defaults alone are valid
    explicit = get_line_code(LineCodeSpec(name, tuple(sorted(cls.DEFAULTS.items()))))
    assert lc.units_per_bit == explicit.units_per_bit
    assert lc.max_run_units == explicit.max_run_units


def test_unknown_line_code_suggests_close_name():
    """Unknown names raise SpecError at line_code.name, list the allowed names, suggest one."""
    with pytest.raises(SpecError) as e:
        code("manchster")
    assert e.value.path == "line_code.name"
    assert "did you mean 'manchester'" in e.value.message
    assert "biphase_mark" in e.value.message


@pytest.mark.parametrize(
    ("name", "params", "path", "words"),
    [
        ("nrz", {"stuff_afer": 5}, "line_code.stuff_afer", ["allowed: stuff_after",
                                                           "did you mean 'stuff_after'"]),
        ("4b6b", {"ratio": 2}, "line_code.ratio", ["allowed: none"]),
        ("nrz", {"stuff_after": 1}, "line_code.stuff_after", ["2..64"]),
        ("nrz", {"stuff_after": 65}, "line_code.stuff_after", ["0..64"]),
        ("nrz", {"stuff_after": -1}, "line_code.stuff_after", ["0..64"]),
        ("nrz", {"stuff_after": True}, "line_code.stuff_after", ["integer"]),
        ("nrz", {"stuff_value": "zeros"}, "line_code.stuff_value", ["'both', 'ones'"]),
        ("manchester", {"convention": "thomson"}, "line_code.convention",
         ["'ieee', 'thomas'", "did you mean 'thomas'"]),
        ("manchester", {"convention": 1}, "line_code.convention", ["'ieee', 'thomas'"]),
        ("pwm", {"short_units": 0}, "line_code.short_units", ["1..63"]),
        ("pwm", {"short_units": "1"}, "line_code.short_units", ["integer"]),
        ("pwm", {"short_units": 2, "long_units": 2}, "line_code.long_units",
         ["greater than short_units (2)"]),
        ("pulse_distance", {"one_space_units": 1}, "line_code.one_space_units",
         ["must differ from zero_space_units (1)"]),
        ("pulse_distance", {"mark_units": 0}, "line_code.mark_units", ["1..64"]),
    ],
)
def test_bad_params(name, params, path, words):
    """Bad parameters raise SpecError naming the key path and the allowed values."""
    with pytest.raises(SpecError) as e:
        code(name, **params)
    assert e.value.path == path
    for w in words:
        assert w in e.value.message


# -- round trips --------------------------------------------------------------------------

@pytest.mark.parametrize(("name", "params"), VARIANTS, ids=ids(VARIANTS))
@settings(max_examples=60, deadline=None)
@given(data=st.data())
def test_round_trip(name, params, data):
    """decode(runs(encode(bits))) has a candidate equal to bits, all valid, with run_index
    pointing at the run of each bit's first chip (runs via ookframe.pulses.chips_to_runs)."""
    lc = code(name, **params)
    bits = data.draw(bits_strategy(lc.bits_per_block))
    chips = lc.encode(bits)
    assert chips.dtype == np.uint8
    levels, units = chips_to_runs(chips)
    cands = lc.decode(levels, units)
    hits = [c for c in cands if np.array_equal(c.bits, bits)]
    assert hits, "no candidate decodes to the input bits"
    hit = hits[0]
    assert hit.valid.all()
    run_ends = np.cumsum(units)
    expected_runs = np.searchsorted(run_ends, first_chip_of_bits(lc, bits), side="right")
    assert np.array_equal(hit.run_index, expected_runs)
    for c in cands:
        assert c.bits.dtype == np.uint8 and c.valid.dtype == bool
        assert c.bits.shape == c.run_index.shape == c.valid.shape


@pytest.mark.parametrize(("name", "params"), VARIANTS, ids=ids(VARIANTS))
def test_candidate_count(name, params):
    """One candidate per possible alignment: one per chip phase for codeword-table and
    transition codes (2 for 2-chip bits, 6 for 6-chip blocks); codes that align on every
    mark (pwm, pulse_distance) give 1."""
    lc = code(name, **params)
    chips = lc.encode(np.ones(8 * lc.bits_per_block, np.uint8))
    n = len(lc.decode(*chips_to_runs(chips)))
    phased = isinstance(lc, BlockCode | TransitionCode)
    assert n == (lc.chips_per_block if phased else 1)


@pytest.mark.parametrize(("name", "params"), FIXED, ids=ids(FIXED))
@settings(max_examples=30, deadline=None)
@given(data=st.data())
def test_2d_encode_equals_rows(name, params, data):
    """2-D (frames x bits) encode equals encoding each row alone."""
    lc = code(name, **params)
    k = lc.bits_per_block
    n_frames = data.draw(st.integers(0, 5))
    n_bits = data.draw(st.integers(0, 12)) * k
    bits = np.array(data.draw(st.lists(st.integers(0, 1), min_size=n_frames * n_bits,
                                       max_size=n_frames * n_bits)), dtype=np.uint8)
    bits = bits.reshape(n_frames, n_bits)
    chips = lc.encode(bits)
    assert chips.shape == (n_frames, n_bits // k * lc.chips_per_block)
    for row, out in zip(bits, chips, strict=True):
        assert np.array_equal(lc.encode(row), out)


def test_pulse_distance_rejects_2d():
    """pulse_distance has a data-dependent chip count: no 2-D encode, chips_per_block None."""
    lc = code("pulse_distance")
    assert lc.chips_per_block is None
    with pytest.raises(ValueError, match="1-D bits only"):
        lc.encode(np.zeros((2, 4), np.uint8))


@pytest.mark.parametrize(("name", "params"), VARIANTS, ids=ids(VARIANTS))
def test_empty_and_bad_input(name, params):
    """Empty runs decode to empty candidates; zero-length runs and non-0/1 bits are rejected."""
    lc = code(name, **params)
    for c in lc.decode(np.zeros(0, np.uint8), np.zeros(0, np.int64)):
        assert c.bits.size == 0
    with pytest.raises(ValueError):
        lc.decode(np.array([1, 0], np.uint8), np.array([1, 0]))
    with pytest.raises(ValueError):
        lc.encode(np.array([0, 2] * lc.bits_per_block, np.uint8))


# -- run lengths and efficiency ----------------------------------------------------------

@pytest.mark.parametrize(("name", "params"), VARIANTS, ids=ids(VARIANTS))
def test_max_run_units_by_brute_force(name, params):
    """max_run_units equals the longest chip run over all bit strings of up to 12 bits
    (3 blocks); an unbounded code (None) makes a 64-bit run from constant data."""
    lc = code(name, **params)
    k = lc.bits_per_block
    longest = 0
    for n in range(k, 13, k):
        for t in itertools.product((0, 1), repeat=n):
            b = lc.stuff(np.array(t, np.uint8))
            longest = max(longest, max_run(lc.encode(b)))
    if lc.max_run_units is None:
        assert max(max_run(lc.encode(lc.stuff(np.full(64, v, np.uint8)))) for v in (0, 1)) >= 64
    else:
        assert longest == lc.max_run_units


@pytest.mark.parametrize(("name", "params"), VARIANTS, ids=ids(VARIANTS))
def test_units_per_bit_matches_chip_count(name, params):
    """units_per_bit is the chips per data bit (pulse_distance: mean of 0 and 1 bits plus
    nothing for the stop mark); efficiency is its inverse."""
    lc = code(name, **params)
    k = lc.bits_per_block
    bits = np.array([0, 1] * (2 * k), np.uint8)  # as many 0s as 1s
    n_chips = lc.encode(bits).size
    if name == "pulse_distance":
        n_chips -= lc.mark_units  # stop mark
    assert n_chips == pytest.approx(bits.size * lc.units_per_bit)
    assert lc.efficiency == pytest.approx(1 / lc.units_per_bit)


# -- Manchester family ----------------------------------------------------------------------

def test_manchester_ieee_802_3():
    """IEEE 802.3 clause 7.3.1.1 (from memory): a bit cell's first half is the complement
    of the bit and the second half the bit, i.e. 0 = high->low, 1 = low->high."""
    lc = code("manchester", convention="ieee")
    assert lc.encode(np.array([1, 0, 1, 0], np.uint8)).tolist() == [0, 1, 1, 0, 0, 1, 1, 0]
    assert lc.encode(np.array([0], np.uint8)).tolist() == [1, 0]
    assert lc.encode(np.array([1], np.uint8)).tolist() == [0, 1]
    assert lc.max_run_units == 2 and lc.units_per_bit == 2.0


def test_manchester_thomas():
    """G. E. Thomas convention (from memory): 0 = low->high, 1 = high->low, the opposite of
    IEEE 802.3; an IEEE stream read with the Thomas table gives the complement bits."""
    thomas = code("manchester", convention="thomas")
    ieee = code("manchester")
    assert thomas.encode(np.array([1, 0, 1, 0], np.uint8)).tolist() == [1, 0, 0, 1, 1, 0, 0, 1]
    bits = np.array([1, 1, 0, 1, 0, 0, 0, 1], np.uint8)
    cand = thomas.decode(*chips_to_runs(ieee.encode(bits)))[0]
    assert np.array_equal(cand.bits, 1 - bits)


def test_manchester_invalid_pair_marked_and_decoding_continues():
    """A chip pair without a mid-bit transition (00, 11) is invalid: bit 0, valid False;
    the bits after it still decode (Manchester rule, common practice, no source)."""
    lc = code("manchester")
    bits = np.array([1, 0, 1, 1, 0, 1], np.uint8)
    chips = lc.encode(bits)
    chips[4:6] = 1  # bit 2 -> "11"
    cand = lc.decode(*chips_to_runs(chips))[0]
    assert cand.valid.tolist() == [True, True, False, True, True, True]
    assert cand.bits.tolist() == [1, 0, 0, 1, 0, 1]


@settings(max_examples=40, deadline=None)
@given(bits=st.lists(st.integers(0, 1), min_size=1, max_size=64))
def test_biphase_mark_transitions(bits):
    """Biphase-mark (FM1, AES3 channel coding, from memory): a level change at every bit
    boundary (the first from the idle space), plus one mid-bit for a 1 and none for a 0."""
    b = np.array(bits, np.uint8)
    chips = code("biphase_mark").encode(b)
    prev = np.concatenate(([0], chips[1::2][:-1]))  # level before each bit (idle = 0)
    assert np.all(chips[0::2] != prev)
    assert np.array_equal(chips[0::2] != chips[1::2], b == 1)


@settings(max_examples=40, deadline=None)
@given(bits=st.lists(st.integers(0, 1), min_size=1, max_size=64))
def test_diff_manchester_transitions(bits):
    """Differential Manchester, IEEE 802.5 convention (from memory): always a mid-bit level
    change; a 0 has one more at the bit start, a 1 has none."""
    b = np.array(bits, np.uint8)
    chips = code("diff_manchester").encode(b)
    prev = np.concatenate(([0], chips[1::2][:-1]))
    assert np.all(chips[0::2] != chips[1::2])
    assert np.array_equal(chips[0::2] != prev, b == 0)


@pytest.mark.parametrize("name", ["diff_manchester", "biphase_mark"])
@settings(max_examples=40, deadline=None)
@given(bits=st.lists(st.integers(0, 1), min_size=2, max_size=64))
def test_transition_codes_ignore_polarity(name, bits):
    """Both differential codes decode from level changes only: the inverted chip stream
    gives the same bits after the first (common practice, no source)."""
    lc = code(name)
    b = np.array(bits, np.uint8)
    cand = lc.decode(*chips_to_runs(1 - lc.encode(b)))[0]
    assert np.array_equal(cand.bits[1:], b[1:])
    assert cand.valid[1:].all()


# -- block code tables ----------------------------------------------------------------------

def all_max_run(words: tuple[int, ...], n_words: int) -> int:
    """Longest run over every concatenation of n_words codewords (brute force)."""
    chips = np.array([[(w >> (5 - i)) & 1 for i in range(6)] for w in words], np.uint8)
    longest = 0
    for combo in itertools.product(range(len(words)), repeat=n_words):
        longest = max(longest, max_run(chips[list(combo)].reshape(-1)))
    return longest


def test_3of6_table_en_13757_4():
    """EN 13757-4:2013 (wireless M-Bus mode T) 3-out-of-6 table, nibble -> code, from
    memory; every code has exactly three 1s and the codes are distinct."""
    expected = [0x16, 0x0D, 0x0E, 0x0B, 0x1C, 0x19, 0x1A, 0x13,
                0x2C, 0x25, 0x26, 0x23, 0x34, 0x31, 0x32, 0x29]
    assert list(CODEWORDS_3OF6) == expected
    assert all(bin(w).count("1") == 3 for w in CODEWORDS_3OF6)
    assert len(set(CODEWORDS_3OF6)) == 16
    lc = code("3of6")
    # byte 0x5A -> nibble 5 then A, each MSB first
    bits = np.array([0, 1, 0, 1, 1, 0, 1, 0], np.uint8)
    assert lc.encode(bits).tolist() == [0, 1, 1, 0, 0, 1, 1, 0, 0, 1, 1, 0]
    assert lc.bits_per_block == 4 and lc.units_per_bit == 1.5


def test_3of6_max_run_from_table():
    """Longest run of the 3-of-6 code computed from the EN 13757-4 table by brute force over
    all concatenations of 2 and 3 codewords equals max_run_units."""
    lc = code("3of6")
    assert all_max_run(CODEWORDS_3OF6, 2) == all_max_run(CODEWORDS_3OF6, 3) == lc.max_run_units
    assert lc.max_run_units == 4


def test_4b6b_is_the_ieee_802_15_7_table():
    """4B6B encodes each nibble with the IEEE Std 802.15.7 (2011) 4B6B encoding table
    (RLL coding of VPPM PHY I, clause 10.5.1 as the source below cites it; the standard's
    table number not confirmed). Table and bit order as read in the open-source
    IEEE 802.15.7 transmitter polhenarejos/flexicom (CTTC), file
    src/layouts/VLC/bb4b6bEnc.cc: the first of 4 input bits is the nibble's most
    significant bit, the 6 output bits are sent in table order, leftmost first.
    Nibble -> codeword: 0 001110, 1 001101, 2 010011, 3 010110, 4 010101, 5 100011,
    6 100110, 7 100101, 8 011001, 9 011010, A 011100, B 110001, C 110010, D 101001,
    E 101010, F 101100."""
    table = {0x0: "001110", 0x1: "001101", 0x2: "010011", 0x3: "010110",
             0x4: "010101", 0x5: "100011", 0x6: "100110", 0x7: "100101",
             0x8: "011001", 0x9: "011010", 0xA: "011100", 0xB: "110001",
             0xC: "110010", 0xD: "101001", 0xE: "101010", 0xF: "101100"}
    lc = code("4b6b")
    for nibble, word in table.items():
        bits = np.array([(nibble >> (3 - i)) & 1 for i in range(4)], np.uint8)
        assert "".join(map(str, lc.encode(bits).tolist())) == word, hex(nibble)
    # a byte is two nibbles, high nibble first: 0x2B -> 010011 110001
    byte = np.array([0, 0, 1, 0, 1, 0, 1, 1], np.uint8)
    assert "".join(map(str, lc.encode(byte).tolist())) == "010011" "110001"
    cand = lc.decode(*chips_to_runs(lc.encode(byte)))[0]
    assert cand.bits.tolist() == byte.tolist() and bool(cand.valid.all())


def test_4b6b_table_weight_and_max_run():
    """4B6B table: 16 distinct weight-3 words (DC balanced), 000111/111000 excluded;
    max_run_units equals the brute-force longest run over 2 and 3 codewords (4 units)."""
    assert len(set(CODEWORDS_4B6B)) == 16
    assert all(bin(w).count("1") == 3 and w < 64 for w in CODEWORDS_4B6B)
    assert 0b000111 not in CODEWORDS_4B6B and 0b111000 not in CODEWORDS_4B6B
    lc = code("4b6b")
    assert all_max_run(CODEWORDS_4B6B, 2) == all_max_run(CODEWORDS_4B6B, 3) == lc.max_run_units
    assert lc.max_run_units == 4


def test_4b6b_word_set_is_the_best_by_runs():
    """Of the 153 ways to take 16 of the 18 weight-3 words left after 000111/111000, the
    IEEE 802.15.7 set (which drops 001011 and 110100) is the only one with the shortest
    longest run over codeword pairs and the fewest ordered pairs reaching it (exhaustive
    search; a property of the set, independent of the nibble assignment)."""
    allowed = [w for w in range(64) if bin(w).count("1") == 3 and w not in (0b000111, 0b111000)]
    assert set(allowed) - set(CODEWORDS_4B6B) == {0b001011, 0b110100}
    chips = {w: [(w >> (5 - i)) & 1 for i in range(6)] for w in allowed}

    def score(words):
        pair_runs = [max_run(np.array(chips[a] + chips[b], np.uint8))
                     for a in words for b in words]
        top = max(pair_runs)
        return top, pair_runs.count(top)

    ours = score(CODEWORDS_4B6B)
    others = [score([w for w in allowed if w not in drop])
              for drop in itertools.combinations(allowed, 2)
              if set(drop) != set(allowed) - set(CODEWORDS_4B6B)]
    assert len(others) == 152
    assert all(s > ours for s in others)


def test_block_code_invalid_codeword():
    """A 6-chip word outside the table decodes as 4 invalid 0 bits; the next block still
    decodes (table lookup, common practice, no source)."""
    for name in ("4b6b", "3of6"):
        lc = code(name)
        bits = np.array([1, 0, 1, 1, 0, 1, 1, 0, 0, 0, 1, 1], np.uint8)
        chips = lc.encode(bits)
        chips[6:12] = [0, 0, 0, 1, 1, 1]
        cand = lc.decode(*chips_to_runs(chips))[0]
        assert cand.valid.tolist() == [True] * 4 + [False] * 4 + [True] * 4
        assert cand.bits.tolist() == [1, 0, 1, 1, 0, 0, 0, 0, 0, 0, 1, 1]


# -- pulse-width / pulse-distance ----------------------------------------------------------

def test_pwm_chips_and_period():
    """PWM: fixed period short+long; 0 = short mark + long space, 1 = long mark + short
    space (pulse-width coding, common practice, no source)."""
    lc = code("pwm", short_units=1, long_units=3)
    assert lc.encode(np.array([0, 1], np.uint8)).tolist() == [1, 0, 0, 0, 1, 1, 1, 0]
    assert lc.units_per_bit == 4.0 and lc.max_run_units == 3


def test_pwm_decode_tolerates_last_space_and_flags_bad_marks():
    """The space after the last mark runs into the gap and is not checked; a mark of neither
    length gives an invalid 0 bit."""
    lc = code("pwm", short_units=1, long_units=3)
    levels = np.array([1, 0, 1, 0, 1, 0, 1, 0], np.uint8)
    units = np.array([3, 1, 2, 2, 1, 3, 3, 40])
    cand = lc.decode(levels, units)[0]
    assert cand.bits.tolist() == [1, 0, 0, 1]
    assert cand.valid.tolist() == [True, False, True, True]
    assert cand.run_index.tolist() == [0, 2, 4, 6]


def test_pulse_distance_chips_and_stop_mark():
    """Pulse distance: fixed mark then a 1- or 3-unit space; the chips end with a stop mark
    so the last space is bounded (pulse-distance coding, common practice, no source)."""
    lc = code("pulse_distance")
    assert lc.encode(np.array([0, 1], np.uint8)).tolist() == [1, 0, 1, 0, 0, 0, 1]
    assert lc.units_per_bit == 3.0 and lc.max_run_units == 3
    cand = lc.decode(np.array([0, 1, 0, 1, 0, 1, 0], np.uint8), np.array([9, 1, 3, 1, 2, 1, 50]))[0]
    assert cand.run_index.tolist() == [1, 3, 5]
    assert cand.bits.tolist() == [1, 0, 0]
    assert cand.valid.tolist() == [True, False, False]


# -- bit stuffing ---------------------------------------------------------------------------

def reference_stuff(bits: list[int], n: int, value: str) -> list[int]:
    """Bit-serial stuffing written straight from the rule (ISO/IEC 13239 zero-bit insertion,
    generalised to both values for "both")."""
    out: list[int] = []
    run_value, run = -1, 0
    for b in bits:
        out.append(b)
        if value == "ones":
            run = run + 1 if b == 1 else 0
            if run == n:
                out.append(0)
                run = 0
        else:
            run = run + 1 if b == run_value else 1
            run_value = b
            if run == n:
                out.append(1 - b)
                run_value, run = 1 - b, 1
    return out


def test_hdlc_zero_bit_insertion_example():
    """ISO/IEC 13239 (HDLC) zero-bit insertion, N = 5, from memory: a 0 follows every five
    consecutive 1s, so the flag pattern 01111110 as data is sent as 011111010."""
    lc = code("nrz", stuff_after=5, stuff_value="ones")
    assert lc.stuff(np.array([0, 1, 1, 1, 1, 1, 1, 0], np.uint8)).tolist() == \
        [0, 1, 1, 1, 1, 1, 0, 1, 0]
    assert lc.stuff(np.ones(10, np.uint8)).tolist() == [1] * 5 + [0] + [1] * 5 + [0]
    assert lc.stuff(np.zeros(10, np.uint8)).tolist() == [0] * 10


@pytest.mark.parametrize("value", ["both", "ones"])
@pytest.mark.parametrize("n", [2, 3, 5, 8])
@settings(max_examples=40, deadline=None)
@given(bits=st.lists(st.integers(0, 1), max_size=120), tail=st.lists(st.integers(0, 1),
                                                                     max_size=40))
def test_stuffing_round_trip_and_bound(n, value, bits, tail):
    """unstuff(stuff(b)) == b, also with more received bits after the frame; the stuffed
    stream matches a bit-serial reference of the rule and its runs stay within N."""
    lc = code("nrz", stuff_after=n, stuff_value=value)
    b = np.array(bits, np.uint8)
    s = lc.stuff(b)
    assert s.tolist() == reference_stuff(bits, n, value)
    assert np.array_equal(lc.unstuff(s), b)
    longer = lc.unstuff(np.concatenate((s, np.array(tail, np.uint8))))
    assert np.array_equal(longer[: b.size], b)
    levels, runs = chips_to_runs(lc.encode(s))
    bounded = runs if value == "both" else runs[levels == 1]
    assert bounded.size == 0 or bounded.max() <= n
    assert s.size - b.size <= lc.max_stuffed_bits(b.size)


@pytest.mark.parametrize("value", ["both", "ones"])
@pytest.mark.parametrize("n", [2, 3, 4])
def test_max_stuffed_bits_is_exact(n, value):
    """max_stuffed_bits(L) is the largest growth over all L-bit inputs (exhaustive, L <= 12)."""
    lc = code("nrz", stuff_after=n, stuff_value=value)
    for length in range(13):
        worst = max(lc.stuff(np.array(t, np.uint8)).size - length
                    for t in itertools.product((0, 1), repeat=length))
        assert worst == lc.max_stuffed_bits(length)


def test_no_stuffing_is_identity():
    """Without stuff_after, stuff/unstuff return the bits unchanged and runs are unbounded."""
    lc = code("nrz")
    b = np.array([1] * 20 + [0] * 20, np.uint8)
    assert np.array_equal(lc.stuff(b), b) and np.array_equal(lc.unstuff(b), b)
    assert lc.max_run_units is None and lc.max_stuffed_bits(40) == 0
    assert code("manchester").max_stuffed_bits(40) == 0


BLOCK_CODES = [name for name, cls in sorted(LINE_CODES.items()) if issubclass(cls, BlockCode)]


@pytest.mark.parametrize("name", BLOCK_CODES)
def test_block_encode_equals_codeword_by_codeword(name):
    """Every block code of the registry: ``encode`` of 1-D and 2-D bits (rows of several
    lengths, empty ones included) equals the codewords written out block by block in
    Python (data block MSB first, codeword chips MSB first, as the class docstring says)."""
    lc = LINE_CODES[name](LineCodeSpec(name=name))
    k, n = lc.DATA_BITS, lc.CODE_CHIPS
    rng = np.random.default_rng(11)
    for shape in ((0,), (k,), (k * 9,), (5, k * 7), (3, 0), (40, k * 33)):
        bits = rng.integers(0, 2, shape).astype(np.uint8)
        rows = bits.reshape(int(np.prod(shape[:-1])), shape[-1])
        want = [[int(c) for i in range(0, row.size, k)
                 for c in format(lc.codewords[int("".join(map(str, row[i:i + k])), 2)],
                                 f"0{n}b")] for row in rows]
        got = lc.encode(bits)
        assert got.dtype == np.uint8
        assert got.shape == (*shape[:-1], shape[-1] // k * n)
        assert got.reshape(rows.shape[0], shape[-1] // k * n).tolist() == want
