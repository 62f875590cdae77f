"""Frame candidates: where the pulse train matches the head signature at some clock rate."""

from __future__ import annotations

import math

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ..pulses import pulse_edges_us
from .classify import RunTable, nearest_runs

#: signatures of fewer runs also need every duration's nearest allowed length to match
SHORT_SIGNATURE_RUNS = 8
#: an edge of the signature may lie at most this far (units) from the fitted chip grid
MAX_EDGE_OFFSET = 0.5
#: halvings of the golden-section search for the best grid (a 0.2 clock range narrows to
#: 1e-9 of the unit: far below any edge offset that matters)
MINIMAX_STEPS = 44


def run_spacing(table: RunTable) -> int:
    """Return the step g that any two allowed run lengths of one level differ by a multiple
    of (the gcd of their differences over both levels; 1 when no level has two lengths).

    PWM 1/3 and pulse distance 1/3 have g = 2, NRZ, Manchester and 3-of-6 g = 1. With
    g >= 2 the ideal hard decision (nearest allowed length, known unit) reads every pulse
    right while each edge is within g / 4 of its chip: a pulse's two edges together then
    move it less than halfway to the next allowed length.
    """
    g = 0
    for a in table.allowed:
        if a.size > 1:
            g = math.gcd(g, *np.diff(a).tolist())
    return max(g, 1)


def edge_tolerance(table: RunTable) -> float:
    """Return how far (units) a signature edge may lie from its chip: ``MAX_EDGE_OFFSET``,
    or g / 4 where that is more (``run_spacing``; runs of 1 and 5 units, say)."""
    return max(MAX_EDGE_OFFSET, run_spacing(table) / 4.0)


#: at most this many candidates, find_candidates sums their durations by one running sum
#: down the columns (cheaper per call), else by one add per edge (cheaper per element)
FEW_COLUMNS = 128


def _chips(r: np.ndarray) -> np.ndarray:
    """Return the chip count at each edge of runs of lengths ``r``: ``[0, cumsum(r)]``
    as float64 (the running sum written in place)."""
    c = np.zeros(r.size + 1)
    np.cumsum(r, out=c[1:], dtype=np.float64)
    return c


