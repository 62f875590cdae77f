"""The interface every check implements (one class per family, one registry line)."""

from __future__ import annotations

from typing import Protocol, runtime_checkable

import numpy as np


@runtime_checkable
class Check(Protocol):
    """An error check over bytes: ``kind`` as in CheckSpec, value of ``width_bits`` bits."""

    @property
    def kind(self) -> str: ...

    @property
    def width_bits(self) -> int: ...

    def compute(self, data: bytes) -> int:
        """Return the check value of ``data`` (0 <= value < 2**width_bits)."""
        ...

    def compute_rows(self, data: np.ndarray, n_bytes: np.ndarray | None = None) -> np.ndarray:
        """Return the check value of every row of the (n x bytes) uint8 array ``data``
        as uint64, each equal to ``compute(row[:n_bytes[i]].tobytes())`` (``n_bytes``
        default: whole rows), vectorised over the rows."""
        ...


def check_rows(check: Check, data: np.ndarray, n_bytes: np.ndarray | None = None
               ) -> np.ndarray:
    """Return (uint64) the check value of the first ``n_bytes[i]`` bytes (default: all)
    of every row i of the (n x bytes) uint8 array ``data``."""
    data = np.asarray(data, dtype=np.uint8)
    if n_bytes is not None:
        n_bytes = np.minimum(np.asarray(n_bytes, dtype=np.int64), data.shape[1])
    return check.compute_rows(data, n_bytes)


def row_mask(data: np.ndarray, n_bytes: np.ndarray | None) -> np.ndarray:
    """Return ``data`` with the bytes past each row's ``n_bytes`` zeroed (as it is if None)."""
    if n_bytes is None:
        return data
    return np.where(np.arange(data.shape[1]) < n_bytes[:, None], data, np.uint8(0))
