"""Tests for ookframe.analysis.linecode_stats (exact worst cases over all payloads)."""

from __future__ import annotations

import itertools
import tomllib
from fractions import Fraction

import numpy as np
import pytest

import ookframe
from ookframe.analysis.linecode_stats import chip_machine, chip_stats, frame_stats, stuffer
from ookframe.frame import frame_chips
from ookframe.linecodes import LINE_CODES, LineCode, get_line_code
from ookframe.pulses import chips_to_runs
from ookframe.spec.model import LineCodeSpec

CODES = [(name, ()) for name in LINE_CODES] + [
    ("nrz", (("stuff_after", 3),)),
    ("nrz", (("stuff_after", 4), ("stuff_value", "ones"))),
    ("manchester", (("convention", "thomas"),)),
    ("pwm", (("long_units", 3), ("short_units", 1))),
    ("pulse_distance", (("mark_units", 2), ("one_space_units", 4), ("zero_space_units", 1))),
]


def _brute(lc: LineCode, head: list[int], lengths: list[int]):
    """Every payload of every length through the line code's own stuff() and encode()."""
    runs, fractions, tpb, chips_max, marks_max = 0, [], [], 0, 0
    n_head = lc.encode(np.array(head, np.uint8)).size - lc.encode(np.zeros(0, np.uint8)).size
    for n in lengths:
        for body in itertools.product((0, 1), repeat=n):
            bits = np.concatenate((np.array(head, np.uint8), lc.stuff(np.array(body, np.uint8))))
            chips = lc.encode(bits)
            runs = max(runs, int(chips_to_runs(chips)[1].max()))
            fractions.append(Fraction(int(chips.sum()), chips.size))
            tail = chips[max(n_head - 1, 0):]
            tpb.append(Fraction(int((tail[1:] != tail[:-1]).sum()), n))
            chips_max, marks_max = max(chips_max, chips.size), max(marks_max, int(chips.sum()))
    return runs, (float(min(fractions)), float(max(fractions))), float(min(tpb)), chips_max, \
        marks_max


