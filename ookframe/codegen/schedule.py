"""The quantised transmit schedule: the exact (level, ticks) sequence tx_next must yield.

Built from the Python encoder's bits (``frame_bits`` and the line code's own ``stuff``)
and the run tables, with the same merging rule as the generated C: a pulse joins
following runs of the same level, at most ``max_merge`` runs and never past one timer
period (``max_pulse_ticks``). Merging the result by level gives the nominal train of
``ookframe.frame.encode`` (checked in the tests), so C == this == the Python model.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..frame import frame_bits
from ..pulses import PulseTrain, merge_runs
from .model import CModel


@dataclass(frozen=True, eq=False)
class Schedule:
    """Pulses as tx_next yields them: levels, ticks, and nominal durations in µs."""

    levels: np.ndarray
    ticks: np.ndarray
    nominal_us: np.ndarray

    def nominal_train(self) -> PulseTrain:
        """Return the nominal pulse train (equal levels merged), durations in µs."""
        return merge_runs(self.levels, self.nominal_us)

    def edges_ticks(self) -> np.ndarray:
        """Return the start tick of every pulse and the end tick of the last one."""
        return np.concatenate(([0], np.cumsum(self.ticks)))


def line_bits(model: CModel, bits: np.ndarray) -> np.ndarray:
    """Return the frame bits as line coded: head unchanged, body through the code's stuffing."""
    lc = model.plan.line_code
    h = model.head_bits
    return np.concatenate((bits[:h], lc.stuff(bits[h:]))).astype(np.uint8)


def _elements(model: CModel, bits: np.ndarray) -> tuple[list[int], list[int], list[float]]:
    spec, code, timing = model.spec, model.code, model.timing
    k = code.bits_per_block
    stream = line_bits(model, bits)
    n_blocks = stream.size // k
    values = stream[:n_blocks * k].reshape(n_blocks, k) @ (1 << np.arange(k - 1, -1, -1))
    levels: list[int] = []
    ticks: list[int] = []
    nominal: list[float] = []
    for rep in range(spec.repeats):
        if rep:  # the gap, split over several timer periods when one cannot hold it
            pieces = timing.gap_piece_ticks()
            for t in pieces:
                levels.append(0)
                ticks.append(t)
                nominal.append(spec.gap_us * t / timing.gap_ticks)
        state = 0
        words = [code.words[int(v)] for v in values]
        if code.trailer is not None:
            words.append(code.trailer)
        for w in words:
            level = w.first_level ^ (state if code.differential else 0)
            for u in w.runs_units:
                levels.append(level)
                ticks.append(timing.ticks_of_units(u))
                nominal.append(u * spec.unit_us)
                level ^= 1
            state = level ^ 1
    return levels, ticks, nominal


def merge_pulses(model: CModel, levels: list[int], ticks: list[int], nominal: list[float]
                 ) -> Schedule:
    """Return the schedule after the C merging rule (max_merge runs, max_pulse_ticks)."""
    out_l: list[int] = []
    out_t: list[int] = []
    out_n: list[float] = []
    i, n = 0, len(levels)
    while i < n:
        lv, t, nom, count = levels[i], ticks[i], nominal[i], 1
        i += 1
        while i < n and count < model.max_merge and levels[i] == lv \
                and ticks[i] <= model.max_pulse_ticks - t:
            t += ticks[i]
            nom += nominal[i]
            count += 1
            i += 1
        out_l.append(lv)
        out_t.append(t)
        out_n.append(nom)
    return Schedule(np.asarray(out_l, np.uint8), np.asarray(out_t, np.int64),
                    np.asarray(out_n, np.float64))


def schedule_from_bits(model: CModel, bits: np.ndarray) -> Schedule:
    """Return the schedule for an on-air frame bit stream (as ``<prefix>_pack`` writes it)."""
    return merge_pulses(model, *_elements(model, np.asarray(bits, np.uint8)))


def tx_schedule(model: CModel, values: Mapping[str, object]) -> Schedule:
    """Return the schedule tx_next yields for one transmission of ``values``."""
    return schedule_from_bits(model, frame_bits(model.plan, values))
