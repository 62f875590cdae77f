"""Reusable block-sized arrays for the front end's passes."""

from __future__ import annotations

import numpy as np


class Workspace:
    """Block-sized arrays kept from block to block, so the slicer's passes write into the
    same memory every block instead of allocating new arrays."""

    def __init__(self) -> None:
        self._arrays: dict[str, np.ndarray] = {}

    def get(self, name: str, n: int, dtype: type = np.float64) -> np.ndarray:
        """Return the first ``n`` elements of the array ``name`` (contents undefined)."""
        a = self._arrays.get(name)
        if a is None or a.size < n or a.dtype != dtype:
            a = self._arrays[name] = np.empty(n, dtype)
        return a[:n]

    def zeros(self, name: str, n: int, dtype: type = np.float64) -> np.ndarray:
        """Return ``n`` zeros of the array ``name``, kept zero (callers must not write it)."""
        a = self._arrays.get(name)
        if a is None or a.size < n or a.dtype != dtype:
            a = self._arrays[name] = np.zeros(n, dtype)
            a.flags.writeable = False
        return a[:n]
