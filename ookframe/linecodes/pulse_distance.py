"""Pulse-distance code: every bit is a fixed mark followed by a space whose length carries
the bit (``zero_space_units`` or ``one_space_units``).

The last bit's space would run into the gap, so ``encode`` ends the chips with one extra
stop mark of ``mark_units``; ``decode`` reads one bit per mark that has a space after it.
``units_per_bit`` is the mean over equiprobable 0 and 1 bits (the stop mark excluded).
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from ..errors import SpecError
from ..spec.model import LineCodeSpec
from ._chips import as_bits, as_runs, marks_with_space
from ._params import ParamReader
from .base import DecodedBits, LineCode

MAX_UNITS = 64


class PulseDistance(LineCode):
    """Pulse-distance code: fixed mark, the space length carries the bit; data-dependent length."""

    name = "pulse_distance"
    DEFAULTS: ClassVar[dict[str, object]] = {
        "mark_units": 1, "zero_space_units": 1, "one_space_units": 3,
    }
    PARAMS: ClassVar[dict[str, str]] = {
        "mark_units": f"units of every mark, also the stop mark (1..{MAX_UNITS}); default 1",
        "zero_space_units": f"units of the space after a 0 bit (1..{MAX_UNITS}); default 1",
        "one_space_units": f"units of the space after a 1 bit (1..{MAX_UNITS}, not equal to "
        "zero_space_units); default 3",
    }

    def __init__(self, spec: LineCodeSpec) -> None:
        super().__init__(spec)
        p = ParamReader(spec, self.DEFAULTS)
        self.mark_units = p.integer("mark_units", 1, MAX_UNITS)
        self.zero_space_units = p.integer("zero_space_units", 1, MAX_UNITS)
        self.one_space_units = p.integer("one_space_units", 1, MAX_UNITS)
        if self.one_space_units == self.zero_space_units:
            raise SpecError("line_code.one_space_units", "must differ from zero_space_units "
                            f"({self.zero_space_units}), got {self.one_space_units}")

    @property
    def units_per_bit(self) -> float:
        return self.mark_units + (self.zero_space_units + self.one_space_units) / 2

    @property
    def max_run_units(self) -> int | None:
        return max(self.mark_units, self.zero_space_units, self.one_space_units)

    def run_lengths(self, level: int) -> tuple[int, ...] | None:
        """Marks: ``mark_units``; spaces: the 0 or the 1 space."""
        if level == 1:
            return (self.mark_units,)
        return tuple(sorted((self.zero_space_units, self.one_space_units)))

    def encode(self, bits: np.ndarray) -> np.ndarray:
        """Return chips (uint8) of a 1-D bit array, ending with the stop mark."""
        if np.ndim(bits) != 1:
            raise ValueError("pulse_distance encodes 1-D bits only: its chip count depends on "
                             "the data (chips_per_block is None); encode frames one by one")
        b = as_bits(bits, max_ndim=1)
        spaces = np.where(b == 1, self.one_space_units, self.zero_space_units)
        runs = np.empty(2 * b.size + 1, np.int64)
        runs[0::2] = self.mark_units
        runs[1::2] = spaces
        levels = np.ones(runs.size, np.uint8)
        levels[1::2] = 0
        return np.repeat(levels, runs)

    def encode_rows(self, bits: np.ndarray, lengths: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray]:
        """Every row's chips (each with its stop mark) in one pass; see
        :meth:`LineCode.encode_rows`."""
        b = as_bits(bits, max_ndim=1)
        lengths = np.asarray(lengths, np.int64)
        row_of_bit = np.repeat(np.arange(lengths.size), lengths)
        n_runs = 2 * lengths + 1
        run_end = np.cumsum(n_runs)  # one past each row's stop mark
        runs = np.full(int(run_end[-1]) if run_end.size else 0, self.mark_units, np.int64)
        levels = np.ones(runs.size, np.uint8)
        # the space of bit j of row i is run 2 j + 1 of the row
        space = (run_end - n_runs)[row_of_bit] + 2 * (np.arange(b.size) - (
            np.cumsum(lengths) - lengths)[row_of_bit]) + 1
        runs[space] = np.where(b == 1, self.one_space_units, self.zero_space_units)
        levels[space] = 0
        return np.repeat(levels, runs), self.chip_counts(b, lengths)

    def chip_counts(self, bits: np.ndarray, lengths: np.ndarray) -> np.ndarray:
        """Chips per row: a mark per bit and the stop mark, and every bit's space."""
        b = np.asarray(bits)
        lengths = np.asarray(lengths, np.int64)
        ones = np.zeros(lengths.size, np.int64)
        nz = lengths > 0
        if b.size:
            ones[nz] = np.add.reduceat(b.astype(np.int64), (np.cumsum(lengths) - lengths)[nz])
        return ((lengths + 1) * self.mark_units + ones * self.one_space_units
                + (lengths - ones) * self.zero_space_units)

    def decode(self, levels: np.ndarray, units: np.ndarray) -> list[DecodedBits]:
        """Return one candidate: one bit per mark followed by a space (1 = one_space_units)."""
        lv, un = as_runs(levels, units)
        run = marks_with_space(lv)
        mark, space = un[run], un[run + 1]
        one = space == self.one_space_units
        valid = (mark == self.mark_units) & (one | (space == self.zero_space_units))
        return [DecodedBits((one & valid).astype(np.uint8), run, valid)]