def find_candidates(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
                    sig_units: np.ndarray, unit_us: float, table: RunTable,
                    clock_error: float, *, edges_us: np.ndarray | None = None
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Return (index of the first signature pulse, estimated unit in µs) per candidate.

    A candidate is a run of pulses with the signature's levels whose edges lie on the
    signature's chip grid at one common unit: the least-squares line of edge time over
    chip count (within ``clock_error`` of ``unit_us``) leaves every edge less than half a
    unit from its chip, so each edge, not each duration, must be right.

    For codes whose run lengths are spaced g >= 2 units apart (``run_spacing``: PWM 1/3,
    pulse distance 1/3) a head the least-squares line misses (its worst edge half a unit
    or more off, or its clock out of range) is fitted once more by the grid, clock within
    range, that minimises the worst edge offset, and is kept when that leaves every edge
    within ``edge_tolerance`` (half a unit, or g / 4 if more). Jitter below g / 4 of a
    unit on every edge (+-50 % for 1/3 codes) is what the ideal hard decision reads
    without a fault; the sent grid then leaves every edge within it, so the best grid
    does too and the head is found, whatever the least-squares line's error (edges of
    +-0.4 unit at random leave it more than half a unit off about once in 700 heads).
    Codes of spacing 1 keep the least-squares test alone: their ideal fails from
    +-25 %, where that test still has a wide margin.

    Vectorised: the
    widest durations such edges allow narrow the positions run by run, then the
    survivors are fitted together. When candidates overlap (a periodic preamble longer
    than the signature) only the last is kept: it is the one next to the sync word.
    ``table`` bounds the signature's runs from above (a longer pulse is no frame run).
    ``edges_us``: the train's edge times ``[0, cumsum(durations_us)]`` if the caller has
    them (the same values as worked out here).
    """
    k = sig_units.size
    n = durations_us.size - k + 1
    if k == 0 or n <= 0:
        return np.zeros(0, np.int64), np.zeros(0)
    r = sig_units.astype(np.float64)
    spacing = run_spacing(table)
    tol = max(MAX_EDGE_OFFSET, spacing / 4.0)  # edge_tolerance(table)
    lo_us = np.maximum(r - 2 * tol, 0.0) * (1.0 - clock_error) * unit_us
    hi_us = np.minimum(r + 2 * tol, table.cap_ratio) * (1.0 + clock_error) * unit_us
    cand = np.flatnonzero(_runs_fit(levels, durations_us, sig_levels, lo_us, hi_us))
    cand = _spans_fit(cand, durations_us, r, (1.0 + clock_error) * unit_us, tol, edges_us)
    if cand.size == 0:
        return cand.astype(np.int64), np.zeros(0)
    # edge times from each candidate's first edge: the running sums of its k durations,
    # built as the rows of an (edge, candidate) array ``tt``, one vector add per edge (the
    # same sums in the same order as a running sum along each candidate, at far less
    # cost than one over many short rows), then transposed for the fit; the durations
    # are gathered straight into ``tt`` (mode "clip": every index is in range, so the
    # same values, without the copy numpy's default mode makes of its output). For few
    # candidates one running sum down the columns does the same adds in one call.
    tt = np.empty((k + 1, cand.size))
    tt[0] = 0.0
    np.take(durations_us, cand + np.arange(k)[:, None], out=tt[1:], mode="clip")
    if cand.size <= FEW_COLUMNS:
        np.cumsum(tt, axis=0, out=tt)
    else:
        for j in range(2, k + 1):
            tt[j] += tt[j - 1]
    t = tt.T.copy()
    d = sliding_window_view(durations_us, k)[cand] if k < SHORT_SIGNATURE_RUNS else None
    scratch = np.empty_like(t)
    unit, offset = _fit_line(t, r, scratch)
    del scratch
    ok = np.abs(unit / unit_us - 1.0) <= clock_error  # cheap: before the edge offsets
    # every row's worst edge from the line, taken column by column of ``tt`` (the same
    # values as over the rows in range alone)
    with np.errstate(invalid="ignore", over="ignore"):
        line_worst = _worst_edge_columns(tt, r, unit, offset)
    if spacing > 1:  # the line, else the best grid (see above)
        worst = np.where(ok, line_worst, np.inf)
        miss = np.flatnonzero(worst >= MAX_EDGE_OFFSET)
        if miss.size:
            lo_unit, hi_unit = unit_us * (1.0 - clock_error), unit_us * (1.0 + clock_error)
            # heads no grid in range can fit (a floor of the best worst offset at or above
            # the tolerance) are dropped before the search: they would be dropped after it
            hopeless = _spread_floor(t[miss], r, lo_unit, hi_unit) >= tol + FLOOR_MARGIN
            worst[miss[hopeless]] = np.inf
            miss = miss[~hopeless]
        if miss.size:
            best_unit, best = _minimax_edge(t[miss], r, lo_unit, hi_unit,
                                            tt=np.take(tt, miss, axis=1))
            worst[miss] = best
            unit[miss] = np.where(ok[miss], unit[miss], best_unit)  # the line's if in range
        ok = worst < tol
    else:
        cand, unit = cand[ok], unit[ok]
        if d is not None:
            d = d[ok]
        worst = line_worst[ok]
        ok = worst < MAX_EDGE_OFFSET
    if d is not None:  # few runs say little: every duration must fit as well
        got, _ = nearest_runs(d / unit[:, None], np.broadcast_to(sig_levels, d.shape), table)
        ok &= (got == sig_units).all(axis=1)
    cand, unit, worst = cand[ok], unit[ok], worst[ok]
    if cand.size > 1:
        cand, unit = _one_per_cluster(cand, unit, worst, k)
    return cand.astype(np.int64), unit


def _runs_fit(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
              lo_us: np.ndarray, hi_us: np.ndarray) -> np.ndarray:
    """Return per position i (as many as the signature fits into the train) whether every
    pulse i + j has the level ``sig_levels[j]`` and a duration strictly between
    ``lo_us[j]`` and ``hi_us[j]``.

    One pass over the train per distinct (level, bounds) of the signature (a preamble
    has few), then the signature's tests ANDed along it as shifted slices: cheaper than
    narrowing the positions run by run (the same values: every test is per pulse). A
    test that recurs at evenly spaced runs (a periodic preamble) is ANDed over all its
    shifts by doubling (:func:`_and_over_shifts`): AND is exact in any order and grouping.
    """
    k = sig_levels.size
    n = durations_us.size - k + 1
    shifts: dict[tuple[int, float, float], list[int]] = {}
    for j, key in enumerate(zip(sig_levels.tolist(), lo_us.tolist(), hi_us.tolist(),
                                strict=True)):
        shifts.setdefault(key, []).append(j)
    fits = np.ones(n, bool)
    for (level, lo, hi), js in shifts.items():
        ok = levels == level
        ok &= durations_us > lo
        ok &= durations_us < hi
        _and_over_shifts(fits, ok, js)
    return fits


def _and_over_shifts(fits: np.ndarray, ok: np.ndarray, js: list[int]) -> None:
    """AND into ``fits`` (length n) ``ok[j:j + n]`` for every shift j of ``js`` (ascending,
    ``ok`` long enough for the last). Evenly spaced shifts j0 + q p (q < m) take about
    2 log2(m) passes: the AND of 2h shifts is that of h shifts and of the same h moved
    by h p, and m's binary digits say which of these blocks to AND in."""
    n = fits.size
    j0, m = js[0], len(js)
    p = js[1] - j0 if m > 1 else 1
    if m < 4 or js != list(range(j0, j0 + m * p, p)):
        for j in js:
            fits &= ok[j:j + n]
        return
    block = ok[j0:]  # block[i]: the AND over h shifts from j0 + i (h = 1, 2, 4, ...)
    h, done = 1, 0
    while True:
        if m & h:
            fits &= block[done * p:done * p + n]
            done += h
        if 2 * h > m:
            return
        block = block[:-h * p] & block[h * p:]
        h *= 2
