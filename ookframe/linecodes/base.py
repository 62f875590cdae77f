"""The interface every line code implements (one module per code, one registry line)."""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..spec.model import LineCodeSpec


@dataclass(frozen=True, eq=False)
class DecodedBits:
    """One candidate decoding of a burst of runs (one per chip alignment / phase).

    bits: uint8 0/1 per decoded data bit.
    run_index: int64, index (into the runs given to ``decode``) of the run in which each
        bit's first chip lies, so the decoder can map bits back to time.
    valid: bool per bit; False where the chips did not form a valid codeword (e.g. a
        Manchester "00" pair); decoding continues past invalid bits.
    """

    bits: np.ndarray
    run_index: np.ndarray
    valid: np.ndarray


class LineCode(ABC):
    """bits <-> chips (one chip = one symbol unit at level 0/1)."""

    name: ClassVar[str]
    #: allowed parameter names -> description (for spec validation and docs)
    PARAMS: ClassVar[dict[str, str]] = {}
    #: allowed parameter names -> default value (same keys as PARAMS)
    DEFAULTS: ClassVar[dict[str, object]] = {}

    def __init__(self, spec: LineCodeSpec) -> None:
        self.spec = spec

    @property
    @abstractmethod
    def units_per_bit(self) -> float:
        """Average symbol units (chips) per data bit."""

    @property
    def efficiency(self) -> float:
        """Data bits per symbol unit."""
        return 1.0 / self.units_per_bit

    @property
    def bits_per_block(self) -> int:
        """Data bits per code block; frames must be a whole number of blocks (4 for 4B6B)."""
        return 1

    @property
    def chips_per_block(self) -> int | None:
        """Chips per code block when fixed (then 2-D ``encode`` works); None if data-dependent."""
        return None

    @property
    @abstractmethod
    def max_run_units(self) -> int | None:
        """Longest run of equal chips the code can emit for any data, None if unbounded."""

    @abstractmethod
    def encode(self, bits: np.ndarray) -> np.ndarray:
        """Return chips (uint8) for a 1-D bit array; 2-D input (frames x bits) gives 2-D
        output where the code has a fixed chip count per bit."""

    @abstractmethod
    def decode(self, levels: np.ndarray, units: np.ndarray) -> list[DecodedBits]:
        """Decode runs (levels, lengths in whole units >= 1) to candidate bit streams."""

    def stuff(self, bits: np.ndarray) -> np.ndarray:
        """Bit stuffing applied to the sections after the sync word (identity by default)."""
        return bits

    def unstuff(self, bits: np.ndarray) -> np.ndarray:
        """Inverse of ``stuff`` on a received bit stream (may be longer than one frame)."""
        return bits

    def stuff_rows(self, bits: np.ndarray, lengths: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
        """``stuff`` of many rows laid end to end in ``bits`` (``lengths`` bits each), each
        on its own: (stuffed bits laid end to end, bits per row). Identity by default."""
        return bits, np.asarray(lengths, np.int64)

    def unstuff_rows(self, bits: np.ndarray, lengths: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray]:
        """``unstuff`` of many received rows laid end to end (see :meth:`stuff_rows`)."""
        return bits, np.asarray(lengths, np.int64)

    def encode_rows(self, bits: np.ndarray, lengths: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray]:
        """Return (chips of every row laid end to end, chips per row) for rows of bits laid
        end to end in ``bits`` (``lengths`` bits each), each encoded on its own. The
        default encodes row by row; codes that can do better override it."""
        lengths = np.asarray(lengths, np.int64)
        rows = np.split(np.asarray(bits, np.uint8), np.cumsum(lengths)[:-1])
        chips = [self.encode(r) for r in rows] if lengths.size else []
        sizes = np.array([c.size for c in chips], np.int64)
        return (np.concatenate(chips) if chips else np.zeros(0, np.uint8)), sizes

    def chip_counts(self, bits: np.ndarray, lengths: np.ndarray) -> np.ndarray:
        """Return the chips of every row of :meth:`encode_rows` (int64 per row)."""
        return self.encode_rows(bits, lengths)[1]

    def max_stuffed_bits(self, n_bits: int) -> int:
        """Return the most bits ``stuff`` can add to ``n_bits`` data bits (0 without stuffing)."""
        return 0

    def run_lengths(self, level: int) -> tuple[int, ...] | None:
        """Return every run length in units a frame can hold at ``level`` (0 space, 1 mark),
        ascending; None when runs are unbounded (every whole number is allowed).

        The default encodes every data word of up to 12 bits (whole blocks) one after the
        other, stuffed as on air, and keeps the runs wholly inside those chips (so every
        pair of neighbouring words is seen). Codes whose run set needs longer words
        override it.
        """
        if self.max_run_units is None:
            return None
        k = self.bits_per_block
        n_bits = max(k, 12 // k * k)
        words = (np.arange(1 << n_bits)[:, None] >> np.arange(n_bits - 1, -1, -1)) & 1
        chips = self.encode(self.stuff(words.astype(np.uint8).ravel()))  # all words in a row
        edges = np.flatnonzero(chips[1:] != chips[:-1]) + 1
        lengths = np.diff(edges)
        found = {int(x) for x in np.unique(lengths[chips[edges[:-1]] == level])}
        found = {x for x in found if x <= self.max_run_units}
        return tuple(sorted(found)) if found else None
