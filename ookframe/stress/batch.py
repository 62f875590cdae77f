"""Many random transmissions as one long pulse train, with the bookkeeping to match
decoded frames back to what was sent."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import batch as _batch
from ..plan import FramePlan, as_plan
from ..pulses import PulseTrain
from ..spec.model import FrameSpec


@dataclass(frozen=True, eq=False)
class Batch:
    """``n`` transmissions in one train, each preceded and followed by ``gap_us`` of space.

    starts_us / ends_us: where transmission i begins (first chip) and ends (last chip
    of its last repeat), in µs from the train start. payload_hex: the fields section of
    transmission i as ``DecodedFrame.payload_hex`` reports it (field bytes as packed on
    air, un-whitened). pulse_ends_us: where each pulse of ``train`` ends (the running sum
    of its durations, every sum exact) when the join counted it exactly, else None; for
    ``apply_channel(..., pulse_ends_us=)``, which then need not sum the durations again.
    """

    train: PulseTrain
    starts_us: np.ndarray
    ends_us: np.ndarray
    payload_hex: tuple[str, ...]
    gap_us: float
    pulse_ends_us: np.ndarray | None = None

    @property
    def n(self) -> int:
        return len(self.payload_hex)


def _random_raws(plan: FramePlan, n: int, rng: np.random.Generator):
    """Return the raw values of ``n`` random frames, drawn array-wide
    (``ookframe.batch.random_raw_arrays``, the draws of ``random_raw_batch``: every layout,
    bytes fields too; the distribution of ``frame.random_values``)."""
    return _batch.random_raw_arrays(plan, n, rng)


def random_batch(
    spec: FrameSpec | FramePlan, n: int, rng: np.random.Generator, *,
    gap_us: float | None = None
) -> Batch:
    """Return ``n`` random transmissions (``spec.repeats`` copies each, ``spec.gap_us``
    apart) joined by ``gap_us`` of space (default ``spec.gap_us``), one also before the
    first and after the last."""
    plan = as_plan(spec)
    gap = float(plan.gap_us if gap_us is None else gap_us)
    enc = _batch.encode_bits(plan, _random_raws(plan, n, rng))
    payload = enc.payload_hex()
    lc = plan.line_code
    if plan.is_fixed:
        bits = _batch.frame_bits_of(plan, enc)
        assert isinstance(bits, np.ndarray)
        if n == 0 or (lc.chips_per_block is not None
                      and lc.max_stuffed_bits(bits.shape[1]) == 0):  # 2-D chips
            return join_chips(plan, _batch.frame_chips_batch(plan, bits), payload, gap)
        flat, sizes = bits.reshape(-1), np.full(n, bits.shape[1], np.int64)
    else:
        if n == 0:
            return join_chips(plan, [], payload, gap)
        flat, sizes = _batch.frame_bits_flat(plan, enc)
    # rows of different chip counts: kept laid end to end from bits to slots
    chips, n_chips = _batch.frame_chips_flat(plan, flat, sizes)
    if n_chips.min() == 0:
        return join_chips(plan, _batch.split_rows(chips, n_chips), payload, gap)
    return _join_slots(plan, _slot_levels_flat(chips, n_chips, plan.repeats), payload, gap)


def random_chips(spec: FrameSpec | FramePlan, n: int, rng: np.random.Generator
                 ) -> tuple[np.ndarray | list[np.ndarray], tuple[str, ...]]:
    """Return (chips of ``n`` random frames: a 2-D array or a list of rows, their payload
    hex as ``DecodedFrame.payload_hex`` reports it), as :func:`random_batch` draws them."""
    plan = as_plan(spec)
    enc = _batch.encode_bits(plan, _random_raws(plan, n, rng))
    return _batch.frame_chips_batch(plan, _batch.frame_bits_of(plan, enc)), enc.payload_hex()


def join_chips(
    spec: FrameSpec | FramePlan, rows: np.ndarray | list[np.ndarray], payload: tuple[str, ...],
    gap: float
) -> Batch:
    """Return the batch train: chips weighted by their duration, runs summed (vectorised).

    ``rows``: the chips of each transmission, a 2-D array (fixed layout) or a list.
    """
    plan = as_plan(spec)
    return _join_slots(plan, _slot_levels(rows, plan.repeats), payload, gap)


def _join_slots(plan: FramePlan, slots: tuple[np.ndarray, np.ndarray, np.ndarray],
                payload: tuple[str, ...], gap: float) -> Batch:
    """Return the batch of :func:`join_chips` from its slots (``_slot_levels``)."""
    unit = plan.unit_us
    r = plan.repeats
    levels, lens, gap_slot = slots
    # gap slots: one batch gap in front, then per transmission r - 1 repeat gaps and a batch gap
    gap_w = np.full(gap_slot.size, float(gap))
    if r > 1:
        gap_w[1:].reshape(-1, r)[:, :-1] = plan.gap_us
    changed = np.empty(levels.size, bool)
    changed[0] = True
    np.not_equal(levels[1:], levels[:-1], out=changed[1:])
    starts = np.flatnonzero(changed)
    widths = (float(gap), float(plan.gap_us)) if r > 1 else (float(gap),)  # gap_w's values
    counted = _run_quanta(levels.size, starts, unit, gap_slot, gap_w, widths)
    if counted is None:
        durations_us = _reduced_runs_us(levels.size, starts, unit, gap_slot, gap_w)
        pulse_ends_us = None
    else:  # whole quanta: every duration and every running sum of them exact
        quanta, q_us = counted
        pulse_ends_us = _times_q(np.cumsum(quanta, out=quanta), q_us)
        # differences of exact multiples of q_us below 2**52 of it: exact, quanta * q_us
        durations_us = np.empty(pulse_ends_us.size)
        durations_us[0] = pulse_ends_us[0]
        np.subtract(pulse_ends_us[1:], pulse_ends_us[:-1], out=durations_us[1:])
    train = PulseTrain(_run_levels(levels, starts), durations_us)
    tx_us = r * lens * unit + (r - 1) * plan.gap_us
    begin = gap + np.concatenate(([0.0], np.cumsum(tx_us + gap)[:-1]))
    return Batch(train, begin, begin + tx_us, payload, gap, pulse_ends_us)


def _run_levels(levels: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Return ``levels[starts]`` for the starts of the runs of equal ``levels`` (uint8):
    when every level is 0 or 1, neighbouring runs differ, so the run levels alternate from
    ``levels[0]`` and are written out instead of gathered from the slots."""
    if int(levels.max()) > 1:
        return levels[starts]
    out = np.empty(starts.size, np.uint8)
    out[0::2] = levels[0]
    out[1::2] = 1 - levels[0]
    return out


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
    if lens.size and lens.min() > 0:
        return _slot_levels_flat(np.concatenate(rows), lens, r)
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


