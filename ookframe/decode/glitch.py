"""Glitch filter: pulses shorter than a threshold are merged into their neighbours."""

from __future__ import annotations

import numpy as np

from ..pulses import PulseTrain, _sum_runs, merge_runs


def drop_glitches(levels: np.ndarray, durations_us: np.ndarray, min_us: float) -> PulseTrain:
    """Return the train with every pulse shorter than ``min_us`` given the level of the last
    longer pulse before it (the first longer pulse for leading glitches), then equal levels
    merged. Total duration is kept, so times stay those of the input; a train made only of
    glitches gives an empty train.
    """
    train = merge_runs(levels, durations_us)
    du = train.durations_us
    glitch = du < min_us
    if not glitch.any():
        return train
    keep = np.flatnonzero(~glitch)
    if keep.size == 0:
        return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
    # glitches take the level of the kept pulse before them, so runs can only start at a
    # kept pulse whose level differs from the previous kept one (and at pulse 0)
    kept_levels = train.levels[keep]
    new_run = kept_levels[1:] != kept_levels[:-1]
    starts = np.concatenate(([0], keep[1:][new_run]))
    run_levels = np.concatenate((kept_levels[:1], kept_levels[1:][new_run]))
    return PulseTrain(run_levels, _sum_runs(du, starts))
