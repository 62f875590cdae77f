"""Pulse durations -> whole symbol units: classification, unit estimate, drift tracking.

The estimators work on many windows at once: ``durations_us`` is the concatenation of
the windows' pulses and ``lengths`` says how many pulses each window has (ragged arrays,
so one numpy pass serves every candidate frame of a capture).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import lfilter

from ..ragged import ragged_index


@dataclass(frozen=True, eq=False)
class RunTable:
    """The run lengths in units a frame can hold, per level (index 0 space, 1 mark).

    ``allowed[lv]`` ascending int64; ``mids[lv]`` the decision thresholds halfway between
    neighbours (a pulse goes to the nearest allowed length); ``cap_ratio``: a pulse
    longer than this many units cannot lie inside a frame (one unit beyond the longest
    run, so the nearest-length decision keeps its whole margin below it).
    """

    allowed: tuple[np.ndarray, np.ndarray]
    mids: tuple[np.ndarray, np.ndarray]
    top: int  # the longest run of either level
    cap_ratio: float
    same: bool  # both levels allow exactly 1 .. top (then rounding decides)
    lookup: np.ndarray  # (2 x top + 2) bool: lookup[lv, n] for 0 <= n <= top + 1
    by_length: np.ndarray  # lookup transposed and flattened: by_length[2 n + lv]
    no_zero: bool = False  # neither level allows 0 (so 2 n + lv may be clipped as one index)


def run_table(space: tuple[int, ...], mark: tuple[int, ...]) -> RunTable:
    """Return the decision table for the allowed space and mark run lengths."""
    allowed = tuple(np.unique(np.asarray(a, dtype=np.int64)) for a in (space, mark))
    mids = tuple((a[1:] + a[:-1]) / 2.0 for a in allowed)
    top = int(max(a[-1] for a in allowed))
    same = all(a.size == top and a[0] == 1 for a in allowed)
    lookup = np.zeros((2, top + 2), bool)
    for lv in (0, 1):
        lookup[lv, allowed[lv]] = True
    return RunTable(allowed, mids, top, float(top + 1), same, lookup,  # type: ignore[arg-type]
                    np.ascontiguousarray(lookup.T).ravel(), not lookup[:, 0].any())


def nearest_runs(ratio: np.ndarray, levels: np.ndarray, table: RunTable
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Return (nearest allowed run length as int64, |ratio - length|) per pulse.

    ``ratio`` is duration / unit; ``levels`` the pulses' levels. Pulses longer than
    ``table.cap_ratio`` (no run of a frame: a gap) keep their whole number of units, so
    chip counts over a gap stay right.
    """
    r = np.asarray(ratio, dtype=np.float64)
    units = _nearest_units(r, levels, table)
    return units, np.abs(r - units)


def _nearest_units(r: np.ndarray, levels: np.ndarray, table: RunTable,
                   marks: np.ndarray | None = None) -> np.ndarray:
    """Return the first part of :func:`nearest_runs` (``r``: float64 ratios; ``marks``:
    ``levels == 1``, if at hand)."""
    if table.same:
        units = np.rint(r)
        np.clip(units, 1.0, float(table.top), out=units)
        units = units.astype(np.int64)
    else:  # both levels looked up over the whole array (cheaper than masked parts)
        units = np.where(levels == 1 if marks is None else marks,
                         _nearest_allowed(table, 1, r), _nearest_allowed(table, 0, r))
    beyond = r > table.cap_ratio
    if beyond.any():
        units[beyond] = np.rint(r[beyond]).astype(np.int64)
    return units


def _nearest_allowed(table: RunTable, lv: int, r: np.ndarray) -> np.ndarray | np.int64:
    """Return ``table.allowed[lv][_rank(table.mids[lv], r)]``: for one allowed length that
    length, for two a choice by the one threshold (NaN is above it, as ranked)."""
    a, mids = table.allowed[lv], table.mids[lv]
    if a.size == 1:
        return a[0]
    if a.size == 2:
        return np.where(r <= mids[0], a[0], a[1])
    return a[_rank(mids, r)]


#: sorted arrays up to this long are ranked by comparisons, not a binary search
_FEW_THRESHOLDS = 4


