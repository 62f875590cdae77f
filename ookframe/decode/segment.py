"""Burst segmentation: pulses too long to lie inside a frame end a burst."""

from __future__ import annotations

import numpy as np


def break_threshold_us(max_run_units: int, unit_us: float, clock_error: float) -> float:
    """Return the shortest pulse in µs that cannot be a run of a frame.

    A run of ``max_run_units`` from a transmitter whose clock is off by up to
    ``clock_error`` (fraction), plus a unit of edge jitter, stays below it.
    """
    return (max_run_units + 0.5) * (1.0 + clock_error) * unit_us


def burst_breaks(durations_us: np.ndarray, threshold_us: float) -> np.ndarray:
    """Return the indices (int64, ascending) of pulses longer than ``threshold_us``."""
    return np.flatnonzero(np.asarray(durations_us) > threshold_us)


def burst_end(starts: np.ndarray, breaks: np.ndarray, n_pulses: int) -> np.ndarray:
    """Return, per start index, one past the first break at or after it (``n_pulses`` if none).

    The break pulse itself is included: a frame's last space runs into it.
    """
    pos = np.searchsorted(breaks, starts, side="left")
    padded = np.append(breaks, n_pulses - 1)
    return np.minimum(padded[pos] + 1, n_pulses)
