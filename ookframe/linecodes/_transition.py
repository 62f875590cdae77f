"""Transition codes: each bit has two half-bit slots (start, middle) that hold a level
change or not; one slot is the clock (always a change), the other carries the bit.

The chips are the running XOR of the slot transitions, starting from the idle space
level before the first chip; decoding reads transitions only, so it does not depend on
the absolute polarity (except for the first slot, compared with the idle level).
"""

from __future__ import annotations

import numpy as np

from ..spec.model import LineCodeSpec
from ._chips import as_bits, as_runs, expand_runs
from ._params import ParamReader
from .base import DecodedBits, LineCode


class TransitionCode(LineCode):
    """Two chips per bit; subclasses set CLOCK_SLOT and ONE_HAS_TRANSITION."""

    #: slot (0 = bit start, 1 = middle) that always has a transition
    CLOCK_SLOT: int = 1
    #: True when a 1 bit has a transition in the data slot (False: a 0 bit has it)
    ONE_HAS_TRANSITION: bool = False

    def __init__(self, spec: LineCodeSpec) -> None:
        super().__init__(spec)
        self.params = ParamReader(spec, self.DEFAULTS)

    @property
    def units_per_bit(self) -> float:
        return 2.0

    @property
    def chips_per_block(self) -> int | None:
        return 2

    @property
    def max_run_units(self) -> int | None:
        """2: the clock slot changes level at least once every two chips."""
        return 2

    def run_lengths(self, level: int) -> tuple[int, ...] | None:
        """One or two chips: the clock slot changes level in every bit."""
        return (1, 2)

    def encode(self, bits: np.ndarray) -> np.ndarray:
        """Return chips (uint8): 1-D bits -> 1-D chips, 2-D (frames x bits) -> 2-D chips."""
        b = as_bits(bits)
        data_t = b if self.ONE_HAS_TRANSITION else 1 - b
        slots = np.empty((*b.shape, 2), np.uint8)
        slots[..., self.CLOCK_SLOT] = 1
        slots[..., 1 - self.CLOCK_SLOT] = data_t
        transitions = slots.reshape(*b.shape[:-1], 2 * b.shape[-1])
        return np.bitwise_xor.accumulate(transitions, axis=-1).astype(np.uint8, copy=False)

    def decode(self, levels: np.ndarray, units: np.ndarray) -> list[DecodedBits]:
        """Return two candidates (bit boundary on even or odd chips), read from transitions."""
        lv, un = as_runs(levels, units)
        chips, run_of_chip = expand_runs(lv, un)
        transitions = chips ^ np.concatenate(([0], chips[:-1])).astype(np.uint8)
        out = []
        for phase in (0, 1):
            m = max(chips.size - phase, 0) // 2
            pairs = transitions[phase:phase + 2 * m].reshape(m, 2)
            valid = pairs[:, self.CLOCK_SLOT] == 1
            data_t = pairs[:, 1 - self.CLOCK_SLOT]
            bits = data_t if self.ONE_HAS_TRANSITION else 1 - data_t
            bits = np.where(valid, bits, 0).astype(np.uint8)
            out.append(DecodedBits(bits, run_of_chip[phase:phase + 2 * m:2], valid))
        return out