def _rank(mids: np.ndarray, r: np.ndarray) -> np.ndarray:
    """Return ``np.searchsorted(mids, r)`` (how many thresholds lie below each value; NaN
    after all of them). For a few thresholds, as their count less the thresholds at or
    above the value (NaN is at or below none): one comparison per threshold."""
    if mids.size > _FEW_THRESHOLDS:
        return np.searchsorted(mids, r)
    rank = np.full(r.shape, mids.size, np.intp)
    for m in mids.tolist():
        rank -= r <= m
    return rank


def run_margin(ratio: np.ndarray, levels: np.ndarray, units: np.ndarray, table: RunTable
               ) -> np.ndarray:
    """Return per pulse how far its ratio lies from the nearest decision threshold, as a
    fraction of the half-distance to the neighbouring length on that side (1 = on the
    allowed length, 0 = on the threshold): the reliability of the decision."""
    r = np.asarray(ratio, dtype=np.float64)
    out = np.ones(r.shape)
    for lv in (0, 1):
        m = levels == lv
        a = table.allowed[lv]
        i = np.searchsorted(a, units[m])
        up = r[m] >= units[m]
        lo_gap = np.where(i > 0, units[m] - a[np.maximum(i - 1, 0)], 2 * units[m])
        hi_gap = np.where(i < a.size - 1, a[np.minimum(i + 1, a.size - 1)] - units[m], 2.0)
        half = np.where(up, hi_gap, lo_gap) / 2.0
        out[m] = np.clip(1.0 - np.abs(r[m] - units[m]) / half, 0.0, 1.0)
    return out


def second_runs(ratio: np.ndarray, levels: np.ndarray, units: np.ndarray, table: RunTable
                ) -> np.ndarray:
    """Return per pulse the second-nearest allowed length (the neighbour on the side the
    ratio leans to; the length itself where there is none)."""
    r = np.asarray(ratio, dtype=np.float64)
    out = units.copy()
    for lv in (0, 1):
        m = levels == lv
        a = table.allowed[lv]
        i = np.searchsorted(a, units[m])
        up = r[m] >= units[m]
        j = np.where(up, i + 1, i - 1)
        ok = (j >= 0) & (j < a.size)
        alt = units[m].copy()
        alt[ok] = a[j[ok]]
        out[m] = alt
    return out


def _whole_units(ratio: np.ndarray) -> np.ndarray:
    """Return ``np.maximum(np.rint(ratio), 1.0)`` (NaN stays NaN), without maximum's cost."""
    units = np.rint(ratio)
    units[units < 1.0] = 1.0
    return units


