"""Table-driven block codes: k data bits -> one n-chip codeword (NRZ, Manchester, 4B6B...)."""

from __future__ import annotations

from functools import cached_property
from typing import ClassVar

import numpy as np

from ..spec.model import LineCodeSpec
from ._chips import as_bits, as_runs, expand_runs, table_max_run, table_run_lengths
from ._params import ParamReader
from .base import DecodedBits, LineCode


class BlockCode(LineCode):
    """A line code given by a codeword table; subclasses set the three class constants.

    Data blocks are read MSB first (the first bit is the block value's top bit); codeword
    chips are sent MSB first. Decoding tries every one of the n chip phases.
    """

    #: data bits per block (k)
    DATA_BITS: ClassVar[int] = 1
    #: chips per codeword (n <= 8)
    CODE_CHIPS: ClassVar[int] = 1
    #: codeword (n-bit int) of every data block value 0 .. 2**k - 1
    CODEWORDS: ClassVar[tuple[int, ...]] = (0, 1)

    def __init__(self, spec: LineCodeSpec) -> None:
        super().__init__(spec)
        self.params = ParamReader(spec, self.DEFAULTS)

    @property
    def codewords(self) -> tuple[int, ...]:
        """Codeword table in use (a parameter may choose it, e.g. Manchester's convention)."""
        return self.CODEWORDS

    # -- derived tables ------------------------------------------------------------------
    @cached_property
    def _encode_table(self) -> np.ndarray:
        return np.array(self.codewords, dtype=np.uint8)

    @cached_property
    def _chip_table(self) -> np.ndarray:
        """(2 ** k x n) uint8: the chips (first sent first) of every data block value."""
        return ((self._encode_table[:, None] >> self._chip_shifts) & 1).astype(np.uint8)

    @cached_property
    def _chip_columns(self) -> tuple[np.ndarray, ...]:
        """Column j of :attr:`_chip_table` (contiguous): chip j of every block value."""
        return tuple(np.ascontiguousarray(c) for c in self._chip_table.T)

    @cached_property
    def _decode_table(self) -> np.ndarray:
        inv = np.full(1 << self.CODE_CHIPS, -1, dtype=np.int16)
        inv[self._encode_table] = np.arange(len(self.codewords), dtype=np.int16)
        return inv

    @cached_property
    def _block_bits(self) -> np.ndarray:
        """(2 ** n x k) uint8: the data bits (first sent first) of every n-chip value, 0
        for a value that is no codeword."""
        data = np.maximum(self._decode_table, 0).astype(np.uint8)
        return ((data[:, None] >> self._data_shifts) & 1).astype(np.uint8)

    @cached_property
    def _block_valid(self) -> np.ndarray:
        """(2 ** n x k) bool: whether each n-chip value is a codeword, once per data bit."""
        return np.repeat((self._decode_table >= 0)[:, None], self.DATA_BITS, axis=1)

    @cached_property
    def _data_shifts(self) -> np.ndarray:
        return np.arange(self.DATA_BITS - 1, -1, -1, dtype=np.uint8)

    @cached_property
    def _chip_shifts(self) -> np.ndarray:
        return np.arange(self.CODE_CHIPS - 1, -1, -1, dtype=np.uint8)

    # -- LineCode interface --------------------------------------------------------------
    @property
    def units_per_bit(self) -> float:
        return self.CODE_CHIPS / self.DATA_BITS

    @property
    def bits_per_block(self) -> int:
        return self.DATA_BITS

    @property
    def chips_per_block(self) -> int | None:
        return self.CODE_CHIPS

    @cached_property
    def _table_max_run(self) -> int | None:
        return table_max_run(self.codewords, self.CODE_CHIPS)

    @property
    def max_run_units(self) -> int | None:
        """Longest run over any codeword sequence, computed from the table."""
        return self._table_max_run

    def run_lengths(self, level: int) -> tuple[int, ...] | None:
        """Run lengths from the codeword table (None when a constant codeword makes runs
        unbounded; a stuffing code overrides this)."""
        if self._table_max_run is None:
            return None
        return table_run_lengths(self.codewords, self.CODE_CHIPS, level)

    def encode(self, bits: np.ndarray) -> np.ndarray:
        """Return chips (uint8): 1-D bits -> 1-D chips, 2-D (frames x bits) -> 2-D chips."""
        b = as_bits(bits)
        k = self.DATA_BITS
        if b.shape[-1] % k:
            raise ValueError(f"{self.name} codes {k} bits per block; got {b.shape[-1]} bits")
        blocks = b.reshape(*b.shape[:-1], b.shape[-1] // k, k)
        values = (blocks << self._data_shifts).sum(axis=-1, dtype=np.uint8) if k > 1 else blocks[..., 0]
        # chip j of every block: one lookup of the table's column j, written in place
        chips = np.empty((*values.shape, self.CODE_CHIPS), np.uint8)
        for j, column in enumerate(self._chip_columns):
            np.take(column, values, out=chips[..., j])
        return chips.reshape(*b.shape[:-1], values.shape[-1] * self.CODE_CHIPS)

    def encode_rows(self, bits: np.ndarray, lengths: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray]:
        """Rows of whole blocks encoded in one call (codewords do not depend on their
        neighbours); see :meth:`LineCode.encode_rows`."""
        lengths = np.asarray(lengths, np.int64)
        if (lengths % self.DATA_BITS).any():
            return super().encode_rows(bits, lengths)
        return self.encode(np.asarray(bits, np.uint8)), lengths // self.DATA_BITS * self.CODE_CHIPS

    def chip_counts(self, bits: np.ndarray, lengths: np.ndarray) -> np.ndarray:
        """Chips per row of whole blocks (int64); see :meth:`LineCode.chip_counts`."""
        lengths = np.asarray(lengths, np.int64)
        if (lengths % self.DATA_BITS).any():
            return super().chip_counts(bits, lengths)
        return lengths // self.DATA_BITS * self.CODE_CHIPS

    def decode(self, levels: np.ndarray, units: np.ndarray) -> list[DecodedBits]:
        """Return one candidate per chip phase (n candidates); unknown codewords are invalid."""
        lv, un = as_runs(levels, units)
        chips, run_of_chip = expand_runs(lv, un)
        k, n = self.DATA_BITS, self.CODE_CHIPS
        # the codeword starting at every chip (chip j of it weighs 2 ** (n - 1 - j)), laid
        # out as (phases x blocks): row p holds phase p's blocks (those starting at p,
        # p + n, ...); a phase whose last block would run past the chips has one less
        blocks = chips.size // n
        span = max(chips.size - n + 1, 0)  # <= blocks * n: the rest stays 0
        values = np.zeros(blocks * n, np.uint8)
        for j in range(n):
            values[:span] |= chips[j:j + span] << (n - 1 - j)
        # (an intp index: numpy's fancy indexing takes it without a conversion of its own)
        by_phase = values.reshape(blocks, n).T.astype(np.intp, order="C")
        # every block's k bits (and k validity flags) looked up as one item of k bytes
        bits = self._block_bits.view(_item(k))[:, 0][by_phase].view(np.uint8)
        valid = self._block_valid.view(_item(k))[:, 0][by_phase].view(bool)
        # the run of each block's first chip, once per data bit of the block
        runs = np.ascontiguousarray(run_of_chip[:blocks * n].reshape(blocks, n).T)
        if k > 1:
            runs = np.repeat(runs, k, axis=1)
        out = []
        for phase in range(n):
            m = (chips.size - phase) // n * k if chips.size > phase else 0
            out.append(DecodedBits(bits[phase, :m], runs[phase, :m], valid[phase, :m]))
        return out


def _item(k: int) -> np.dtype:
    """Return a dtype of ``k`` bytes (an unsigned integer where there is one)."""
    return np.dtype(f"u{k}") if k in (1, 2, 4, 8) else np.dtype(f"V{k}")
