"""Ragged arrays: rows of different lengths laid end to end in one flat array."""

from __future__ import annotations

import numpy as np


def ragged_index(starts: np.ndarray, lengths: np.ndarray, begin: np.ndarray | None = None
                 ) -> np.ndarray:
    """Return the indices of the segments [starts, starts + lengths) laid end to end;
    ``begin``: where each segment starts in the result (``cumsum(lengths) - lengths``)
    when the caller has it."""
    lengths = np.asarray(lengths, dtype=np.int64)
    if begin is None:
        begin = lengths.cumsum()
        total = int(begin[-1]) if begin.size else 0
        begin -= lengths
    else:
        total = int(lengths.sum())
    return np.arange(total) + (np.asarray(starts) - begin).repeat(lengths)