@pytest.mark.parametrize("name,params", CODES, ids=[f"{n}{p}" for n, p in CODES])
def test_dp_equals_enumeration_of_all_payloads(name, params):
    """DP over the frame equals enumerating every payload (two payload lengths) through
    the line code's own encode/stuff, for every registered code."""
    lc = get_line_code(LineCodeSpec(name, params))
    k = lc.bits_per_block
    head = [1, 0, 1, 0, 1, 1, 0, 0, 0, 1, 1, 1][:12 - 12 % k] if k > 1 else [1, 0, 1, 1, 0, 0, 0]
    lengths = [k * (6 // k), k * (10 // k)] if k > 1 else [6, 10]
    s = chip_stats(lc, head, lengths)
    got = (s.max_run_units, s.mark_fraction, s.min_transitions_per_bit, s.max_frame_chips,
           s.max_mark_chips)
    assert got == _brute(lc, head, lengths)


def test_textbook_figures():
    """Manchester (IEEE 802.3 clause 7.3.1.1 convention): runs <= 2, exactly half marks,
    >= 1 transition per bit; NRZ unbounded runs, 0..1 marks; 4B6B weight-3 words: half
    marks (common practice, no source)."""
    m = chip_stats(get_line_code(LineCodeSpec("manchester")), [], [16])
    assert (m.max_run_units, m.mark_fraction, m.min_transitions_per_bit) == (2, (0.5, 0.5), 1.0)
    n = chip_stats(get_line_code(LineCodeSpec("nrz")), [], [16])
    assert (n.max_run_units, n.mark_fraction, n.min_transitions_per_bit) == (16, (0.0, 1.0), 0.0)
    b = chip_stats(get_line_code(LineCodeSpec("4b6b")), [], [16])
    assert b.mark_fraction == (0.5, 0.5)
    assert b.max_run_units == get_line_code(LineCodeSpec("4b6b")).max_run_units


def test_stuffer_matches_line_code():
    """The stuffing machine reproduces the NRZ stuff() (ISO/IEC 13239 style) on random bits."""
    rng = np.random.default_rng(2)
    for params in ((("stuff_after", 2),), (("stuff_after", 5), ("stuff_value", "ones"))):
        lc = get_line_code(LineCodeSpec("nrz", params))
        st = stuffer(lc)
        assert st is not None
        for _ in range(20):
            bits = rng.integers(0, 2, 300, dtype=np.uint8)
            assert st.stuff(bits.tolist()) == tuple(int(x) for x in lc.stuff(bits))
    assert stuffer(get_line_code(LineCodeSpec("manchester"))) is None


def test_machine_rejects_unmodelled_code():
    """A code whose chips depend on the previous *bit* (not level, not stateless) is refused."""

    class PrevBit(LineCode):
        name = "prev_bit"

        @property
        def units_per_bit(self) -> float:
            return 2.0

        @property
        def max_run_units(self) -> int | None:
            return None

        def encode(self, bits):
            b = np.asarray(bits, np.uint8)
            prev = np.concatenate(([0], b))[:-1].astype(np.uint8)
            return np.stack((b, prev), axis=-1).reshape(-1)

        def decode(self, levels, units):
            return []

    with pytest.raises(ValueError, match="neither"):
        chip_machine(PrevBit(LineCodeSpec("prev_bit")))


SPEC = """
[frame]
name = "probe"
unit_us = 500
[line_code]
name = "{code}"
[preamble]
pattern = 0xA
pattern_bits = 4
count = 1
[sync]
value = 0x2D
length_bits = 8
[[fields]]
name = "a"
width_bits = 6
default = 0
[[fields]]
name = "b"
width_bits = 4
default = 0
{extra}
"""


def _spec(code: str, extra: str = "") -> ookframe.FrameSpec:
    return ookframe.spec_from_dict(tomllib.loads(SPEC.format(code=code, extra=extra)))


#: registered codes of one bit per block (the 10-bit fields of SPEC fit no 4-bit blocks)
BIT_CODES = [n for n in LINE_CODES if get_line_code(LineCodeSpec(n)).bits_per_block == 1]


@pytest.mark.parametrize("code", BIT_CODES)
def test_frame_stats_exact_through_the_encoder(code):
    """No check: figures are exact and equal the enumeration of all 1024 field values
    through ookframe.frame.frame_chips, with PN9 whitening on (a bijection on free bits)."""
    spec = _spec(code, '[whitening]\nkind = "pn9"\ncovers = ["fields"]')
    s = frame_stats(spec)
    assert s.exact
    runs, fr, chips_max = 0, [], 0
    for a in range(64):
        for b in range(16):
            chips = frame_chips(spec, {"a": a, "b": b})
            runs = max(runs, int(chips_to_runs(chips)[1].max()))
            fr.append(Fraction(int(chips.sum()), chips.size))
            chips_max = max(chips_max, chips.size)
    assert (s.max_run_units, s.mark_fraction, s.max_frame_chips) == \
        (runs, (float(min(fr)), float(max(fr))), chips_max)


def test_frame_stats_bound_with_check():
    """With a CRC the check bits are bounded as free: the figures enclose every real frame
    and the output says so."""
    spec = _spec("nrz", '[check]\nkind = "crc"\nmodel = "CRC-8/SMBUS"')
    s = frame_stats(spec)
    assert not s.exact and any("check" in b for b in s.bounded)
    rng = np.random.default_rng(4)
    for _ in range(300):
        chips = frame_chips(spec, {"a": int(rng.integers(64)), "b": int(rng.integers(16))})
        assert int(chips_to_runs(chips)[1].max()) <= s.max_run_units
        assert s.mark_fraction[0] <= chips.mean() <= s.mark_fraction[1]