#: fits whose worst edge offsets differ by less than this (units) count as equally good
FIT_STEP = 0.1
#: steps by which the best fit must beat the latest candidate to be framed as well
CLEARLY_BETTER = 2


def _one_per_cluster(cand: np.ndarray, unit: np.ndarray, worst: np.ndarray, k: int
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Keep of every cluster of overlapping candidates (less than ``k`` pulses apart) the
    latest and, where it fits clearly better (worst edge offset at least CLEARLY_BETTER
    steps of FIT_STEP lower), the best fit as well.

    A periodic preamble matches at several shifts about equally well, and the latest is
    next to the sync word; but a shift that reaches into the sync can also fit by bending
    the clock (short signatures), leaving some edge far off its chip: then the best fit
    is the true one. Both are framed; a frame found from the earlier one covers the other.
    """
    n = cand.size
    split = cand[1:] - cand[:-1] >= k  # a new cluster starts after each True
    cluster = np.zeros(n, np.int64)
    np.cumsum(split, dtype=np.int64, out=cluster[1:])
    score = np.floor(worst / FIT_STEP)
    order = np.lexsort((-cand, score, cluster))  # per cluster: best score, latest first
    sorted_cluster = cluster[order]
    first = np.empty(n, bool)
    first[0] = True
    np.not_equal(sorted_cluster[1:], sorted_cluster[:-1], out=first[1:])
    best_i = order[first]
    last = np.empty(n, bool)  # the latest of each cluster
    last[:-1] = split
    last[-1] = True
    last_i = np.flatnonzero(last)
    # the best fit also, where it is clearly better than the latest (by CLEARLY_BETTER)
    clearly = score[best_i] <= score[last_i] - CLEARLY_BETTER
    keep = last.copy()
    keep[best_i[clearly]] = True
    # a signature of preamble runs alone also matches where the data repeats the preamble
    # right after the sync: then the latest is inside the body. Every run of good fits that
    # ends at a clearly worse fit (a shift reaching into the sync) is a place the sync may
    # follow, so the latest of each such run is framed too.
    good = score < score[best_i][cluster] + CLEARLY_BETTER
    keep[:-1] |= good[:-1] & ~good[1:] & ~split
    return cand[keep], unit[keep]

def _spans_fit(cand: np.ndarray, durations_us: np.ndarray, r: np.ndarray, max_unit_us: float,
               tol: float = MAX_EDGE_OFFSET, edges_us: np.ndarray | None = None
               ) -> np.ndarray:
    """Return the candidates whose spans of pulses keep the signature's proportions.

    If every edge lies within ``tol`` units u of its chip (the final test), the time S_j
    from the first edge to edge j and the whole span S_k obey
    |S_j C_k - C_j S_k| <= 2 tol (C_k + C_j) u for chip counts C; whatever the clock. Checked
    at every eighth of the signature, it drops most positions
    inside frames (runs of other lengths) before any fit, and never a true head.
    ``edges_us``: ``[0, cumsum(durations_us)]`` if known (see :func:`find_candidates`).
    """
    k = r.size
    if k < 4 or cand.size == 0:
        return cand
    c = _chips(r)
    t = pulse_edges_us(durations_us) if edges_us is None else edges_us
    begin = t[cand]
    total = t[cand + k] - begin
    # every test over all candidates at once, one row per tested edge j (the same
    # operations, element by element, as one test after the other)
    js = np.array(sorted({k * q // 8 for q in range(1, 8)} - {0}))
    part = t[cand + js[:, None]]
    part -= begin
    part *= c[k]
    part -= c[js][:, None] * total
    np.abs(part, out=part)
    keep = (part <= (2 * tol * (c[k] + c[js]) * max_unit_us)[:, None]).all(axis=0)
    return cand[keep]


def _edge_line(d: np.ndarray, r: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return per row (edge times from the first edge, unit in µs: NaN unless positive,
    offset of the first edge from the line in units) of the least-squares line of edge
    time over chip count for rows of durations ``d`` with run lengths ``r``.

    The fit runs over every row at once, as one matrix-vector product: its rounding (and
    so a worst offset right at a ``FIT_STEP`` boundary) depends on the whole matrix, so
    the rows are not split or filtered before it.
    """
    t = np.empty((d.shape[0], r.size + 1))
    t[:, 0] = 0.0
    np.cumsum(d, axis=1, out=t[:, 1:])  # the running sums of each row, written in place
    unit, offset = _fit_line(t, r)
    return t, unit, offset


def _fit_line(t: np.ndarray, r: np.ndarray, scratch: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray]:
    """Return (unit, offset) of :func:`_edge_line` from its edge times ``t``; ``scratch``
    (the shape of ``t``) holds the centred times if given."""
    c = _chips(r)
    # the means as numpy's mean works them out (a sum, then one division by the count)
    cm = np.add.reduce(c) / c.size
    tm = np.add.reduce(t, axis=1)
    tm /= t.shape[1]
    centred = np.subtract(t, tm[:, None], out=scratch)
    dc = c - cm
    slope = (centred @ dc) / (dc @ dc)
    unit = np.where(slope > 0, slope, np.nan)
    offset = (tm - slope * cm) / unit
    return unit, offset


#: at most this many edge offsets (heads x edges) a step, :func:`_minimax_edge` searches
#: head by head in Python floats (cheaper than numpy's cost per call), else all heads at
#: once in arrays; the same values
SCALAR_WORK = 96


def _minimax_edge(t: np.ndarray, r: np.ndarray, lo_unit_us: float, hi_unit_us: float, *,
                  tt: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Return per row (unit in µs, worst edge offset in units of that unit) of the chip
    grid with a unit in [``lo_unit_us``, ``hi_unit_us``] that leaves the smallest worst
    edge offset, for rows of edge times ``t`` (from the first edge, as
    :func:`_edge_line` returns them) with run lengths ``r``.

    In the inverse unit v the offset of edge j is t_j v - c_j - o, linear in (v, o); the
    best o halves the spread of t_j v - c_j, and that spread is convex (a maximum of
    linear functions less a minimum of them) in v: a golden-section search over v finds
    its minimum, every row on its own (the rows' values do not depend on the other
    rows). Few rows are searched one by one in Python floats (:func:`_minimax_rows`),
    more all at once in arrays (:func:`_minimax_columns`; ``tt``: ``t.T``, C-ordered,
    if the caller has it): the same values.
    """
    if t.shape[0] * t.shape[1] <= SCALAR_WORK:
        return _minimax_rows(t, r, lo_unit_us, hi_unit_us)
    if tt is None:
        tt = np.ascontiguousarray(t.T)
    return _minimax_columns(tt, r, lo_unit_us, hi_unit_us)


def _minimax_rows(t: np.ndarray, r: np.ndarray, lo_unit_us: float, hi_unit_us: float
                  ) -> tuple[np.ndarray, np.ndarray]:
    """Return :func:`_minimax_edge` of rows ``t`` (the same values), row by row in Python
    floats: each elementwise step (``*``, ``-``, ``/``) is the same IEEE double operation
    as numpy's on float64, and a largest or smallest value is exact in any order; the
    times are finite (candidates' durations are bounded), so no NaN orders differently."""
    cs = _chips(r).tolist()
    phi = (math.sqrt(5.0) - 1.0) / 2.0
    lo_v, hi_v = 1.0 / hi_unit_us, 1.0 / lo_unit_us
    units: list[float] = []
    worst: list[float] = []
    for row in t.tolist():
        edges = list(zip(row, cs, strict=True))

        def half_spread(v: float, edges: list[tuple[float, float]] = edges) -> float:
            e = [tj * v - cj for tj, cj in edges]
            return (max(e) - min(e)) / 2.0

        a, b = lo_v, hi_v
        step = (b - a) * phi
        x1, x2 = b - step, a + step
        f1, f2 = half_spread(x1), half_spread(x2)
        for _ in range(MINIMAX_STEPS):
            if f1 <= f2:  # the minimum lies in [a, x2]
                b, x2, f2 = x2, x1, f1
                x1 = b - (b - a) * phi
                f1 = half_spread(x1)
            else:
                a, x1, f1 = x1, x2, f2
                x2 = a + (b - a) * phi
                f2 = half_spread(x2)
        units.append(1.0 / (x1 if f1 <= f2 else x2))
        worst.append(f1 if f1 <= f2 else f2)
    return np.array(units, dtype=np.float64), np.array(worst, dtype=np.float64)


def _minimax_columns(tt: np.ndarray, r: np.ndarray, lo_unit_us: float, hi_unit_us: float
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Return :func:`_minimax_edge` for edge times laid out as columns (``tt``: one
    column per row of ``t``), all rows at once: the largest and smallest offsets are
    taken across rows of ``tt``, which numpy does a whole row at a time."""
    c = _chips(r)[:, None]
    buf = np.empty_like(tt)

    def half_spread(v: np.ndarray) -> np.ndarray:
        e = np.multiply(tt, v, out=buf)
        np.subtract(e, c, out=e)
        out = np.maximum.reduce(e, axis=0)
        out -= np.minimum.reduce(e, axis=0)
        out /= 2.0
        return out

    a = np.full(tt.shape[1], 1.0 / hi_unit_us)
    b = np.full(tt.shape[1], 1.0 / lo_unit_us)
    phi = (math.sqrt(5.0) - 1.0) / 2.0
    step = b - a
    step *= phi
    x1, x2 = b - step, a + step
    f1, f2 = half_spread(x1), half_spread(x2)
    for _ in range(MINIMAX_STEPS):
        left = f1 <= f2  # the minimum lies in [a, x2]
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
        step = b - a
        step *= phi  # phi (b - a) once, for both ends
        new = np.where(left, b - step, a + step)
        fn = half_spread(new)
        x1, x2 = np.where(left, new, x2), np.where(left, x1, new)
        f1, f2 = np.where(left, fn, f2), np.where(left, f1, fn)
    return 1.0 / np.where(f1 <= f2, x1, x2), np.minimum(f1, f2)


#: how far (units) above the tolerance :func:`_spread_floor` must be to drop a head: far
#: above the rounding of either computation
FLOOR_MARGIN = 1e-6


def _spread_floor(t: np.ndarray, r: np.ndarray, lo_unit_us: float, hi_unit_us: float
                  ) -> np.ndarray:
    """Return per row a floor of the worst edge offset :func:`_minimax_edge` finds (same
    arguments), up to rounding: no grid with a unit in range leaves every edge nearer.

    In the inverse unit v, half the spread h(v) of t_j v - c_j is at least half of
    (t_j - t_k) v - (c_j - c_k) for any two edges j, k. Taking the pairs that make the
    spread at either end of the range gives two lines under h; the smallest value of the
    larger of them over the range (at an end or where they cross) is under h's minimum.
    """
    c = _chips(r)
    lo_v, hi_v = 1.0 / hi_unit_us, 1.0 / lo_unit_us
    rows = np.arange(t.shape[0])

    def line_at(v: float) -> tuple[np.ndarray, np.ndarray]:
        e = t * v - c
        top, bottom = e.argmax(axis=1), e.argmin(axis=1)
        return t[rows, top] - t[rows, bottom], c[top] - c[bottom]  # slope, intercept

    s1, k1 = line_at(lo_v)
    s2, k2 = line_at(hi_v)

    def upper(v: np.ndarray | float) -> np.ndarray:
        return np.maximum(s1 * v - k1, s2 * v - k2)

    floor = np.minimum(upper(lo_v), upper(hi_v))
    with np.errstate(divide="ignore", invalid="ignore"):
        cross = (k1 - k2) / (s1 - s2)
    at_cross = np.where((cross > lo_v) & (cross < hi_v), upper(cross), np.inf)
    np.minimum(floor, at_cross, out=floor)
    return floor / 2.0


def _worst_edge_columns(tt: np.ndarray, r: np.ndarray, unit: np.ndarray, offset: np.ndarray
                        ) -> np.ndarray:
    """Return :func:`_worst_edge` of ``tt.T`` (the same values) for edge times laid out as
    columns (one per row of ``t``): every element is worked out alike, and the largest
    is taken across rows of ``tt``, which numpy does a whole row at a time."""
    c = _chips(r)[:, None]
    w = np.divide(tt, unit, out=np.empty_like(tt))
    w -= offset
    w -= c
    np.abs(w, out=w)
    return w.max(axis=0)


def _worst_edge(t: np.ndarray, r: np.ndarray, unit: np.ndarray, offset: np.ndarray,
                out: np.ndarray | None = None) -> np.ndarray:
    """Return per row the largest distance (units) of an edge at times ``t`` from the
    line ``unit``, ``offset`` (see :func:`_edge_line`) for rows with run lengths ``r``
    (``out``: space the shape of ``t`` to work in)."""
    c = _chips(r)
    w = np.divide(t, unit[:, None], out=out)
    w -= offset[:, None]
    w -= c
    np.abs(w, out=w)
    return w.max(axis=1)
