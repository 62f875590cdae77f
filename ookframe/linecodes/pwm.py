"""Pulse-width code: every bit is a mark then a space in a fixed period of
``short_units + long_units`` chips; 0 = short mark + long space, 1 = long mark + short space
(short:long ratio 1:2, 1:3, 2:3 ...).

Decoding aligns to every rising edge (one candidate) and reads the bit from the mark
length; the space must be short or long too, except after the last mark of a burst,
where it runs into the gap (any space longer than the long one).
"""

from __future__ import annotations

from typing import ClassVar

import numpy as np

from ..errors import SpecError
from ..spec.model import LineCodeSpec
from ._chips import as_bits, as_runs, mark_space_pairs
from ._params import ParamReader
from .base import DecodedBits, LineCode

MAX_UNITS = 64


class Pwm(LineCode):
    """Pulse-width code: fixed period, the mark length carries the bit."""

    name = "pwm"
    DEFAULTS: ClassVar[dict[str, object]] = {"short_units": 1, "long_units": 2}
    PARAMS: ClassVar[dict[str, str]] = {
        "short_units": f"units of the short mark/space (1..{MAX_UNITS - 1}); default 1",
        "long_units": f"units of the long mark/space (> short_units, ..{MAX_UNITS}); default 2",
    }

    def __init__(self, spec: LineCodeSpec) -> None:
        super().__init__(spec)
        p = ParamReader(spec, self.DEFAULTS)
        self.short_units = p.integer("short_units", 1, MAX_UNITS - 1)
        self.long_units = p.integer("long_units", 2, MAX_UNITS)
        if self.long_units <= self.short_units:
            raise SpecError("line_code.long_units", f"must be greater than short_units "
                            f"({self.short_units}), got {self.long_units}")

    @property
    def units_per_bit(self) -> float:
        return float(self.short_units + self.long_units)

    @property
    def chips_per_block(self) -> int | None:
        return self.short_units + self.long_units

    @property
    def max_run_units(self) -> int | None:
        """long_units: every bit starts with a mark and ends with a space."""
        return self.long_units

    def run_lengths(self, level: int) -> tuple[int, ...] | None:
        """Marks and spaces are short or long."""
        return (self.short_units, self.long_units)

    def encode(self, bits: np.ndarray) -> np.ndarray:
        """Return chips (uint8): 1-D bits -> 1-D chips, 2-D (frames x bits) -> 2-D chips."""
        b = as_bits(bits)
        period = self.short_units + self.long_units
        marks = np.where(b == 1, self.long_units, self.short_units)
        chips = np.arange(period) < marks[..., None]
        return chips.reshape(*b.shape[:-1], period * b.shape[-1]).astype(np.uint8)

    def decode(self, levels: np.ndarray, units: np.ndarray) -> list[DecodedBits]:
        """Return one candidate: one bit per mark, 1 for a long mark, 0 for a short one."""
        lv, un = as_runs(levels, units)
        run, mark, space = mark_space_pairs(lv, un)
        # a space longer than the long one is the gap: the burst ends there, as at the end
        space_ok = (space == self.short_units) | (space == self.long_units) | (
            space > self.long_units)
        if space_ok.size:
            space_ok[-1] = True
        one = mark == self.long_units
        valid = ((mark == self.short_units) | one) & space_ok
        return [DecodedBits((one & valid).astype(np.uint8), run, valid)]
