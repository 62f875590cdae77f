"""Many random transmissions as one long pulse train, with the bookkeeping to match
decoded frames back to what was sent."""

from __future__ import annotations

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
    """Return (chip rows, payload hex) of ``n`` fixed-layout frames with random raw values
    (``ookframe.batch``: the same distribution as ``frame.random_values``)."""
    raws = _batch.random_raw_batch(spec, n, rng)
    bits = _batch.frame_bits_batch(spec, raws)
    chips = _batch.frame_chips_batch(spec, bits)
    n_head = _f.head_bits(spec).size
    n_fb = sum(f.width_bits for f in spec.fields)
    fb = bits[:, n_head : n_head + n_fb] ^ _f.whitening_mask(spec, n_fb, 0)
    payload = tuple(row.tobytes().hex() for row in np.packbits(fb, axis=1))
    return list(chips), payload


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


def _join(spec: FrameSpec, rows: list[np.ndarray], payload: tuple[str, ...], gap: float) -> Batch:
    """Return the batch train: chips weighted by their duration, runs summed (vectorised)."""
    unit = float(spec.unit_us)
    r = spec.repeats
    lens = np.array([c.size for c in rows], np.int64)
    # per transmission: r copies of the chips with r-1 repeat-gap "chips" between, then the
    # batch gap; one batch gap "chip" in front of everything
    pieces_lv: list[np.ndarray] = [np.zeros(1, np.uint8)]
    pieces_w: list[np.ndarray] = [np.array([gap])]
    rep_gap = np.array([spec.gap_us])
    end_gap = np.array([gap])
    zero = np.zeros(1, np.uint8)
    for c in rows:
        w = np.full(c.size, unit)
        for k in range(r):
            pieces_lv.append(c)
            pieces_w.append(w)
            pieces_lv.append(zero)
            pieces_w.append(rep_gap if k < r - 1 else end_gap)
    levels = np.concatenate(pieces_lv).astype(np.uint8)
    weights = np.concatenate(pieces_w)
    starts = np.flatnonzero(np.concatenate(([True], levels[1:] != levels[:-1])))
    train = PulseTrain(levels[starts], np.add.reduceat(weights, starts))
    tx_us = r * lens * unit + (r - 1) * spec.gap_us
    begin = gap + np.concatenate(([0.0], np.cumsum(tx_us + gap)[:-1]))
    return Batch(train, begin, begin + tx_us, payload, gap)
