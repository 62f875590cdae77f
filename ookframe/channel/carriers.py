"""Several keyed carriers at one receiver: per-sender marks -> the one on/off train it outputs.

Model (pulse level, common practice, no source): an OOK receiver's output is high while
any carrier it hears is on, so overlapping marks of different senders add up to their
union. Capture: while a frame of a sender at least ``capture_db`` stronger than another is
on air, the receiver's gain and slicer follow the strong one and the weaker carrier is not
seen at all (its marks inside that frame's span vanish); senders closer in power than
that corrupt each other (their marks merge). Times in µs, powers in dBm.
"""

from __future__ import annotations

import math

import numpy as np

from ..pulses import PulseTrain


def union_intervals(start_us: np.ndarray, end_us: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return the union of intervals [start, end) as sorted, disjoint (start, end) arrays.

    Intervals that touch (one ends where the next starts) are joined.
    """
    s = np.asarray(start_us, np.float64)
    e = np.asarray(end_us, np.float64)
    if s.size == 0:
        return s.copy(), e.copy()
    order = np.argsort(s, kind="stable")
    s, e = s[order], e[order]
    reach = np.maximum.accumulate(e)
    new = np.concatenate(([True], s[1:] > reach[:-1]))
    first = np.flatnonzero(new)
    last = np.append(first[1:], s.size) - 1
    return s[first], reach[last]


def clip_outside(start_us: np.ndarray, end_us: np.ndarray, cover_start_us: np.ndarray,
                 cover_end_us: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return the intervals with the parts inside the disjoint sorted ``cover`` spans cut off.

    An interval starting inside a span starts at its end; one ending inside a span ends at
    its start; intervals left empty are dropped. A span lying strictly inside an interval
    (a mark longer than a whole frame) is not cut out.
    """
    s = np.asarray(start_us, np.float64).copy()
    e = np.asarray(end_us, np.float64).copy()
    if cover_start_us.size == 0 or s.size == 0:
        return s, e
    i = np.searchsorted(cover_start_us, s, side="right") - 1
    inside = (i >= 0) & (s < cover_end_us[np.maximum(i, 0)])
    s[inside] = cover_end_us[i[inside]]
    j = np.searchsorted(cover_start_us, e, side="left") - 1
    inside = (j >= 0) & (e <= cover_end_us[np.maximum(j, 0)])
    e[inside] = np.minimum(e[inside], cover_start_us[j[inside]])
    keep = e > s
    return s[keep], e[keep]


def visible_marks(mark_start_us: np.ndarray, mark_end_us: np.ndarray, mark_power_dbm: np.ndarray,
                  span_start_us: np.ndarray, span_end_us: np.ndarray, span_power_dbm: np.ndarray,
                  capture_db: float) -> tuple[np.ndarray, np.ndarray]:
    """Return the (start, end) of the marks the receiver sees, after the capture rule.

    ``mark_*``: every mark of every sender with its sender's received power; ``span_*``:
    every frame on air (first chip to last chip) with its power. A mark loses the parts
    that fall inside a frame at least ``capture_db`` stronger (``inf``: no capture). One
    pass per distinct power level (a handful of senders), array-wide within it.
    """
    ms = np.asarray(mark_start_us, np.float64)
    me = np.asarray(mark_end_us, np.float64)
    mp = np.asarray(mark_power_dbm, np.float64)
    sp = np.asarray(span_power_dbm, np.float64)
    if not math.isfinite(capture_db) or ms.size == 0 or sp.size == 0:
        return ms, me
    top = float(sp.max())
    levels = np.unique(mp)
    weak_levels = levels[levels + capture_db <= top]
    if weak_levels.size == 0:
        return ms, me
    keep_s = [ms[mp + capture_db > top]]
    keep_e = [me[mp + capture_db > top]]
    for p in weak_levels.tolist():
        strong = sp >= p + capture_db
        cs, ce = union_intervals(np.asarray(span_start_us)[strong], np.asarray(span_end_us)[strong])
        mine = mp == p
        s, e = clip_outside(ms[mine], me[mine], cs, ce)
        keep_s.append(s)
        keep_e.append(e)
    return np.concatenate(keep_s), np.concatenate(keep_e)


def marks_to_train(start_us: np.ndarray, end_us: np.ndarray, t0_us: float, t1_us: float
                   ) -> PulseTrain:
    """Return the receiver output from ``t0_us`` to ``t1_us``: high during the union of the
    marks, low elsewhere (starts and ends with a space; marks must lie inside)."""
    s, e = union_intervals(start_us, end_us)
    if s.size == 0:
        return PulseTrain(np.zeros(1, np.uint8), np.array([float(t1_us - t0_us)]))
    edges = np.empty(2 * s.size + 2)
    edges[0] = t0_us
    edges[1:-1:2] = s
    edges[2:-1:2] = e
    edges[-1] = t1_us
    levels = np.zeros(edges.size - 1, np.uint8)
    levels[1::2] = 1
    return PulseTrain(levels, np.diff(edges))
