"""Pulse trains: symbols (one chip per unit) <-> (levels, durations_us) arrays."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class PulseTrain:
    """A sequence of pulses: ``levels`` (uint8, 1 = carrier on / mark, 0 = space) and
    ``durations_us`` (float64, > 0). Adjacent pulses may share a level only in raw captures."""

    levels: np.ndarray
    durations_us: np.ndarray

    def __post_init__(self) -> None:
        lv = np.ascontiguousarray(self.levels, dtype=np.uint8)
        du = np.ascontiguousarray(self.durations_us, dtype=np.float64)
        if lv.ndim != 1 or du.ndim != 1 or lv.shape != du.shape:
            raise ValueError("levels and durations_us must be 1-D arrays of equal length")
        lv.flags.writeable = False
        du.flags.writeable = False
        object.__setattr__(self, "levels", lv)
        object.__setattr__(self, "durations_us", du)

    def __len__(self) -> int:
        return int(self.levels.shape[0])

    @property
    def total_us(self) -> float:
        """Total duration in µs."""
        return float(self.durations_us.sum())

    def edges_us(self) -> np.ndarray:
        """Start time in µs of every pulse (first pulse starts at 0)."""
        return np.concatenate(([0.0], np.cumsum(self.durations_us)[:-1]))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, PulseTrain):
            return NotImplemented
        return np.array_equal(self.levels, other.levels) and np.array_equal(
            self.durations_us, other.durations_us
        )

    def __hash__(self) -> int:  # pragma: no cover - trains are not used as keys
        return hash((self.levels.tobytes(), self.durations_us.tobytes()))


def pulse_edges_us(durations_us: np.ndarray) -> np.ndarray:
    """Return the pulse boundaries of a train of ``durations_us``: its pulses' start times
    and its end (``concatenate(([0.0], cumsum(durations_us)))``, the same sums, written
    in place)."""
    edges = np.empty(durations_us.size + 1)
    edges[0] = 0.0
    np.cumsum(durations_us, out=edges[1:])
    return edges


def _run_starts(levels: np.ndarray) -> np.ndarray:
    """Return the index of the first pulse of every run of equal ``levels`` (non-empty)."""
    return np.flatnonzero(np.concatenate(([True], levels[1:] != levels[:-1])))


def sum_runs(x: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Return ``np.add.reduceat(x, starts)`` bit for bit, for ``starts`` strictly
    increasing from 0; much faster when most runs are a single element.

    Single-element runs are gathered; reduceat sums only the longer runs, given as
    (start, end) pairs, so each is summed exactly as it would be among all the runs.
    """
    sums = x[starts]
    ends = np.append(starts[1:], x.size)
    multi = np.flatnonzero(ends - starts > 1)
    if multi.size:
        bounds = np.stack((starts[multi], ends[multi]), axis=1).ravel()
        if bounds[-1] == x.size:
            bounds = bounds[:-1]  # reduceat's last run goes to the end anyway
        sums[multi] = np.add.reduceat(x, bounds)[::2]
    return sums


_sum_runs = sum_runs  # the old private name, still imported by ookframe.decode.glitch


def merge_runs(levels: np.ndarray, durations_us: np.ndarray) -> PulseTrain:
    """Return a train where adjacent pulses of equal level are merged (durations summed)."""
    levels = np.asarray(levels, dtype=np.uint8)
    durations_us = np.asarray(durations_us, dtype=np.float64)
    if levels.size == 0:
        return PulseTrain(levels, durations_us)
    if levels.shape == durations_us.shape == levels.shape[:1] and (
            levels[1:] != levels[:-1]).all():  # nothing to merge: fresh copies, as below
        return PulseTrain(levels.copy(), durations_us.copy())
    starts = _run_starts(levels)
    return PulseTrain(levels[starts], sum_runs(durations_us, starts))


def chips_to_runs(chips: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Run-length encode chips: returns (levels uint8, run lengths in units int64)."""
    chips = np.asarray(chips, dtype=np.uint8)
    if chips.size == 0:
        return np.zeros(0, np.uint8), np.zeros(0, np.int64)
    starts = np.flatnonzero(np.concatenate(([True], chips[1:] != chips[:-1])))
    runs = np.diff(np.concatenate((starts, [chips.size])))
    return chips[starts], runs.astype(np.int64)


def chips_to_train(chips: np.ndarray, unit_us: float) -> PulseTrain:
    """Return the pulse train of a chip sequence, each chip lasting ``unit_us``."""
    levels, runs = chips_to_runs(chips)
    return PulseTrain(levels, runs * float(unit_us))


def concat(trains: list[PulseTrain], gap_us: float = 0.0) -> PulseTrain:
    """Join trains with a space of ``gap_us`` between consecutive ones; equal levels merge."""
    lv: list[np.ndarray] = []
    du: list[np.ndarray] = []
    for i, t in enumerate(trains):
        if i and gap_us > 0:
            lv.append(np.zeros(1, np.uint8))
            du.append(np.array([gap_us], np.float64))
        lv.append(t.levels)
        du.append(t.durations_us)
    if not lv:
        return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
    return merge_runs(np.concatenate(lv), np.concatenate(du))
