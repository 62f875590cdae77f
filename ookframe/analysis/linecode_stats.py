"""Exact worst cases of a frame's chips over ALL payloads, by dynamic programming.

The frame is a sequence of bit positions: the preamble and sync bits are fixed, every bit
after the sync is free (either value). The line code is modelled as a small machine
(:class:`ChipMachine`), found by probing its ``encode`` and verified on all block pairs:

* stateless: each data block always gives the same chips (NRZ, Manchester, PWM, 4B6B,
  3-of-6, pulse-distance; a constant suffix such as pulse-distance's stop mark allowed);
* level state: a block's chips are XORed with the level of the previous chip
  (differential Manchester, biphase-mark).

NRZ bit stuffing is a second small machine on the bits after the sync word (run state
of the stuffed stream), verified against the line code's own ``stuff`` on random input.

What is exact and what is bounded: field bits take every value, and whitening XORs a
known sequence onto free bits (a bijection), so it changes nothing. The check bits depend
on the payload and a length field may take only 0..max_len_bytes; both are treated as
free bits here, so the figures are bounds (worst cases at least as bad as any real
frame) whenever ``bounded`` is not empty. Variable-length frames are covered for every
payload length.

Figures: ``max_run_units`` (longest run of equal chips inside the frame), mark fraction
[min, max] (marks / chips of the whole frame; ratios optimised exactly by Dinkelbach's
method over the DP), ``min_transitions_per_bit`` (level changes from the last sync chip
to the end of the frame, per data bit after the sync), and the chip / mark counts of the
longest frame (for airtime and energy).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

import numpy as np

from ..linecodes import LineCode
from ..plan import FramePlan, as_plan
from ..pulses import chips_to_runs
from ..spec.model import FrameSpec

Chips = tuple[int, ...]


@dataclass(frozen=True)
class ChipMachine:
    """A line code as a machine: ``chips[state][value]`` -> (chips, next state).

    ``block_bits`` data bits per step (value MSB first), ``suffix`` chips after the last
    block; state 0 is the state before the first block.
    """

    block_bits: int
    table: tuple[tuple[tuple[Chips, int], ...], ...]
    suffix: Chips = ()

    def encode(self, bits: Sequence[int]) -> Chips:
        """Return the chips of ``bits`` through the machine (reference for tests)."""
        out: list[int] = []
        state = 0
        k = self.block_bits
        for i in range(0, len(bits), k):
            v = int("".join(str(int(b)) for b in bits[i:i + k]), 2)
            chips, state = self.table[state][v]
            out += chips
        return tuple(out) + self.suffix


def _encode(lc: LineCode, bits: Sequence[int]) -> Chips:
    return tuple(int(c) for c in lc.encode(np.array(bits, dtype=np.uint8)))


def _block(v: int, k: int) -> list[int]:
    return [(v >> (k - 1 - i)) & 1 for i in range(k)]


def chip_machine(lc: LineCode) -> ChipMachine:
    """Return the :class:`ChipMachine` of a line code (ValueError if it fits no model)."""
    k = lc.bits_per_block
    suffix = _encode(lc, [])
    body = []
    for v in range(1 << k):
        c = _encode(lc, _block(v, k))
        if c[len(c) - len(suffix):] != suffix:
            raise ValueError(f"{lc.name}: chips do not end with the constant suffix")
        body.append(c[:len(c) - len(suffix)])
    pairs = [(u, v) for u in range(1 << k) for v in range(1 << k)]

    def joined(u: int, v: int) -> Chips:
        return _encode(lc, _block(u, k) + _block(v, k))

    if all(joined(u, v) == body[u] + body[v] + suffix for u, v in pairs):
        row = tuple((body[v], 0) for v in range(1 << k))
        return ChipMachine(k, (row,), suffix)
    if not suffix and all(joined(u, v) == body[u] + tuple(c ^ body[u][-1] for c in body[v])
                          for u, v in pairs):
        table = tuple(
            tuple((tuple(c ^ level for c in body[v]), body[v][-1] ^ level) for v in range(1 << k))
            for level in (0, 1))
        return ChipMachine(k, table, suffix)
    raise ValueError(f"line code {lc.name!r} is neither stateless nor level-state")


@dataclass(frozen=True)
class Stuffer:
    """Bit stuffing as a machine: state -> bit -> (bits sent, next state)."""

    table: tuple[tuple[tuple[tuple[int, ...], int], ...], ...]

    def stuff(self, bits: Sequence[int]) -> tuple[int, ...]:
        out: list[int] = []
        s = 0
        for b in bits:
            sent, s = self.table[s][int(b)]
            out += sent
        return tuple(out)


def stuffer(lc: LineCode) -> Stuffer | None:
    """Return the bit-stuffing machine of the line code, None when it does not stuff.

    Built from the NRZ parameters (``stuff_after``, ``stuff_value``); verified against
    ``lc.stuff`` on random bits (ValueError on a mismatch).
    """
    rng = np.random.default_rng(1)
    probe = [rng.integers(0, 2, 200, dtype=np.uint8), np.zeros(40, np.uint8),
             np.ones(40, np.uint8)]
    if all(np.array_equal(lc.stuff(p), p) for p in probe):
        return None
    n = int(getattr(lc, "stuff_after", 0))
    mode = getattr(lc, "stuff_value", "")
    rows: list[tuple[tuple[tuple[int, ...], int], ...]] = []
    if mode == "both":
        # state = (last bit, run length 1..n) -> index; 0 = nothing sent yet
        def idx(last: int, run: int) -> int:
            return 1 + last * n + (run - 1)

        states = [(None, 0)] + [(b, r) for b in (0, 1) for r in range(1, n + 1)]
        for last, run in states:
            row = []
            for b in (0, 1):
                r = run + 1 if b == last else 1
                if r == n:
                    row.append(((b, 1 - b), idx(1 - b, 1)))
                else:
                    row.append(((b,), idx(b, r)))
            rows.append(tuple(row))
    elif mode == "ones":
        for ones in range(n):
            zero = ((0,), 0)
            one = ((1, 0), 0) if ones + 1 == n else ((1,), ones + 1)
            rows.append((zero, one))
    else:
        raise ValueError(f"{lc.name}: unknown stuffing rule {mode!r}")
    st = Stuffer(tuple(rows))
    for p in probe:
        if st.stuff(p.tolist()) != tuple(int(x) for x in lc.stuff(p)):
            raise ValueError(f"{lc.name}: stuffing machine does not match the line code")
    return st


# -- the frame as positions ----------------------------------------------------------------

@dataclass(frozen=True)
class _Step:
    """One machine step: allowed block values; stuffed (body) or not; data bits it carries."""

    values: tuple[int, ...]
    body: bool
    end_ok: bool  # a frame may end after this step


@dataclass(frozen=True)
class _Arc:
    chips: Chips
    state: tuple[int, int]


def _arcs(machine: ChipMachine, stuff: Stuffer | None, state: tuple[int, int], v: int,
          body: bool) -> _Arc:
    """Chips and next (machine, stuffer) state for block value v from ``state``."""
    m, t = state
    if body and stuff is not None:  # stuffing only with 1-bit blocks (NRZ)
        sent, t = stuff.table[t][v]
        out: Chips = ()
        for b in sent:
            c, m = machine.table[m][b]
            out += c
        return _Arc(out, (m, t))
    c, m = machine.table[m][v]
    return _Arc(c, (m, t))


@lru_cache(maxsize=4096)
def _runs_of(chips: Chips) -> list[int]:
    """Run lengths of a (non-empty) chip tuple."""
    return chips_to_runs(np.array(chips, np.uint8))[1].tolist()


def _max_run(machine: ChipMachine, stuff: Stuffer | None, steps: Sequence[_Step]) -> int:
    """Longest run of equal chips over every allowed frame."""
    # (machine, stuffer, level of the trailing run) -> longest trailing run
    cur: dict[tuple[int, int, int], int] = {(0, 0, -1): 0}
    best = 0

    def close(level: int, trail: int, chips: Chips) -> tuple[int, int, int]:
        """(new level, new trailing run, longest run finished inside) after ``chips``."""
        if not chips:
            return level, trail, 0
        runs = _runs_of(chips)
        first = runs[0] + (trail if chips[0] == level else 0)
        if len(runs) == 1:
            return chips[-1], first, 0 if chips[0] == level else trail
        done = max([first] + runs[1:-1] + ([] if chips[0] == level else [trail]))
        return chips[-1], runs[-1], done

    for i, step in enumerate(steps):
        nxt: dict[tuple[int, int, int], int] = {}
        for (m, t, level), trail in cur.items():
            for v in step.values:
                arc = _arcs(machine, stuff, (m, t), v, step.body)
                lv, tr, done = close(level, trail, arc.chips)
                best = max(best, done, tr)
                key = (*arc.state, lv)
                if nxt.get(key, -1) < tr:
                    nxt[key] = tr
        cur = nxt
        if step.end_ok or i == len(steps) - 1:
            for (_, _, level), trail in cur.items():
                _, tr, done = close(level, trail, machine.suffix)
                best = max(best, tr, done)
    return best


# counts carried by a path: marks, chips, body transitions, body data bits
_Counts = tuple[int, int, int, int]


def _best_linear(machine: ChipMachine, stuff: Stuffer | None, steps: Sequence[_Step],
                 weight: Callable[[_Counts], Fraction | int]) -> _Counts:
    """Counts of an allowed frame maximising ``weight(counts)`` (weight must be linear)."""
    zero: _Counts = (0, 0, 0, 0)
    cur: dict[tuple[int, int, int], _Counts] = {(0, 0, -1): zero}
    ends: list[_Counts] = []

    def add(c: _Counts, level: int, chips: Chips, body: bool, bits: int) -> tuple[_Counts, int]:
        marks, n, tr, nb = c
        changes = 0
        prev = level
        for x in chips:
            if prev != -1 and x != prev:
                changes += 1
            prev = x
        return (marks + sum(chips), n + len(chips), tr + (changes if body else 0),
                nb + (bits if body else 0)), prev

    for i, step in enumerate(steps):
        nxt: dict[tuple[int, int, int], _Counts] = {}
        for (m, t, level), c in cur.items():
            for v in step.values:
                arc = _arcs(machine, stuff, (m, t), v, step.body)
                nc, lv = add(c, level, arc.chips, step.body, machine.block_bits)
                key = (*arc.state, lv)
                if key not in nxt or weight(nc) > weight(nxt[key]):
                    nxt[key] = nc
        cur = nxt
        if step.end_ok or i == len(steps) - 1:
            for (_, _, level), c in cur.items():
                ends.append(add(c, level, machine.suffix, True, 0)[0])
    return max(ends, key=weight)


def _ratio(machine: ChipMachine, stuff: Stuffer | None, steps: Sequence[_Step],
           num: Callable[[_Counts], int], den: Callable[[_Counts], int], maximise: bool
           ) -> Fraction:
    """Exact max (or min) of num/den over allowed frames (Dinkelbach iteration)."""
    sign = 1 if maximise else -1
    r = Fraction(0)
    first = True
    while True:
        c = _best_linear(machine, stuff, steps,
                         lambda x, r=r: sign * (num(x) - r * den(x)))  # type: ignore[misc]
        if den(c) == 0:
            return Fraction(0)
        new = Fraction(num(c), den(c))
        if not first and new == r:
            return r
        first = False
        r = new


@dataclass(frozen=True)
class LineCodeStats:
    """Worst cases of a frame's chips over all payloads (see the module docstring).

    bounded: which payload-dependent bits were treated as free (empty: exact).
    """

    line_code: str
    efficiency: float
    max_run_units: int
    mark_fraction: tuple[float, float]
    min_transitions_per_bit: float
    max_frame_chips: int
    max_mark_chips: int
    bounded: tuple[str, ...]

    @property
    def exact(self) -> bool:
        return not self.bounded

    def as_dict(self) -> dict[str, object]:
        return {"name": self.line_code, "efficiency": self.efficiency,
                "max_run_units": self.max_run_units,
                "mark_fraction": list(self.mark_fraction),
                "min_transitions_per_bit": self.min_transitions_per_bit,
                "max_frame_chips": self.max_frame_chips, "max_mark_chips": self.max_mark_chips,
                "exact": self.exact, "bounded": list(self.bounded)}


def _steps(head: Sequence[int], body_lengths: Sequence[int], k: int) -> list[_Step]:
    """Steps of the frame: fixed head bits, then free bits up to the longest body; a frame
    may end after any body length in ``body_lengths``."""
    bits: list[int | None] = [int(b) for b in head] + [None] * max(body_lengths)
    n_head = len(head)
    ends = {n_head + b for b in body_lengths}
    steps = []
    for i in range(0, len(bits), k):
        chunk = bits[i:i + k]
        vals = [v for v in range(1 << k)
                if all(b is None or b == x for b, x in zip(chunk, _block(v, k), strict=True))]
        steps.append(_Step(tuple(vals), body=i >= n_head, end_ok=(i + k) in ends))
    return steps


def chip_stats(lc: LineCode, head_bits: Sequence[int], body_lengths: Sequence[int],
               bounded: tuple[str, ...] = ()) -> LineCodeStats:
    """Return the :class:`LineCodeStats` of frames ``head_bits`` + free bits, the free part
    being any of ``body_lengths`` bits long (after bit stuffing, if the code stuffs).

    Head and every body length must be whole line-code blocks.
    """
    k = lc.bits_per_block
    if len(head_bits) % k or any(b % k for b in body_lengths) or not body_lengths:
        raise ValueError(f"{lc.name}: head and body lengths must be multiples of {k} bits")
    machine = chip_machine(lc)
    stuff = stuffer(lc)
    steps = _steps(head_bits, body_lengths, k)
    run = _max_run(machine, stuff, steps)

    def marks(c: _Counts) -> int:
        return c[0]

    def chips(c: _Counts) -> int:
        return c[1]

    def trans(c: _Counts) -> int:
        return c[2]

    def nbits(c: _Counts) -> int:
        return c[3]

    hi = _ratio(machine, stuff, steps, marks, chips, True)
    lo = _ratio(machine, stuff, steps, marks, chips, False)
    if max(body_lengths) > 0:
        tpb = _ratio(machine, stuff, steps, trans, nbits, False)
    else:
        tpb = Fraction(0)
    longest = _best_linear(machine, stuff, steps, chips)
    most_marks = _best_linear(machine, stuff, steps, marks)
    return LineCodeStats(line_code=lc.name, efficiency=lc.efficiency, max_run_units=run,
                         mark_fraction=(float(lo), float(hi)),
                         min_transitions_per_bit=float(tpb), max_frame_chips=longest[1],
                         max_mark_chips=most_marks[0], bounded=bounded)


def frame_stats(spec: FrameSpec | FramePlan) -> LineCodeStats:
    """Return the :class:`LineCodeStats` of the spec's frames over all payloads."""
    plan = as_plan(spec)
    spec = plan.spec
    lc = plan.line_code
    head = plan.head_bits.tolist()
    lengths = list(range(plan.min_body_bits, plan.max_body_bits + 1, 8))
    bounded: list[str] = []
    if spec.check.kind != "none":
        bounded.append("check bits taken as free bits")
    if spec.length_field is not None:
        bounded.append("length field taken as free bits")
    return chip_stats(lc, head, lengths, tuple(bounded))
