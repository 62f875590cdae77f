"""Array helpers shared by the line codes (input checks, run expansion, table run lengths)."""

from __future__ import annotations

import itertools
from collections.abc import Sequence

import numpy as np

from .base import DecodedBits


def as_bits(bits: np.ndarray, *, max_ndim: int = 2) -> np.ndarray:
    """Return ``bits`` as a uint8 array of 0/1 (1-D, or 2-D frames x bits when allowed)."""
    arr = np.asarray(bits)
    if arr.ndim < 1 or arr.ndim > max_ndim:
        raise ValueError(f"bits must be a {'1-D' if max_ndim == 1 else '1-D or 2-D'} array, "
                         f"got {arr.ndim}-D")
    if arr.size and (arr.min() < 0 or arr.max() > 1):
        raise ValueError("bits must be 0 or 1")
    return arr.astype(np.uint8, copy=False)


def as_runs(levels: np.ndarray, units: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (levels uint8 0/1, units int64 >= 1) checked to be 1-D arrays of equal length."""
    lv = np.asarray(levels)
    un = np.asarray(units)
    if lv.ndim != 1 or un.shape != lv.shape:
        raise ValueError("levels and units must be 1-D arrays of equal length")
    un = un.astype(np.int64, copy=False)
    if un.size and un.min() < 1:
        raise ValueError("run lengths must be whole units >= 1")
    return (lv != 0).astype(np.uint8), un


def expand_runs(levels: np.ndarray, units: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (chips uint8, run index int64 of every chip) for checked runs."""
    run_end = np.cumsum(units)  # one past every run's last chip
    run_of_chip = np.zeros(int(run_end[-1]) if run_end.size else 0, np.int64)
    run_of_chip[run_end[:-1]] = 1  # units >= 1: every later run starts on its own chip
    np.cumsum(run_of_chip, out=run_of_chip)
    return levels[run_of_chip], run_of_chip


def mark_space_pairs(
    levels: np.ndarray, units: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (run index of each mark, mark units, units of the space after it, -1 if none)."""
    marks = np.flatnonzero(levels == 1)
    # every run's following space: its units where the next run is a space, else -1
    space_after = np.full(levels.size, -1, np.int64)
    space_after[:-1] = np.where(levels[1:] == 0, units[1:], -1)
    return marks.astype(np.int64, copy=False), units[marks], space_after[marks]


def marks_with_space(levels: np.ndarray) -> np.ndarray:
    """Return the run index (int64) of every mark that a space follows (checked 0/1 uint8
    levels: a 1 before a 0)."""
    return np.flatnonzero(levels[:-1] > levels[1:]).astype(np.int64, copy=False)


def empty_candidate() -> DecodedBits:
    """Return a candidate with no bits."""
    return DecodedBits(np.zeros(0, np.uint8), np.zeros(0, np.int64), np.zeros(0, bool))


def word_chips(word: int, n_chips: int) -> tuple[int, ...]:
    """Return the chips of an ``n_chips``-wide codeword, MSB (first sent) first."""
    return tuple((word >> (n_chips - 1 - i)) & 1 for i in range(n_chips))


def _run_lengths(chips: Sequence[int]) -> list[int]:
    runs = [1]
    for a, b in zip(chips, chips[1:], strict=False):
        if a == b:
            runs[-1] += 1
        else:
            runs.append(1)
    return runs


def table_max_run(codewords: Sequence[int], n_chips: int) -> int | None:
    """Return the longest run of equal chips in any concatenation of codewords, None if unbounded.

    Unbounded exactly when a codeword is constant (it can repeat forever). Otherwise a run
    spans at most the tail of one word and the head of the next, so ordered pairs suffice.
    """
    words = [word_chips(w, n_chips) for w in codewords]
    if any(len(set(w)) == 1 for w in words):
        return None
    longest = max(max(_run_lengths(w)) for w in words)
    for a in words:
        for b in words:
            if a[-1] == b[0]:
                longest = max(longest, _run_lengths(a)[-1] + _run_lengths(b)[0])
    return longest


def table_run_lengths(codewords: Sequence[int], n_chips: int, level: int) -> tuple[int, ...]:
    """Return the run lengths at ``level`` that concatenations of codewords can hold
    (no constant codeword: a run spans at most the tail of one word and the head of the
    next, so single words and ordered pairs give them all)."""
    words = [word_chips(w, n_chips) for w in codewords]
    found: set[int] = set()
    for w in words:
        runs = _run_lengths(w)
        starts = [0, *itertools.accumulate(runs)][:-1]
        found.update(r for r, s in zip(runs, starts, strict=True) if w[s] == level)
    for a in words:
        for b in words:
            if a[-1] == b[0] == level:
                found.add(_run_lengths(a)[-1] + _run_lengths(b)[0])
    return tuple(sorted(found))
