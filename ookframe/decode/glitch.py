"""Glitch filter: pulses shorter than a threshold are merged into their neighbours."""

from __future__ import annotations

import numpy as np

from ..pulses import PulseTrain, merge_runs


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
    idx = np.where(glitch, -1, np.arange(du.size))
    owner = np.maximum.accumulate(idx)
    owner[owner < 0] = keep[0]
    return merge_runs(train.levels[owner], du)