def classify(durations_us: np.ndarray, unit_us: float | np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (whole units >= 1 as int64, deviation |d/unit - units| in units) per pulse."""
    ratio = np.asarray(durations_us, dtype=np.float64) / unit_us
    if np.ndim(ratio) == 0:
        units = np.maximum(np.rint(ratio), 1.0)
        return units.astype(np.int64), np.abs(ratio - units)
    units = _whole_units(ratio)
    np.subtract(ratio, units, out=ratio)  # in place: no temporaries on long captures
    np.abs(ratio, out=ratio)
    return units.astype(np.int64), ratio


def _offsets(lengths: np.ndarray) -> np.ndarray:
    """Return where every window starts in the concatenated arrays."""
    return np.concatenate(([0], np.cumsum(lengths)[:-1]))


def _column_sums(x: np.ndarray) -> np.ndarray:
    """Return the sums down the columns of a C-ordered 2-D ``x``, taken in row order as
    ``np.bincount`` adds its weights: numpy reduces over the outer axis row by row, but
    a single column is contiguous and would be summed pairwise, so it is accumulated."""
    if x.shape[1] > 1:
        return np.add.reduce(x, axis=0)
    return np.cumsum(x, axis=0)[-1]


def _column_running_sums(n: np.ndarray) -> np.ndarray:
    """Return ``np.cumsum(n, axis=0)`` of a 2-D int64 ``n`` of small whole numbers as
    float64 (exact either way); with many columns, a row at a time (numpy accumulates
    down the columns one column at a time)."""
    if n.shape[1] < 64:
        return np.cumsum(n, axis=0).astype(np.float64)
    c = n.astype(np.float64)
    for i in range(1, c.shape[0]):
        c[i] += c[i - 1]
    return c


def head_unit(durations_us: np.ndarray, lengths: np.ndarray, unit0_us: np.ndarray,
              head_units: int, iterations: int = 2, *, levels: np.ndarray | None = None,
              table: RunTable | None = None, offsets: np.ndarray | None = None
              ) -> np.ndarray:
    """Return per window the unit in µs refitted over its pulses of the head.

    Each window starts at its first signature pulse; its pulses wholly inside the first
    ``head_units`` units (classified with the current estimate, starting from
    ``unit0_us``) give the least-squares slope of edge time over chip count (every edge
    weighs the same), ``iterations`` times.
    The longer baseline (preamble + sync rather than the signature alone) makes the
    estimate good enough for long runs right after the sync. ``offsets``: where each
    window starts in ``durations_us``, if at hand.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    unit = np.array(unit0_us, dtype=np.float64, copy=True)
    # every pulse is at least one unit, so a window's pulse i ends at unit i + 1 or later:
    # only its first ``head_units`` pulses can lie inside the head; they are laid out as
    # the columns of a (pulse, window) array
    rows = min(max(head_units, 0), int(lengths.max(initial=0)))
    if rows == 0 or d.size == 0:
        return unit
    if offsets is None:
        offsets = _offsets(lengths)
    row = np.arange(rows)[:, None]
    real = row < lengths  # the window has that pulse
    at = offsets + row
    np.minimum(at, d.size - 1, out=at)
    # edge times: the running sum over all windows (after a leading 0) less its value
    # where the window began
    cs = np.empty(d.size + 1)
    cs[0] = 0.0
    d.cumsum(out=cs[1:])
    t = cs[at + 1]
    t -= cs[offsets]
    d = d[at]
    lv = marks = None
    if levels is not None and table is not None:
        lv = np.asarray(levels)[at]
        marks = lv == 1
    fitted = np.zeros(unit.shape)
    for _ in range(iterations):
        if lv is None:
            n, _ = classify(d, unit)
        else:
            n = _nearest_units(d / unit, lv, table, marks)  # type: ignore[arg-type]
        c = _column_running_sums(n)
        w = ((c <= head_units) & real).astype(np.float64)  # a prefix of every column
        npts = _column_sums(w) + 1.0  # + the origin edge (0, 0)
        # the sums below over the rows where some column is still in the head (below them
        # w is 0: the products are +0.0, which leave a sum of terms >= 0 as it is)
        used = max(int(npts.max()) - 1, 1)
        tt, c, w = t[:used], c[:used], w[:used]
        # (t, c >= 0 and w 0 or 1: (t c) w = (t w) c and (c c) w = (c w) c, the same bits)
        tw = tt * w
        cw = c * w
        st = _column_sums(tw)
        sc = _column_sums(cw)
        tw *= c
        cw *= c
        stc = _column_sums(tw)
        scc = _column_sums(cw)
        den = npts * scc - sc * sc
        # the fit only where it can hold (elsewhere 0.0, not taken: no 0 / 0 worked out)
        fit = den > 0
        np.divide(npts * stc - st * sc, den, out=fitted, where=fit)
        fit &= npts >= 3
        fit &= fitted > 0
        unit = np.where(fit, fitted, unit)
    return unit


def track_unit(durations_us: np.ndarray, lengths: np.ndarray, unit0_us: np.ndarray, *,
               gain: float, tolerance: float, iterations: int = 2,
               max_units: int | None = None, levels: np.ndarray | None = None,
               table: RunTable | None = None, offsets: np.ndarray | None = None
               ) -> np.ndarray:
    """Return the unit in µs used to classify each pulse, tracking slow clock drift.

    First-order loop ``u = u + gain * (d_k / n_k - u)`` started at the window's
    ``unit0_us`` and applied once per symbol unit of each pulse (n_k times for a pulse of
    n_k units), so its memory is about ``1 / gain`` units whatever the line code; pulse k
    is classified with the estimate before it. Vectorised: classify with the current
    estimate, run the loop as one IIR filter (``scipy.signal.lfilter``) over ``d_k / n_k``
    repeated per unit, reclassify with the tracked unit, ``iterations`` times. Windows
    are filtered together; each starts afresh (the filter's carry-over from the windows
    before it decays as ``(1 - gain) ** units`` and is subtracted). Pulses off by more
    than ``tolerance`` units do not move the loop (they feed the previous estimate
    back), and no pulse counts for more than ``max_units`` units. With ``levels`` and
    ``table`` pulses go to the nearest allowed run length instead of the nearest whole
    number. ``offsets``: where each window starts in ``durations_us``, if at hand.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    u0 = np.asarray(unit0_us, dtype=np.float64).repeat(lengths)
    if d.size == 0 or gain <= 0.0:
        return u0
    if offsets is None:
        offsets = _offsets(lengths)
    u_prev = u0
    b, a = [gain], [1.0, gain - 1.0]
    marks = None if levels is None or table is None else levels == 1
    for _ in range(iterations):
        if marks is None:
            n, dev = classify(d, u_prev)
        else:  # nearest_runs, the marks found once
            r = d / u_prev
            n = _nearest_units(r, levels, table, marks)  # type: ignore[arg-type]
            dev = np.abs(r - n)
        if max_units is not None:
            np.minimum(n, max_units, out=n)
        x = d / n
        np.copyto(x, u_prev, where=~(dev <= tolerance))  # off pulses feed the estimate back
        x -= u0
        y = lfilter(b, a, x.repeat(n))
        u_prev = _restart_windows(y, n, offsets, lengths, u0, gain)
    return u_prev


def _restart_windows(y: np.ndarray, n: np.ndarray, offsets: np.ndarray, lengths: np.ndarray,
                     u0: np.ndarray, gain: float) -> np.ndarray:
    """Return the unit before every pulse from the loop filter's output ``y`` over the
    chips of all windows (``n`` chips per pulse): the filter state carried over from the
    windows before is subtracted, and each window's first pulse gets its start unit."""
    chips_to = np.cumsum(n)  # chips up to and including each pulse
    w_chip0 = chips_to[offsets - 1]  # chips before each window ...
    w_chip0[offsets == 0] = 0  # ... none before the first
    carry = y[w_chip0 - 1]  # filter state when the window began
    carry[w_chip0 == 0] = 0.0
    span = chips_to - np.repeat(w_chip0, lengths)  # chips since the window began
    # (1 - gain) ** span by a table made with the same np.power: same values, no pow per pulse
    decay = np.power(1.0 - gain, np.arange(int(span.max()) + 1, dtype=np.float64))
    after = np.repeat(carry, lengths)
    after *= decay[span]
    chips_to -= 1  # the last chip of each pulse
    np.subtract(y[chips_to], after, out=after)
    u = np.empty_like(u0)
    np.add(after[:-1], u0[1:], out=u[1:])
    w_first = offsets[lengths > 0]  # w_first[0] is 0
    u[w_first] = u0[w_first]
    return u


#: edges on each side averaged into the local chip phase at the default loop gain 0.05
#: (long enough to average edge jitter, short enough to follow a drifting clock)
PHASE_HALF_WINDOW = 10


#: later edges that also count for an edge's phase: few, so that receiver noise right
#: after a frame's last edge does not move the grid under the frame's last bits
LOOK_AHEAD = 1


def phase_half_window(loop_gain: float) -> int:
    """Return the edges on each side averaged into the local chip phase for a clock
    tracking ``loop_gain``: about 1 / (2 gain), so the phase follows the clock over some
    1 / gain edges; gain 0 freezes the phase over the whole window (no tracking)."""
    if loop_gain <= 0.0:
        return 1 << 30
    return max(1, round(0.5 / loop_gain))


@dataclass(frozen=True, eq=False)
class GridRuns:
    """Pulses of ragged windows placed on the chip grid (see :func:`grid_runs`).

    units: run length of every pulse (int64); deviation: per pulse the larger distance
    of its two edges from their grid points, in units (0.5 = a coin toss);
    residual: per edge (every window has one more edge than pulses) the signed distance
    from its grid point in units; end_residual: that of every pulse's end edge.
    """

    units: np.ndarray
    deviation: np.ndarray
    residual: np.ndarray
    end_residual: np.ndarray


class _Sums:
    """Moving sums over segments of ``lengths`` laid end to end: per element the sum of
    the ``before`` elements before it, itself and the ``after`` elements after it, within
    its own segment (the range ``[max(i - before, start), min(i + after + 1, stop))``).

    Every sum is ``cs[hi] - cs[lo]`` of one running sum ``cs`` (leading 0): for elements
    whose range no segment edge cuts, ``hi - lo`` is the same, so those differences are
    taken between two slices of ``cs``; only the first ``before`` and last ``after``
    elements of each segment look their bounds up (``fix``, ``lo``, ``hi``; in no
    particular order, and an element of a segment shorter than ``before`` or ``after``
    may be listed twice, with the same bounds).
    ``first``: where each segment starts (``cumsum(lengths) - lengths``), if at hand.
    """

    def __init__(self, lengths: np.ndarray, before: int, after: int,
                 first: np.ndarray | None = None) -> None:
        lengths = np.asarray(lengths, dtype=np.int64)
        if first is None:
            first = lengths.cumsum()
            first -= lengths
        stop = first + lengths
        self.size = int(stop[-1]) if stop.size else 0
        self.before, self.after = before, after
        # per segment (row) its first ``before`` and last ``after`` elements (columns; no
        # more than the longest segment holds: ``before`` may stand for a whole segment)
        longest = int(lengths.max(initial=0))
        nb, na = min(before, longest), min(after, longest)
        col = np.arange(nb + na)
        col[nb:] -= nb + na  # 0 .. nb - 1, then -na .. -1 from the stop
        lo_row, hi_row = first[:, None], stop[:, None]
        fix = np.where(col >= 0, lo_row, hi_row) + col
        lo = np.maximum(fix - before, lo_row)
        hi = np.minimum(fix + (after + 1), hi_row)
        if stop.size and int(lengths.min()) < max(nb, na):  # short segments
            real = (fix >= lo_row) & (fix < hi_row)
            self.fix, self.lo, self.hi = fix[real], lo[real], hi[real]
        else:
            self.fix, self.lo, self.hi = fix.ravel(), lo.ravel(), hi.ravel()
        self.first, self.stop = first, stop

    def count_kept(self, dropped: np.ndarray, *, at_least_one: bool = False,
                   seg: np.ndarray | None = None) -> np.ndarray:
        """Return (float64) per element how many elements of its range are not at the
        indices ``dropped`` (ascending, distinct): the same values as the moving sums of
        a keep mask (1.0, 0.0 where dropped), which are whole numbers, counted directly
        (no running sum); ``at_least_one``: 1.0 where none is kept (``np.maximum(count,
        1.0)``: only a range holding a dropped element can count none); ``seg``: the
        segment of each dropped element, if at hand."""
        count = np.full(self.size, float(self.before + self.after + 1))
        count[self.fix] = self.hi - self.lo  # where a segment edge cuts the range
        if dropped.size:
            # a dropped element is in the ranges of the elements up to ``after`` before
            # and ``before`` after it, within its segment (one subtraction per element
            # and dropped element in its range: whole numbers, exact in any order)
            if seg is None:
                seg = self.stop.searchsorted(dropped, "right")
            lo = np.maximum(dropped - self.after, self.first[seg])
            hi = np.minimum(dropped + (self.before + 1), self.stop[seg])
            near = ragged_index(lo, hi - lo)
            np.subtract.at(count, near, 1.0)
            if at_least_one:
                count[near] = np.maximum(count[near], 1.0)
        return count

    def pair(self, re: np.ndarray, im: np.ndarray) -> None:
        """Replace float64 ``re`` and ``im`` by their moving sums (the values of
        ``self(re)`` and ``self(im)``): both running sums in one pass, as the parts of one
        complex running sum (complex numbers add their parts separately, so each part is
        the same running sum), then the differences per part."""
        n = self.size
        cs = np.empty(n + 1, np.complex128)
        cs[0] = 0
        cs.real[1:] = re
        cs.imag[1:] = im
        np.cumsum(cs[1:], out=cs[1:])
        w = self.before + self.after + 1
        fix, hi, lo = self.fix, self.hi, self.lo
        for part, out in ((cs.real, re), (cs.imag, im)):
            if n >= w:
                np.subtract(part[w:], part[:n + 1 - w], out=out[self.before:n - self.after])
            out[fix] = part[hi] - part[lo]

    def __call__(self, x: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
        """Return the moving sums of ``x`` (into ``out`` if given): the same values as
        ``cs[hi] - cs[lo]`` for every element."""
        n = self.size
        cs = np.empty(n + 1, x.dtype)
        cs[0] = 0
        np.cumsum(x, out=cs[1:])
        if out is None:
            out = np.empty(n, x.dtype)
        w = self.before + self.after + 1
        if n >= w:
            np.subtract(cs[w:], cs[:n + 1 - w], out=out[self.before:n - self.after])
        out[self.fix] = cs[self.hi] - cs[self.lo]
        return out


def _moving_sum(x: np.ndarray, sums: _Sums) -> np.ndarray:
    """Return the sums of ``x`` over the ranges of ``sums`` (see :class:`_Sums`)."""
    return sums(x)


def is_allowed(n: np.ndarray, levels: np.ndarray, table: RunTable) -> np.ndarray:
    """Return True where ``n`` is a run length the code allows at the pulse's level."""
    if table.same:
        return (n >= 1) & (n <= table.top)
    # the (length, level) table flattened: one look-up per pulse at 2 n + level (shift and
    # add over the whole array: cheaper than adding to the marks picked by a mask)
    if not table.no_zero:
        at = np.clip(n, 0, table.top + 1)
        at <<= 1
        at += levels != 0
        return table.by_length[at]
    # clipping 2 n + level instead of n: below 0 it finds (0, space) where n < 0 found
    # (0, level), above the end (top + 1, mark) where n > top + 1 found (top + 1, level):
    # all False (no level allows 0 or top + 1)
    at = n << 1
    at += levels != 0
    return table.by_length.take(at, mode="clip")


def _repair(c: np.ndarray, residual: np.ndarray, grid: np.ndarray, pulse_edge: np.ndarray,
            n: np.ndarray, ok: np.ndarray, levels: np.ndarray, table: RunTable,
            in_place: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Return the grid points with one edge of every pulse of a disallowed length moved to
    the grid point on its other side: the edge nearer halfway (the less sure), where that
    leaves both pulses it bounds at allowed lengths, and the residuals ``grid - c`` of
    the new points. A jittered edge that crossed halfway makes exactly such a pair of
    pulses (one too long, one too short). ``in_place``: ``c`` and ``residual`` are
    updated (only the moved edges' residuals are worked out again) and returned."""
    if not in_place:
        c, residual = c.copy(), residual.copy()
    edge, step, _ = _repair_moves(residual, pulse_edge, n, ok, levels, table)
    c[edge] += step
    residual[edge] = grid[edge] - c[edge]
    return c, residual


def _repair_moves(residual: np.ndarray, pulse_edge: np.ndarray, n: np.ndarray,
                  ok: np.ndarray, levels: np.ndarray, table: RunTable,
                  ends: np.ndarray | None = None
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return the moves of :func:`_repair` (same arguments): (the edges moved, ascending
    and distinct; the step of each, +-1.0; the pulse ending at each). ``ends``: True at
    the edges that end a pulse (those of ``pulse_edge``), if at hand."""
    bad = (~ok).nonzero()[0]
    e1 = pulse_edge[bad]  # a bad pulse's end edge; its start edge ends the pulse before
    e0 = e1 - 1
    back = np.abs(residual[e0]) >= np.abs(residual[e1])
    edge = np.where(back, e0, e1)
    step = np.where(residual[edge] > 0, 1.0, -1.0)
    # the pulses before and after the chosen edge (a window's first and last edges are
    # not moved: they bound one pulse only): its start edge must end a pulse, and the
    # edge after it too (after the last edge of all: edge 0, a window's first)
    if ends is None:
        ends = np.zeros(int(pulse_edge[-1]) + 1 if pulse_edge.size else 0, bool)
        ends[pulse_edge] = True
    inner = ends[edge]
    inner &= ends.take(edge + 1, mode="wrap")
    p_before = bad - back  # the pulse ending at ``edge``
    edge, step, p_before = edge[inner], step[inner], p_before[inner]
    whole = step.astype(np.int64)
    n_before = n[p_before] + whole
    n_after = n[p_before + 1] - whole
    fits = is_allowed(n_before, levels[p_before], table) & is_allowed(
        n_after, levels[p_before + 1], table)
    edge, step, p_before = edge[fits], step[fits], p_before[fits]
    # the edges ascend (a pulse's edges lie at or after those of every earlier pulse), so
    # np.unique's first occurrences are where an edge differs from the one before
    first = np.ones(edge.size, bool)
    first[1:] = edge[1:] != edge[:-1]
    return edge[first], step[first], p_before[first]


def _phase_turns(x: np.ndarray, dropped: np.ndarray, sums: _Sums, in_place: bool = False
                 ) -> np.ndarray:
    """Return the angle in turns of the moving sums of the unit phasors of the fractional
    parts of ``x`` over the ranges of ``sums``, those at the indices ``dropped`` left
    out: ``np.angle(S) / (2 * np.pi)`` for S the sums of ``np.exp(2j * np.pi * x)``.

    The cosine and sine parts are taken into two real arrays, their running sums in one
    complex pass (:meth:`_Sums.pair`: complex sums add the parts separately, so the
    values are the same), and the angle is their ``arctan2`` (as ``np.angle`` takes it,
    over contiguous parts); the sums overwrite the parts (fewer fresh pages).
    ``in_place``: ``x`` may be overwritten.
    """
    if in_place:
        turn = x
        turn *= 2 * np.pi
    else:
        turn = 2 * np.pi * x
    re = np.cos(turn)
    np.sin(turn, out=turn)
    im = turn
    re[dropped] = 0.0
    im[dropped] = 0.0
    sums.pair(re, im)
    out = np.arctan2(im, re, out=im)
    out /= 2 * np.pi
    return out


def _unwrap(p: np.ndarray) -> np.ndarray:
    """Return ``np.unwrap(p, period=1.0)`` (same values): only the steps of half a period
    or more are corrected, so only those are worked out."""
    out = p.copy()
    _unwrap_in_place(out)
    return out


def _unwrap_in_place(p: np.ndarray) -> None:
    """Replace ``p`` by :func:`_unwrap` of it (the same values)."""
    dd = p[1:] - p[:-1]  # np.diff
    np.abs(dd, out=dd)
    big = (dd >= 0.5).nonzero()[0]  # the steps of half a period or more, either way
    del dd
    # before the first corrected step the correction is 0.0, still added: -0.0 becomes 0.0
    p[1:int(big[0]) + 1 if big.size else p.size] += 0.0
    if big.size == 0:
        return
    step = p[big + 1] - p[big]  # (p[big] is no -0.0 now; |step| >= 0.5: the same steps)
    mod = np.mod(step + 0.5, 1.0) - 0.5
    mod[(mod == -0.5) & (step > 0)] = 0.5
    # the running sum of the corrections (zero between them: the same sums as a cumsum
    # over every step), held constant from each corrected step to the next: added a
    # stretch at a time where there are few (the same additions as a repeated array)
    level = np.cumsum(mod - step)
    if big.size > _FEW_STRETCHES:
        p[big[0] + 1:] += np.repeat(level, np.diff(np.append(big, p.size - 1)))
        return
    stops = big.tolist()[1:] + [p.size - 1]
    for a, b, v in zip(big.tolist(), stops, level.tolist(), strict=True):
        p[a + 1:b + 1] += v


#: at most this many wraps of a phase are corrected a stretch at a time
_FEW_STRETCHES = 32


def grid_runs(durations_us: np.ndarray, levels: np.ndarray, lengths: np.ndarray,
              unit_us: np.ndarray, table: RunTable, *, half_window: int = PHASE_HALF_WINDOW,
              capped: np.ndarray | None = None, ratio: np.ndarray | None = None,
              offsets: np.ndarray | None = None) -> GridRuns:
    # ``unit_us``: one unit per window, or one per pulse (a tracked clock); ``ratio``, if
    # given, the durations divided by it (``d / np.repeat(unit_us, lengths)``);
    # ``offsets``, if given, where each window starts (``cumsum(lengths) - lengths``)
    """Return the run length of every pulse of ragged windows from its edges' places on
    the chip grid, not from its own duration.

    Every edge of these line codes lies on a chip boundary. Each window's edge times
    (durations divided by ``unit_us``: one per window, or a tracked unit per pulse, so a
    drifting clock leaves only a slow phase wander) are compared with the nearest whole
    chip; the local
    grid phase is the circular mean of those offsets over +-``half_window`` edges
    (phasors, so a phase drifting past half a chip wraps cleanly; then unwrapped). A mark
    bias moves rising and falling edges apart by a few hundredths of a unit: left in the
    phase noise (measuring it per window costs more margin than it gains).
    Each edge goes to its nearest grid point and a pulse's length is the difference of
    its edges' points. An edge may move by almost half a unit either way before it is
    misplaced, where a duration-by-duration decision fails once the two edges of a pulse
    together move it halfway to the next length. Lengths the line code cannot hold at
    that level fall back to the nearest allowed length of the duration. The end of a
    ``capped`` pulse (longer than any run: the gap after a frame) is no grid edge: it is
    left out of the phase.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    if ratio is None:
        u = np.asarray(unit_us, dtype=np.float64)
        u_pulse = u if u.size == d.size and u.size != lengths.size else u.repeat(lengths)
        ratio = d / u_pulse  # durations in (tracked) units
        del u_pulse
    if offsets is None:
        offsets = _offsets(lengths)
    k = lengths.size
    n_edges = lengths + 1
    # edge times from each window's first edge: per window 0, d0, d0 + d1, ...; every edge
    # but a window's first ends a pulse (``ends``), and ``inner`` says which differences
    # of neighbouring edges are pulses (not the step from one window to the next)
    e_start = offsets + np.arange(k)  # window w has w edges before it more than pulses
    ends = np.ones(d.size + k, bool)
    ends[e_start] = False
    inner = ends[1:]
    # (temporaries are overwritten in place and dropped early where the arithmetic stays
    # the same: fewer fresh pages per call)
    x = np.zeros(ends.size)
    x[ends] = ratio
    x.cumsum(out=x)
    x -= x[e_start].repeat(n_edges)
    if capped is not None:
        dropped = capped.nonzero()[0]
        seg = offsets.searchsorted(dropped, "right")  # one past the window of each
        dropped += seg  # pulse -> its end edge
        seg -= 1
    else:
        dropped = seg = np.zeros(0, np.int64)
    # rough phase over +-2 edges (follows a fast drift), unwrapped and averaged over the
    # window; then the circular mean of what is left around it
    b, a = 2 * half_window, LOOK_AHEAD
    near, wide = _Sums(n_edges, 4, a, e_start), _Sums(n_edges, b, a, e_start)
    rough = _phase_turns(x, dropped, near)
    del near
    _unwrap_in_place(rough)
    kept = wide.count_kept(dropped, at_least_one=True, seg=seg)
    rough[dropped] *= 0.0  # (a keep mask's product: 0.0 or -0.0 there, the same elsewhere)
    trend = wide(rough, out=rough)
    trend /= kept
    del kept
    turn = np.subtract(x, trend)
    phase = _phase_turns(turn, dropped, wide, in_place=True)
    phase += trend
    del trend
    _unwrap_in_place(phase)  # a step of the rough phase must not move the grid
    grid = x
    grid -= phase
    del phase
    c = np.rint(grid)
    residual = grid - c
    n = (c[1:] - c[:-1])[inner].astype(np.int64)  # np.diff
    ok = is_allowed(n, levels, table)
    if not ok.all():  # move the less sure edge of a bad pulse to its other grid point
        pulse_edge = ends.nonzero()[0]
        edge, step, p_before = _repair_moves(residual, pulse_edge, n, ok, levels, table,
                                             ends)
        c[edge] += step
        residual[edge] = grid[edge] - c[edge]
        # only the pulses on either side of a moved edge change: their lengths (whole
        # numbers: the same differences as over all edges) and verdicts are redone (a
        # pulse listed twice gets the same values twice)
        near = np.concatenate((p_before, p_before + 1))
        pe = pulse_edge[near]
        n[near] = (c[pe] - c[pe - 1]).astype(np.int64)
        ok[near] = is_allowed(n[near], levels[near], table)
    del c
    bad = (~ok).nonzero()[0]
    if bad.size:
        n[bad] = _nearest_units(ratio[bad], levels[bad], table)
    ar = np.abs(residual)
    ar[dropped] = 0.0
    dev = np.maximum(ar[:-1], ar[1:])[inner]
    return GridRuns(n, dev, residual, residual[ends])
