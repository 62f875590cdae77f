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
        begin = np.cumsum(lengths) - lengths
    return np.arange(int(lengths.sum())) + np.repeat(np.asarray(starts) - begin, lengths)
