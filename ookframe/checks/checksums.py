"""Simple checksums: none, 8-bit sum, 8-bit XOR, Fletcher-16."""

from __future__ import annotations

from dataclasses import dataclass
from functools import reduce
from operator import xor
from typing import ClassVar

import numpy as np

from .base import row_mask


@dataclass(frozen=True)
class NoCheck:
    """No check: zero bits, value always 0."""

    kind: ClassVar[str] = "none"
    width_bits: ClassVar[int] = 0

    def compute(self, data: bytes) -> int:
        """Return 0 (there is no check value)."""
        return 0

    def compute_rows(self, data: np.ndarray, n_bytes: np.ndarray | None = None) -> np.ndarray:
        """Return 0 per row (uint64)."""
        return np.zeros(np.shape(data)[0], np.uint64)


@dataclass(frozen=True)
class Sum8:
    """Sum of all bytes modulo 256."""

    kind: ClassVar[str] = "sum8"
    width_bits: ClassVar[int] = 8

    def compute(self, data: bytes) -> int:
        """Return the 8-bit sum of ``data`` (0..255)."""
        return sum(data) & 0xFF

    def compute_rows(self, data: np.ndarray, n_bytes: np.ndarray | None = None) -> np.ndarray:
        """Return the 8-bit sum of every row of the (n x bytes) uint8 ``data`` (its first
        ``n_bytes`` bytes), as uint64."""
        d = row_mask(np.asarray(data, np.uint8), n_bytes)
        return d.sum(axis=1, dtype=np.uint64) & np.uint64(0xFF)


@dataclass(frozen=True)
class Xor8:
    """XOR of all bytes (longitudinal parity)."""

    kind: ClassVar[str] = "xor8"
    width_bits: ClassVar[int] = 8

    def compute(self, data: bytes) -> int:
        """Return the XOR of every byte of ``data`` (0..255)."""
        return reduce(xor, data, 0)

    def compute_rows(self, data: np.ndarray, n_bytes: np.ndarray | None = None) -> np.ndarray:
        """Return the XOR of the bytes of every row of the (n x bytes) uint8 ``data`` (its
        first ``n_bytes`` bytes)."""
        d = row_mask(np.asarray(data, np.uint8), n_bytes)
        return np.bitwise_xor.reduce(d, axis=1, initial=0).astype(np.uint64)


@dataclass(frozen=True)
class Fletcher16:
    """Fletcher-16 (Fletcher 1982; RFC 1146's 8-bit form): sums modulo 255, both from 0.

    sum1 = sum of bytes, sum2 = sum of the running sum1 values; value = (sum2 << 8) | sum1.
    Computed in closed form: sum2 = sum((n - i) * data[i]) for i = 0..n-1.
    """

    kind: ClassVar[str] = "fletcher16"
    width_bits: ClassVar[int] = 16

    def compute(self, data: bytes) -> int:
        """Return the Fletcher-16 value of ``data`` (0..0xFFFF)."""
        d = np.frombuffer(bytes(data), dtype=np.uint8).astype(np.int64)
        sum1 = int(d.sum()) % 255
        sum2 = int(d @ np.arange(d.size, 0, -1, dtype=np.int64)) % 255
        return (sum2 << 8) | sum1

    def compute_rows(self, data: np.ndarray, n_bytes: np.ndarray | None = None) -> np.ndarray:
        """Return the Fletcher-16 value of every row of the (n x bytes) uint8 ``data`` (its
        first ``n_bytes`` bytes): sum2 weighs byte i of a row of n bytes by n - i."""
        d = row_mask(np.asarray(data, np.uint8), n_bytes).astype(np.int64)
        m = d.shape[1]
        n = np.full(d.shape[0], m, np.int64) if n_bytes is None else n_bytes
        sum1 = d.sum(axis=1) % 255
        sum2 = (d * (n[:, None] - np.arange(m))).sum(axis=1) % 255
        return ((sum2 << 8) | sum1).astype(np.uint64)
