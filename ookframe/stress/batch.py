"""Many random transmissions as one long pulse train, with the bookkeeping to match
decoded frames back to what was sent."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import batch as _batch
from .. import bits as _b
from .. import frame as _f
from ..pulses import PulseTrain
from ..spec.model import FrameSpec


@dataclass(frozen=True, eq=False)
class Batch:
    """``n`` transmissions in one train, each preceded and followed by ``gap_us`` of space.

    starts_us / ends_us: where transmission i begins (first chip) and ends (last chip
    of its last repeat), in µs from the train start. payload_hex: the fields section of
    transmission i as ``DecodedFrame.payload_hex`` reports it (field bytes as packed on
    air, un-whitened).
    """

    train: PulseTrain
    starts_us: np.ndarray
    ends_us: np.ndarray
    payload_hex: tuple[str, ...]
    gap_us: float

    @property
    def n(self) -> int:
        return len(self.payload_hex)


def _random_fixed(spec: FrameSpec, n: int, rng: np.random.Generator):
    """Return (chips: 2-D array or list of rows, payload hex) of ``n`` fixed-layout frames
    with random raw values (``ookframe.batch``: the same distribution as
    ``frame.random_values``)."""
    raws = _batch.random_raw_batch(spec, n, rng)
    bits = _batch.frame_bits_batch(spec, raws)
    chips = _batch.frame_chips_batch(spec, bits)
    n_head = _f.head_bits(spec).size
    n_fb = sum(f.width_bits for f in spec.fields)
    fb = bits[:, n_head : n_head + n_fb] ^ _f.whitening_mask(spec, n_fb, 0)
    return chips, _hex_rows(np.packbits(fb, axis=1))


def _hex_rows(packed: np.ndarray) -> tuple[str, ...]:
    """Return ``row.tobytes().hex()`` of every row of a 2-D uint8 array."""
    width = 2 * packed.shape[1]
    if width == 0:
        return ("",) * packed.shape[0]
    text = packed.tobytes().hex()
    return tuple(text[i : i + width] for i in range(0, len(text), width))


def _random_any(spec: FrameSpec, n: int, rng: np.random.Generator):
    """Return (chip rows, payload hex) of ``n`` frames of ``frame.random_values``."""
    rows, payload = [], []
    for _ in range(n):
        values = _f.random_values(spec, rng)
        rows.append(_f.frame_chips(spec, values))
        raw = _f.raw_values(spec, values)
        payload.append(_b.pack_bits(_f.field_bits(spec, raw)).hex())
    return rows, tuple(payload)


def random_batch(
    spec: FrameSpec, n: int, rng: np.random.Generator, *, gap_us: float | None = None
) -> Batch:
    """Return ``n`` random transmissions (``spec.repeats`` copies each, ``spec.gap_us``
    apart) joined by ``gap_us`` of space (default ``spec.gap_us``), one also before the
    first and after the last."""
    gap = float(spec.gap_us if gap_us is None else gap_us)
    if _batch.is_fixed_layout(spec):
        rows, payload = _random_fixed(spec, n, rng)
    else:
        rows, payload = _random_any(spec, n, rng)
    return _join(spec, rows, payload, gap)


def _join(
    spec: FrameSpec, rows: np.ndarray | list[np.ndarray], payload: tuple[str, ...], gap: float
) -> Batch:
    """Return the batch train: chips weighted by their duration, runs summed (vectorised).

    ``rows``: the chips of each transmission, a 2-D array (fixed layout) or a list.
    """
    unit = float(spec.unit_us)
    r = spec.repeats
    levels, lens, gap_slot = _slot_levels(rows, r)
    # gap slots: one batch gap in front, then per transmission r - 1 repeat gaps and a batch gap
    gap_w = np.full(gap_slot.size, float(gap))
    if r > 1:
        gap_w[1:].reshape(-1, r)[:, :-1] = spec.gap_us
    starts = np.flatnonzero(np.concatenate(([True], levels[1:] != levels[:-1])))
    train = PulseTrain(levels[starts], _run_durations_us(levels.size, starts, unit, gap_slot, gap_w))
    tx_us = r * lens * unit + (r - 1) * spec.gap_us
    begin = gap + np.concatenate(([0.0], np.cumsum(tx_us + gap)[:-1]))
    return Batch(train, begin, begin + tx_us, payload, gap)


def _slot_levels(
    rows: np.ndarray | list[np.ndarray], r: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return (level of every slot, chips per row, index of every gap slot) of the batch
    laid out as slots: a gap slot, then per row ``r`` times (its chips, a gap slot)."""
    if isinstance(rows, np.ndarray) and rows.ndim == 2:
        n, width = rows.shape
        levels = np.zeros(1 + n * r * (width + 1), np.uint8)
        levels[1:].reshape(n, r, width + 1)[:, :, :width] = rows[:, None, :]
        gap_slot = np.arange(n * r + 1) * (width + 1)
        return levels, np.full(n, width, np.int64), gap_slot
    lens = np.array([c.size for c in rows], np.int64)
    copy_slots = lens + 1  # slots of one copy: its chips and the gap slot after them
    first = 1 + np.concatenate(([0], np.cumsum(r * copy_slots)[:-1]))
    copy_start = first[:, None] + np.arange(r) * copy_slots[:, None]  # (rows, r)
    levels = np.zeros(1 + int(r * copy_slots.sum()), np.uint8)
    if lens.sum():
        chips = np.concatenate(rows)
        row_first = np.concatenate(([0], np.cumsum(lens)[:-1]))
        within = np.arange(chips.size) - np.repeat(row_first, lens)
        for k in range(r):
            levels[np.repeat(copy_start[:, k], lens) + within] = chips
    gap_slot = np.concatenate(([0], (copy_start + lens[:, None]).ravel()))
    return levels, lens, gap_slot


def _run_durations_us(
    n_slots: int, starts: np.ndarray, unit_us: float, gap_slot: np.ndarray, gap_us: np.ndarray
) -> np.ndarray:
    """Return the summed weights of the runs of slots beginning at ``starts``: ``unit_us``
    per chip slot, ``gap_us`` at the gap slots; equal to ``np.add.reduceat`` of the slot
    weights. When every weight is a multiple of one power of two and all their sums stay
    below 2**52 of it, every sum is exact in any order, so runs are counted instead."""
    bound = (n_slots - gap_slot.size) * unit_us + float(gap_us.sum())
    if not _sums_exact([unit_us, *np.unique(gap_us).tolist()], bound):
        weights = np.full(n_slots, unit_us)
        weights[gap_slot] = gap_us
        return np.add.reduceat(weights, starts)
    durations_us = np.empty(starts.size)  # slots per run, then chips per run, then µs
    np.subtract(starts[1:], starts[:-1], out=durations_us[:-1])
    durations_us[-1] = n_slots - starts[-1]
    run = np.searchsorted(starts, gap_slot, side="right") - 1
    np.subtract.at(durations_us, run, 1.0)
    durations_us *= unit_us
    np.add.at(durations_us, run, gap_us)
    return durations_us


def _sums_exact(values: list[float], bound: float) -> bool:
    """True when every value is >= +0.0 and a multiple of one power of two ``q`` with
    ``bound / q < 2**52`` (then every sum of them up to ``bound`` is exact)."""
    scale = 1
    for v in values:
        if not math.isfinite(v) or math.copysign(1.0, v) < 0:
            return False
        scale = max(scale, v.as_integer_ratio()[1])
    return math.isfinite(bound) and bound * scale < 2.0**52
