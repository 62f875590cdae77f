"""NRZ: one chip per bit, 1 -> mark, with optional HDLC-style bit stuffing (ISO/IEC 13239).

Bit stuffing (``stuff_after = N``, N >= 2; 0 = off) looks at the stuffed stream as sent:

- ``stuff_value = "both"`` (default, a generalisation of HDLC): after N equal bits of
  either value, the complement is inserted, so no run on air exceeds N chips. The inserted
  bit counts towards the next run (it is a bit on air like any other).
- ``stuff_value = "ones"`` (the HDLC rule of ISO/IEC 13239 with N = 5): after N ones a 0
  is inserted; runs of zeros stay unbounded.

A stuffed bit is also inserted after the last data bit when it completes a run of N, so
``unstuff`` can work on a received stream longer than the frame: it drops the bit after
every run of N (whatever its value) and reads on.
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from ..errors import SpecError
from ..spec.model import LineCodeSpec
from ._block import BlockCode
from ._chips import as_bits

STUFF_VALUES: tuple[str, ...] = ("both", "ones")
MAX_STUFF_AFTER = 64


def _runs(bits: np.ndarray, seg_first: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (start index, length, value) of every run of equal bits (non-empty input);
    a run also breaks where a segment begins (``seg_first``: bool per bit)."""
    new = seg_first.copy()
    new[0] = True
    new[1:] |= bits[1:] != bits[:-1]
    starts = np.flatnonzero(new)
    lengths = np.diff(np.append(starts, bits.size))
    return starts, lengths, bits[starts]


