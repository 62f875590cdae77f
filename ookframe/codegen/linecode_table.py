"""Line code -> run tables for the C transmitter, read off the Python line code itself.

The generated C does not re-implement each line code: it replays, per data block of
``bits_per_block`` bits, the chip runs the Python module produces for that block. The
table is probed from ``LineCode.encode`` and accepted only when the code is provably
blockwise, either memoryless (chips(u + v) = chips(u) + chips(v)) or differential
(the chips of a block are inverted when the previous chip was a mark, as in
differential Manchester and biphase-mark), with an optional fixed trailer (the stop
mark of pulse-distance coding). Stuffing (NRZ) is described by its parameters.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..errors import CodegenError
from ..linecodes import LineCode
from ..plan import FramePlan, as_plan
from ..pulses import chips_to_runs
from ..spec.model import FrameSpec

#: runs of one code word longer than this would make the C tables unreasonable
MAX_RUNS_PER_WORD = 32


@dataclass(frozen=True)
class Word:
    """The chips of one code word as runs: level of the first run, then run lengths."""

    first_level: int
    runs_units: tuple[int, ...]

    @property
    def last_level(self) -> int:
        """Level of the last run."""
        return self.first_level ^ ((len(self.runs_units) - 1) & 1)


@dataclass(frozen=True)
class CodeTable:
    """Run table of a line code (see module docstring)."""

    name: str
    bits_per_block: int
    words: tuple[Word, ...]  # index = block value, first bit = most significant
    trailer: Word | None
    differential: bool
    stuff_after: int  # 0 = no stuffing
    stuff_value: str  # "both" | "ones"

    @property
    def max_runs(self) -> int:
        """Most runs in one code word."""
        return max(len(w.runs_units) for w in self.words)

    @property
    def run_lengths(self) -> list[int]:
        """Every distinct run length (units) in the words and trailer."""
        words = [*self.words, *([self.trailer] if self.trailer else [])]
        return sorted({u for w in words for u in w.runs_units})

    @property
    def has_constant_word(self) -> bool:
        """True when some code word is a single run (so runs can chain across words)."""
        return any(len(w.runs_units) == 1 for w in self.words)


def _word(chips: np.ndarray) -> Word:
    levels, runs = chips_to_runs(chips)
    return Word(int(levels[0]), tuple(int(r) for r in runs))


def _chips(lc: LineCode, bits: list[int]) -> np.ndarray:
    return np.asarray(lc.encode(np.asarray(bits, dtype=np.uint8)), dtype=np.uint8).ravel()


def code_table(spec: FrameSpec | FramePlan) -> CodeTable:
    """Return the run table of ``spec``'s line code; CodegenError when it is not blockwise."""
    plan = as_plan(spec)
    lc = plan.line_code
    name = plan.spec.line_code.name
    k = lc.bits_per_block
    if not 1 <= k <= 8:
        raise CodegenError(f"line code {name!r}: {k} bits per block; the C generator handles 1..8")
    blocks = [[(v >> (k - 1 - i)) & 1 for i in range(k)] for v in range(1 << k)]
    trailer = _chips(lc, [])
    words: list[np.ndarray] = []
    for b in blocks:
        c = _chips(lc, b)
        if c.size <= trailer.size or not np.array_equal(c[c.size - trailer.size:], trailer):
            raise CodegenError(f"line code {name!r} is not blockwise (block {b} does not end "
                               "with the code's trailer); the C generator cannot replay it")
        words.append(c[:c.size - trailer.size])

    def joined(seq: tuple[int, ...], differential: bool) -> np.ndarray:
        parts, state = [], 0
        for v in seq:
            w = words[v] ^ state if differential else words[v]
            parts.append(w)
            state = int(w[-1])
        parts.append(trailer ^ state if differential else trailer)
        return np.concatenate(parts)

    probes = list(itertools.product(range(1 << k), repeat=2))
    probes += list(itertools.product(range(min(1 << k, 4)), repeat=3))
    kinds = []
    for differential in (False, True):
        if all(np.array_equal(_chips(lc, [b for v in seq for b in blocks[v]]),
                              joined(seq, differential)) for seq in probes):
            kinds.append(differential)
    if not kinds:
        raise CodegenError(f"line code {name!r} is neither memoryless nor differential per "
                           "block; the C generator cannot replay it")
    table_words = tuple(_word(w) for w in words)
    if max(len(w.runs_units) for w in table_words) > MAX_RUNS_PER_WORD:
        raise CodegenError(f"line code {name!r}: a code word has more than {MAX_RUNS_PER_WORD} runs")
    if max(u for w in table_words for u in w.runs_units) > 255:
        raise CodegenError(f"line code {name!r}: a run longer than 255 units")
    stuff_after = int(getattr(lc, "stuff_after", 0) or 0)
    stuff_value = str(getattr(lc, "stuff_value", "both"))
    if type(lc).stuff is not LineCode.stuff and not stuff_after and _stuffs(lc):
        raise CodegenError(f"line code {name!r} stuffs bits in a way the C generator does not know")
    if stuff_after and (k != 1 or stuff_value not in ("both", "ones")):
        raise CodegenError(f"line code {name!r}: bit stuffing {stuff_value!r} with {k}-bit blocks "
                           "is not supported by the C generator")
    return CodeTable(name, k, table_words, _word(trailer) if trailer.size else None,
                     differential=kinds[0], stuff_after=stuff_after, stuff_value=stuff_value)


def _stuffs(lc: LineCode) -> bool:
    probe = np.array([1] * 70 + [0] * 70, dtype=np.uint8)
    return not np.array_equal(lc.stuff(probe), probe)
