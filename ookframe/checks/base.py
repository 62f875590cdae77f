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

    def compute_rows(self, data: np.ndarray) -> np.ndarray:
        """Return the check value of every row of the (n x bytes) uint8 array ``data``
        as uint64, each equal to ``compute(row.tobytes())`` (vectorised over the rows)."""
        ...


def check_rows(check: Check, data: np.ndarray, n_bytes: np.ndarray | None = None
               ) -> np.ndarray:
    """Return (uint64) the check value of the first ``n_bytes[i]`` bytes (default: all)
    of every row i of the (n x bytes) uint8 array ``data``: one ``compute_rows`` call per
    distinct length."""
    data = np.asarray(data, dtype=np.uint8)
    if n_bytes is None:
        return check.compute_rows(data)
    n_bytes = np.asarray(n_bytes, dtype=np.int64)
    out = np.zeros(data.shape[0], np.uint64)
    lengths, inverse = np.unique(n_bytes, return_inverse=True)
    for j, k in enumerate(lengths.tolist()):
        rows = np.flatnonzero(inverse == j)
        out[rows] = check.compute_rows(data[rows, :k])
    return out