def _segments(bits: np.ndarray, lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (bool per bit: a segment starts there, end of every segment) for segments
    of ``lengths`` bits laid end to end."""
    ends = np.cumsum(lengths)
    first = np.zeros(bits.size, bool)
    first[(ends - lengths)[lengths > 0]] = True
    return first, ends


def _spread(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (owner index, k = 0..count-1) for ``counts[i]`` items owned by each i."""
    owner = np.repeat(np.arange(counts.size), counts)
    first = np.cumsum(counts) - counts
    return owner, np.arange(owner.size) - first[owner]


def _carry_in(lengths: np.ndarray, after: int, restart: np.ndarray) -> np.ndarray:
    """Return 1 for each run preceded on air by a stuffed bit of its own value ("both" rule).

    carry[i+1] = ((lengths[i] + carry[i]) % N == 0): run i maps the carry through NOT
    (length % N == 0), unchanged (length % N == N-1) or to 0 (otherwise), so the carry is
    the parity of the NOT runs since the last run that resets it. A run where a segment
    begins (``restart``) has no carry.
    """
    r = lengths % after
    flip = r == 0
    reset = (r != 0) & (r != after - 1)
    reset[:-1] |= restart[1:]  # the last run of a segment hands no carry on
    idx = np.arange(lengths.size)
    last_reset = np.maximum.accumulate(np.where(reset, idx, -1))
    flips = np.cumsum(flip)
    before = np.where(last_reset >= 0, flips[np.maximum(last_reset, 0)], 0)
    carry_out = (flips - before) % 2
    return np.concatenate(([0], carry_out[:-1]))


def stuff_rows(bits: np.ndarray, lengths: np.ndarray, after: int, value: str
               ) -> tuple[np.ndarray, np.ndarray]:
    """Return (stuffed bits, bits per row) of rows of ``lengths`` bits laid end to end in
    ``bits``, each stuffed on its own (see module): a stuffed bit after every run of
    ``after``."""
    lengths = np.asarray(lengths, np.int64)
    if bits.size == 0:
        return bits.copy(), lengths.copy()
    seg_first, seg_end = _segments(bits, lengths)
    starts, run_len, values = _runs(bits, seg_first)
    if value == "ones":
        first = np.full(run_len.size, after - 1)  # offset in the run of the first stuff
        counts = np.where(values == 1, run_len // after, 0)
    else:
        first = after - 1 - _carry_in(run_len, after, seg_first[starts])
        counts = np.where(run_len > first, (run_len - 1 - first) // after + 1, 0)
    owner, k = _spread(counts)
    positions = starts[owner] + first[owner] + k * after + 1
    row = np.searchsorted(seg_end, starts, side="right")
    added = np.bincount(row, weights=counts, minlength=lengths.size).astype(np.int64)
    return np.insert(bits, positions, 1 - values[owner]), lengths + added


def unstuff_rows(bits: np.ndarray, lengths: np.ndarray, after: int, value: str
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Return (bits, bits per row) of rows laid end to end in ``bits`` without the bit
    that follows every run of ``after`` in each row (see module)."""
    lengths = np.asarray(lengths, np.int64)
    if bits.size == 0:
        return bits.copy(), lengths.copy()
    seg_first, seg_end = _segments(bits, lengths)
    starts, run_len, values = _runs(bits, seg_first)
    # bits dropped inside a run sit at offsets N, N + period, ...; a run whose count ends at
    # N makes the first bit of the next run (in the same row) the stuffed one
    if value == "ones":
        period = after + 1
        inner = np.where(values == 1, run_len // period, 0)
        ends_full = (values == 1) & (run_len % period == after)
    else:
        period = after
        inner = (run_len - 1) // period
        ends_full = run_len % period == 0
    owner, k = _spread(inner)
    drop_inner = starts[owner] + after + k * period
    nxt = starts[1:]
    drop_next = nxt[ends_full[:-1] & ~seg_first[nxt]]
    keep = np.ones(bits.size, bool)
    keep[drop_inner] = False
    keep[drop_next] = False
    dropped = np.bincount(np.searchsorted(seg_end, np.flatnonzero(~keep), side="right"),
                          minlength=lengths.size)
    return bits[keep], lengths - dropped


def stuff_bits(bits: np.ndarray, after: int, value: str) -> np.ndarray:
    """Return ``bits`` with a stuffed bit inserted after every run of ``after`` (see module)."""
    return stuff_rows(bits, np.array([bits.size]), after, value)[0]


def unstuff_bits(bits: np.ndarray, after: int, value: str) -> np.ndarray:
    """Return ``bits`` without the bit that follows every run of ``after`` (see module)."""
    return unstuff_rows(bits, np.array([bits.size]), after, value)[0]


class Nrz(BlockCode):
    """Non-return-to-zero: bit 1 -> one mark chip, bit 0 -> one space chip."""

    name = "nrz"
    DATA_BITS = 1
    CODE_CHIPS = 1
    CODEWORDS = (0, 1)
    DEFAULTS: ClassVar[dict[str, object]] = {"stuff_after": 0, "stuff_value": "both"}
    PARAMS: ClassVar[dict[str, str]] = {
        "stuff_after": f"bit stuffing after N equal bits (2..{MAX_STUFF_AFTER}), 0 = off; "
        "default 0",
        "stuff_value": '"both" (insert the complement after N equal bits of either value) or '
        '"ones" (HDLC: insert 0 after N ones); default "both"',
    }

    def __init__(self, spec: LineCodeSpec) -> None:
        super().__init__(spec)
        after = self.params.integer("stuff_after", 0, MAX_STUFF_AFTER)
        if after == 1:
            raise SpecError("line_code.stuff_after",
                            f"must be 0 (off) or 2..{MAX_STUFF_AFTER}, got 1")
        self.stuff_after = after
        self.stuff_value = self.params.choice("stuff_value", STUFF_VALUES)

    @property
    def max_run_units(self) -> int | None:
        """Longest run in the stuffed stream: N with symmetric stuffing, else unbounded."""
        if self.stuff_after and self.stuff_value == "both":
            return self.stuff_after
        return None

    def run_lengths(self, level: int) -> tuple[int, ...] | None:
        """1 .. N at a level whose runs stuffing bounds, else None (unbounded)."""
        if self.stuff_after and (self.stuff_value == "both" or level == 1):
            return tuple(range(1, self.stuff_after + 1))
        return None

    def stuff(self, bits: np.ndarray) -> np.ndarray:
        """Return the stuffed bit stream (1-D); identity when stuffing is off."""
        b = as_bits(bits, max_ndim=1)
        return stuff_bits(b, self.stuff_after, self.stuff_value) if self.stuff_after else b

    def unstuff(self, bits: np.ndarray) -> np.ndarray:
        """Return the received stream with stuffed bits removed (1-D, any length)."""
        b = as_bits(bits, max_ndim=1)
        return unstuff_bits(b, self.stuff_after, self.stuff_value) if self.stuff_after else b

    def stuff_rows(self, bits: np.ndarray, lengths: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
        """Return (stuffed bits, bits per row) of rows laid end to end, each on its own."""
        b = as_bits(bits, max_ndim=1)
        if not self.stuff_after:
            return b, np.asarray(lengths, np.int64)
        return stuff_rows(b, lengths, self.stuff_after, self.stuff_value)

    def unstuff_rows(self, bits: np.ndarray, lengths: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray]:
        """Return (bits, bits per row) of received rows laid end to end, each unstuffed."""
        b = as_bits(bits, max_ndim=1)
        if not self.stuff_after:
            return b, np.asarray(lengths, np.int64)
        return unstuff_rows(b, lengths, self.stuff_after, self.stuff_value)

    def max_stuffed_bits(self, n_bits: int) -> int:
        """Return the most stuffed bits ``n_bits`` data bits can need (worst-case data)."""
        n = self.stuff_after
        if not n or n_bits < n:
            return 0
        if self.stuff_value == "ones":
            return n_bits // n
        return 1 + (n_bits - n) // (n - 1)