def _slot_levels_flat(
    chips: np.ndarray, lens: np.ndarray, r: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``_slot_levels`` of rows laid end to end in ``chips`` (``lens[i] >= 1`` chips each,
    at least one row): the rows padded into a matrix with a zero (the gap slot) after
    each, and its ``r`` copies per row read out without the padding."""
    n = lens.size
    copy_slots = lens + 1  # slots of one copy: its chips and the gap slot after them
    first = 1 + np.concatenate(([0], np.cumsum(r * copy_slots)[:-1]))
    copy_start = first[:, None] + np.arange(r) * copy_slots[:, None]  # (rows, r)
    cols = np.arange(int(lens.max()) + 1)
    padded = np.zeros((n, cols.size), np.uint8)
    padded[cols < lens[:, None]] = chips
    keep = cols <= lens[:, None]
    levels = np.empty(1 + int(r * copy_slots.sum()), np.uint8)
    levels[0] = 0
    if r == 1:
        levels[1:] = padded[keep]
    else:  # each row r times in a row (faster than reading a broadcast view)
        levels[1:] = np.repeat(padded, r, axis=0)[np.repeat(keep, r, axis=0)]
    gap_slot = np.concatenate(([0], (copy_start + lens[:, None]).ravel()))
    return levels, lens, gap_slot


def _run_durations_us(
    n_slots: int, starts: np.ndarray, unit_us: float, gap_slot: np.ndarray, gap_us: np.ndarray,
    gap_widths: tuple[float, ...] | None = None,
) -> np.ndarray:
    """Return the summed weights of the runs of slots beginning at ``starts``: ``unit_us``
    per chip slot, ``gap_us`` at the gap slots; equal to ``np.add.reduceat`` of the slot
    weights. When every weight is a multiple of one power of two and all their sums stay
    below 2**52 of it, every sum is exact in any order, so runs are counted instead (the
    same floats as the reduction then). ``gap_widths``: the values ``gap_us`` takes (at
    least those; default: found from ``gap_us``)."""
    counted = _run_quanta(n_slots, starts, unit_us, gap_slot, gap_us, gap_widths)
    if counted is None:
        return _reduced_runs_us(n_slots, starts, unit_us, gap_slot, gap_us)
    quanta, q_us = counted
    return _times_q(quanta, q_us)


def _times_q(quanta: np.ndarray, q_us: float) -> np.ndarray:
    """Return ``quanta * q_us`` (float64) for whole quanta below 2**53 and ``q_us`` a power
    of two: converted, then scaled in place (exact both; cheaper than the mixed product)."""
    out = quanta.astype(np.float64)
    out *= q_us
    return out


def _run_quanta(
    n_slots: int, starts: np.ndarray, unit_us: float, gap_slot: np.ndarray, gap_us: np.ndarray,
    gap_widths: tuple[float, ...] | None = None,
) -> tuple[np.ndarray, float] | None:
    """Return (the summed weights of :func:`_run_durations_us` in whole quanta, int64; the
    quantum in µs, a power of two) when every weight is a whole number of one power-of-two
    quantum and all their sums stay below 2**52 quanta (then ``quanta * q_us`` and every
    running sum of it times ``q_us`` are exact: the floats any order of float additions
    gives), else None."""
    bound = (n_slots - gap_slot.size) * unit_us + float(gap_us.sum())
    widths = np.unique(gap_us).tolist() if gap_widths is None else list(gap_widths)
    scale = _exact_scale([unit_us, *widths], bound)
    if scale is None:
        return None
    quanta = np.empty(starts.size, np.int64)  # slots per run, then chips per run, then quanta
    np.subtract(starts[1:], starts[:-1], out=quanta[:-1])
    quanta[-1] = n_slots - starts[-1]
    run = np.searchsorted(starts, gap_slot, side="right") - 1
    np.subtract.at(quanta, run, 1)
    quanta *= int(unit_us * scale)  # exact: unit_us * scale is a whole number below 2**52
    np.add.at(quanta, run, (gap_us * scale).astype(np.int64))
    return quanta, 1.0 / scale


#: longest run of chip slots whose sum is looked up in ``_unit_sums_us`` (longer ones, and
#: runs holding a gap slot, are summed by ``np.add.reduceat`` over their own slots)
UNIT_SUMS_MAX = 256
_UNIT_SUMS_US: dict[float, np.ndarray] = {}


def _unit_sums_us(unit_us: float) -> np.ndarray:
    """Return ``np.add.reduceat`` of ``k`` slots of ``unit_us`` at index ``k`` (0 at 0) for
    ``k`` up to ``UNIT_SUMS_MAX`` (read-only; cached per unit): the sum of a run of ``k``
    chips as the reduction of its slots gives it (its value depends only on the values
    summed, in order, not on where they lie)."""
    sums = _UNIT_SUMS_US.get(unit_us)
    if sums is None:
        if len(_UNIT_SUMS_US) >= 8:
            _UNIT_SUMS_US.clear()
        k = np.arange(1, UNIT_SUMS_MAX + 1)
        sums = np.concatenate(([0.0], np.add.reduceat(np.full(int(k.sum()), unit_us),
                                                      np.cumsum(k) - k)))
        sums.flags.writeable = False
        _UNIT_SUMS_US[unit_us] = sums
    return sums


def _reduced_runs_us(n_slots: int, starts: np.ndarray, unit_us: float, gap_slot: np.ndarray,
                     gap_us: np.ndarray) -> np.ndarray:
    """Return ``np.add.reduceat`` of the slot weights (``unit_us`` per chip slot, ``gap_us``
    at the gap slots) at ``starts``, the same floats: runs of chip slots only are looked
    up by their length (``_unit_sums_us``), the rest (runs holding a gap slot, very long
    runs) reduced over their own slots laid end to end."""
    lengths = np.empty(starts.size, np.int64)
    np.subtract(starts[1:], starts[:-1], out=lengths[:-1])
    lengths[-1] = n_slots - starts[-1]
    run = np.searchsorted(starts, gap_slot, side="right") - 1
    rest = lengths > UNIT_SUMS_MAX
    rest[run] = True
    r = np.flatnonzero(rest)
    looked_up = lengths.copy()
    looked_up[r] = 0
    out = _unit_sums_us(unit_us)[looked_up]
    if r.size:
        n = lengths[r]
        weights = np.full(int(n.sum()), unit_us)
        at = np.cumsum(n) - n  # where each of these runs starts among their slots
        where = np.zeros(lengths.size, np.int64)
        where[r] = at - starts[r]
        weights[gap_slot + where[run]] = gap_us
        out[r] = np.add.reduceat(weights, at)
    return out


def _exact_scale(values: list[float], bound: float) -> int | None:
    """Return ``1 / q`` when every value is >= +0.0 and a multiple of one power of two
    ``q`` with ``bound / q < 2**52`` (then every sum of them up to ``bound`` is exact;
    ``1 / q``: the largest denominator of the values, a power of two), else None."""
    scale = 1
    for v in values:
        if not math.isfinite(v) or math.copysign(1.0, v) < 0:
            return None
        scale = max(scale, v.as_integer_ratio()[1])
    return scale if math.isfinite(bound) and bound * scale < 2.0**52 else None
