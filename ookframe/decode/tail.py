"""Frame ends hugged by receiver noise: where the carrier stopped, found on the chip grid.

A superregenerative receiver outputs random pulses as soon as the carrier stops (common
practice, no source). A frame whose last symbol ends in space chips then ends, on the
receiver's output, at its last falling edge, and the noise starts right there: its first
pulse, often shorter than the glitch filter, merges the frame's last mark with the next
noise mark, and the last bits read wrong. The frame's information ends with its last
mark, though; the spaces after it are implied by the layout.

:func:`carrier_end_us` finds the carrier's last falling edge in the unfiltered train:
walking back from the end the layout predicts, the receiver output is clean carrier
(every edge on the frame's chip grid, every pulse at least one unit) up to the moment the
noise starts, and noise edges leave the grid at once. :func:`cut_trains` builds, for
every frame whose check failed, the train up to that edge followed by a quiet gap, all
laid end to end so one decoder pass reads them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..pulses import PulseTrain, pulse_edges_us

#: an edge is on the chip grid within this many units (edge jitter of a cheap link is a
#: few hundredths of a unit; receiver noise edges fall anywhere)
GRID_TOLERANCE = 0.25
#: units before the earliest possible carrier end where the clean-carrier walk starts
#: (always inside the frame's carrier)
SCAN_BACK_UNITS = 4.0
#: longest trailing space (units) a frame end is searched over
MAX_TRAILING_UNITS = 8


@dataclass(frozen=True, eq=False)
class CutTrains:
    """Pieces of a train (frames cut at their carrier end, bursts) laid end to end with
    quiet gaps.

    train: the joined train; origin_us[k]: time in the original train of the joined
    train's time 0 for piece k (add it to times found there); frame[k]: index of the frame
    or span (in the caller's list) piece k belongs to; start_us[k]: where that frame or
    span starts in the joined train.
    """

    train: PulseTrain
    origin_us: np.ndarray
    frame: np.ndarray
    start_us: np.ndarray


def carrier_end_us(edges_us: np.ndarray, levels: np.ndarray, start_us: float,
                   unit_us: float, end_us: float | None, trailing_units: int,
                   body_chip: int = 0, max_chips: int = 0) -> float | None:
    """Return the time of the carrier's last falling edge of the frame that starts at
    ``start_us`` and, by its layout, ends at ``end_us`` (chip grid of ``unit_us`` from
    ``start_us``), or None if no edge qualifies.

    ``edges_us`` are the start times of the unfiltered train's pulses plus its end, and
    ``levels`` their levels. From ``SCAN_BACK_UNITS`` before the earliest possible end
    (``trailing_units`` of space before ``end_us``), pulses count as carrier while both
    their edges lie within ``GRID_TOLERANCE`` of the grid and they span at least one
    unit; the answer is the last falling edge of that clean stretch lying between
    ``end_us`` less ``trailing_units`` (less one unit: ``end_us`` is measured, and noise
    can lengthen a last mark) and ``end_us`` plus half a unit.
    With ``end_us`` None (a frame whose body could not be read: its end is unknown) the
    walk starts at chip ``body_chip`` and the answer is the last falling edge of the
    clean stretch within ``max_chips``.
    """
    if not (unit_us > 0) or edges_us.size < 2:
        return None
    if end_us is None:
        lo_chip, hi_chip = float(body_chip), float(max_chips)
        scan_chip = lo_chip
    else:
        c_end = round((end_us - start_us) / unit_us)
        lo_chip, hi_chip = c_end - trailing_units - 1.0, c_end + 0.5
        scan_chip = lo_chip - SCAN_BACK_UNITS
    scan_us = start_us + scan_chip * unit_us
    hi_us = start_us + hi_chip * unit_us
    i0 = max(int(np.searchsorted(edges_us, scan_us, side="right")), 1)
    i1 = min(int(np.searchsorted(edges_us, hi_us + unit_us, side="right")), edges_us.size)
    if i1 - i0 < 1:
        return None
    g = (edges_us[i0 - 1:i1] - start_us) / unit_us  # grid places of the scanned edges
    near = np.rint(g)
    on_grid = np.abs(g - near) <= GRID_TOLERANCE
    on_grid[0] = True  # the edge before the scan lies well inside the carrier
    clean = on_grid[1:] & on_grid[:-1] & (near[1:] - near[:-1] >= 1)
    n_clean = int(np.argmin(clean)) if not clean.all() else clean.size
    pulse_level = levels[i0 - 1:i1 - 1][:n_clean]
    ends = g[1:n_clean + 1]
    ends = np.rint(ends)  # clean edges: their grid points
    fall = (pulse_level == 1) & (ends >= lo_chip) & (ends <= hi_chip)
    if not fall.any():
        return None
    return float(edges_us[i0 + int(np.flatnonzero(fall)[-1])])


def join_spans(train: PulseTrain, spans: list[tuple[float, float]], quiet_us: float,
               edges_us: np.ndarray | None = None) -> CutTrains:
    """Return the pieces ``[a_us, b_us)`` of ``train`` (``b_us`` rounded up to the pulse
    boundary at or after it), each after and followed by ``quiet_us`` of space, laid end to
    end; ``frame[k]`` is the index in ``spans`` of piece k and ``start_us[k]`` its ``a_us``
    in the joined train (pieces holding no part of a pulse are left out). ``edges_us``:
    the train's pulse boundaries (its start times plus its end) when the caller has them."""
    edges = pulse_edges_us(train.durations_us) if edges_us is None else edges_us
    lv_parts: list[np.ndarray] = []
    du_parts: list[np.ndarray] = []
    origins, which, starts = [], [], []
    t = 0.0
    for k, (a_us, b_us) in enumerate(spans):
        a_us = max(a_us, 0.0)
        a = max(int(np.searchsorted(edges, a_us, side="right")) - 1, 0)
        b = min(int(np.searchsorted(edges, b_us, side="left")), len(train))  # [a, b)
        if b <= a:
            continue
        du = train.durations_us[a:b].copy()
        du[0] -= a_us - edges[a]  # start exactly at a_us
        if du[0] <= 0:
            continue
        lv_parts += [np.zeros(1, np.uint8), train.levels[a:b], np.zeros(1, np.uint8)]
        du_parts += [np.full(1, quiet_us), du, np.full(1, quiet_us)]
        origins.append(a_us - (t + quiet_us))
        starts.append(t + quiet_us)
        which.append(k)
        t += 2 * quiet_us + float(du.sum())
    if not lv_parts:
        empty = PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
        return CutTrains(empty, np.zeros(0), np.zeros(0, np.int64), np.zeros(0))
    return CutTrains(PulseTrain(np.concatenate(lv_parts), np.concatenate(du_parts)),
                     np.array(origins), np.array(which, np.int64), np.array(starts))


def cut_trains(train: PulseTrain, frames: list[tuple[float, float | None, float]],
               trailing_units: int, quiet_us: float, body_chip: int = 0, max_chips: int = 0,
               lead_units: float = 2.0, edges_us: np.ndarray | None = None) -> CutTrains:
    """Return, for every frame ``(start_us, end_us or None, unit_us)`` whose carrier end is
    found (:func:`carrier_end_us`), the unfiltered ``train`` from ``lead_units`` before
    the frame's start to its carrier end, after and followed by ``quiet_us`` of space;
    the pieces laid end to end (:func:`join_spans`; ``start_us[k]``: the frame's start in
    the joined train). ``edges_us``: the train's pulse boundaries (:func:`pulse_edges_us`)
    when the caller has them."""
    edges = pulse_edges_us(train.durations_us) if edges_us is None else edges_us
    spans, owner = [], []
    for k, (start_us, end_us, unit_us) in enumerate(frames):
        cut = carrier_end_us(edges, train.levels, start_us, unit_us, end_us, trailing_units,
                             body_chip, max_chips)
        if cut is not None:
            spans.append((start_us - lead_units * unit_us, cut))
            owner.append(k)
    cuts = join_spans(train, spans, quiet_us, edges)
    own = np.array(owner, np.int64)[cuts.frame]
    first = np.array([frames[k][0] for k in own.tolist()])
    return CutTrains(cuts.train, cuts.origin_us, own, first - cuts.origin_us)
