"""The candidate search (``detect.find_candidates`` and its helpers) gives the same
results, to the last bit, as before its speed-ups.

Reference for every check below: the implementation at commit 685f57c (git history of
ookframe/decode/detect.py), kept verbatim here as ``_ref_*`` (docstrings shortened); the
checks compare bit for bit (dtype, shape and bytes): the grid search on random heads
(jittered, quantised and exact edges, one head to hundreds), and whole candidate
searches on trains of every example spec through every channel preset and uniform
jitter.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from numpy.lib.stride_tricks import sliding_window_view

from ookframe.channel import ChannelSpec, apply_channel
from ookframe.channel.presets import PRESETS
from ookframe.decode import compile_decoder, detect
from ookframe.decode.classify import RunTable, nearest_runs
from ookframe.decode.detect import (
    CLEARLY_BETTER,
    FIT_STEP,
    FLOOR_MARGIN,
    MAX_EDGE_OFFSET,
    MINIMAX_STEPS,
    SHORT_SIGNATURE_RUNS,
    find_candidates,
)
from ookframe.decode.glitch import drop_glitches
from ookframe.decode.head import MAX_CLOCK_ERROR
from ookframe.pulses import pulse_edges_us
from ookframe.spec_io import load_spec
from ookframe.stress.batch import random_batch

EXAMPLES = sorted((Path(__file__).parent.parent / "ookframe" / "examples").glob("*.toml"))

# --- references: the implementation at commit 685f57c ----------------------------------

def _ref_run_spacing(table: RunTable) -> int:
    """Reference (685f57c): Return the step g that any two allowed run lengths of one level differ by a multiple."""
    g = 0
    for a in table.allowed:
        if a.size > 1:
            g = math.gcd(g, *np.diff(a).tolist())
    return max(g, 1)


def _ref_edge_tolerance(table: RunTable) -> float:
    """Reference (685f57c): Return how far (units) a signature edge may lie from its chip: ``MAX_EDGE_OFFSET``."""
    return max(MAX_EDGE_OFFSET, _ref_run_spacing(table) / 4.0)


def _ref_find_candidates(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
                    sig_units: np.ndarray, unit_us: float, table: RunTable,
                    clock_error: float, *, edges_us: np.ndarray | None = None
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Reference (685f57c): Return (index of the first signature pulse, estimated unit in µs) per candidate."""
    k = sig_units.size
    n = durations_us.size - k + 1
    if k == 0 or n <= 0:
        return np.zeros(0, np.int64), np.zeros(0)
    r = sig_units.astype(np.float64)
    tol = _ref_edge_tolerance(table)
    lo_us = np.maximum(r - 2 * tol, 0.0) * (1.0 - clock_error) * unit_us
    hi_us = np.minimum(r + 2 * tol, table.cap_ratio) * (1.0 + clock_error) * unit_us
    cand = np.flatnonzero(_ref_runs_fit(levels, durations_us, sig_levels, lo_us, hi_us))
    cand = _ref_spans_fit(cand, durations_us, r, (1.0 + clock_error) * unit_us, tol, edges_us)
    if cand.size == 0:
        return cand.astype(np.int64), np.zeros(0)
    # edge times from each candidate's first edge: the running sums of its k durations,
    # built as the rows of an (edge, candidate) array ``tt``, one vector add per edge (the
    # same sums in the same order as a running sum along each candidate, at far less
    # cost than one over many short rows), then transposed for the fit
    tt = np.empty((k + 1, cand.size))
    tt[0] = 0.0
    np.take(durations_us, cand + np.arange(k)[:, None], out=tt[1:])
    for j in range(2, k + 1):
        tt[j] += tt[j - 1]
    t = tt.T.copy()
    d = sliding_window_view(durations_us, k)[cand] if k < SHORT_SIGNATURE_RUNS else None
    scratch = np.empty_like(t)
    unit, offset = _ref_fit_line(t, r, scratch)
    del scratch
    ok = np.abs(unit / unit_us - 1.0) <= clock_error  # cheap: before the edge offsets
    # every row's worst edge from the line, taken column by column of ``tt`` (the same
    # values as over the rows in range alone)
    with np.errstate(invalid="ignore", over="ignore"):
        line_worst = _ref_worst_edge_columns(tt, r, unit, offset)
    if _ref_run_spacing(table) > 1:  # the line, else the best grid (see above)
        worst = np.where(ok, line_worst, np.inf)
        miss = np.flatnonzero(worst >= MAX_EDGE_OFFSET)
        if miss.size:
            lo_unit, hi_unit = unit_us * (1.0 - clock_error), unit_us * (1.0 + clock_error)
            # heads no grid in range can fit (a floor of the best worst offset at or above
            # the tolerance) are dropped before the search: they would be dropped after it
            hopeless = _ref_spread_floor(t[miss], r, lo_unit, hi_unit) >= tol + FLOOR_MARGIN
            worst[miss[hopeless]] = np.inf
            miss = miss[~hopeless]
        if miss.size:
            best_unit, best = _ref_minimax_edge(t[miss], r, lo_unit, hi_unit,
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
        cand, unit = _ref_one_per_cluster(cand, unit, worst, k)
    return cand.astype(np.int64), unit


def _ref_runs_fit(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
              lo_us: np.ndarray, hi_us: np.ndarray) -> np.ndarray:
    """Reference (685f57c): Return per position i (as many as the signature fits into the train) whether every."""
    k = sig_levels.size
    n = durations_us.size - k + 1
    tests: dict[tuple[int, float, float], np.ndarray] = {}
    fits = np.ones(n, bool)
    for j in range(k):
        key = (int(sig_levels[j]), float(lo_us[j]), float(hi_us[j]))
        ok = tests.get(key)
        if ok is None:
            ok = levels == sig_levels[j]
            ok &= durations_us > lo_us[j]
            ok &= durations_us < hi_us[j]
            tests[key] = ok
        fits &= ok[j:j + n]
    return fits


def _ref_one_per_cluster(cand: np.ndarray, unit: np.ndarray, worst: np.ndarray, k: int
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Reference (685f57c): Keep of every cluster of overlapping candidates (less than ``k`` pulses apart) the."""
    cluster = np.concatenate(([0], np.cumsum(np.diff(cand) >= k)))
    score = np.floor(worst / FIT_STEP)
    order = np.lexsort((-cand, score, cluster))  # per cluster: best score, latest first
    best_i = order[np.concatenate(([True], cluster[order][1:] != cluster[order][:-1]))]
    last = np.append(cluster[1:] != cluster[:-1], True)
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
    keep[:-1] |= good[:-1] & ~good[1:] & (cluster[1:] == cluster[:-1])
    return cand[keep], unit[keep]


def _ref_spans_fit(cand: np.ndarray, durations_us: np.ndarray, r: np.ndarray, max_unit_us: float,
               tol: float = MAX_EDGE_OFFSET, edges_us: np.ndarray | None = None
               ) -> np.ndarray:
    """Reference (685f57c): Return the candidates whose spans of pulses keep the signature's proportions."""
    k = r.size
    if k < 4 or cand.size == 0:
        return cand
    c = np.concatenate(([0.0], np.cumsum(r)))
    t = pulse_edges_us(durations_us) if edges_us is None else edges_us
    begin = t[cand]
    total = t[cand + k] - begin
    # every test over all candidates, worked out in place, and one selection at the end
    # (cheaper than narrowing three arrays after each test; the same verdicts)
    keep = np.ones(cand.size, bool)
    for j in sorted({k * q // 8 for q in range(1, 8)} - {0}):
        part = t[cand + j]
        part -= begin
        part *= c[k]
        part -= c[j] * total
        np.abs(part, out=part)
        keep &= part <= 2 * tol * (c[k] + c[j]) * max_unit_us
    return cand[keep]


def _ref_fit_line(t: np.ndarray, r: np.ndarray, scratch: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray]:
    """Reference (685f57c): Return (unit, offset) of :func:`_edge_line` from its edge times ``t``; ``scratch``."""
    c = np.concatenate(([0.0], np.cumsum(r)))
    cm = c.mean()
    tm = t.mean(axis=1)
    centred = np.subtract(t, tm[:, None], out=scratch)
    slope = (centred @ (c - cm)) / ((c - cm) @ (c - cm))
    unit = np.where(slope > 0, slope, np.nan)
    offset = (tm - slope * cm) / unit
    return unit, offset


def _ref_minimax_edge(t: np.ndarray, r: np.ndarray, lo_unit_us: float, hi_unit_us: float, *,
                  tt: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Reference (685f57c): Return per row (unit in µs, worst edge offset in units of that unit) of the chip."""
    c = np.concatenate(([0.0], np.cumsum(r)))[:, None]
    if tt is None:
        tt = np.ascontiguousarray(t.T)
    buf = np.empty_like(tt)

    def half_spread(v: np.ndarray) -> np.ndarray:
        e = np.multiply(tt, v, out=buf)
        e -= c
        out = e.max(axis=0)
        out -= e.min(axis=0)
        out /= 2.0
        return out

    a = np.full(t.shape[0], 1.0 / hi_unit_us)
    b = np.full(t.shape[0], 1.0 / lo_unit_us)
    phi = (math.sqrt(5.0) - 1.0) / 2.0
    x1, x2 = b - phi * (b - a), a + phi * (b - a)
    f1, f2 = half_spread(x1), half_spread(x2)
    for _ in range(MINIMAX_STEPS):
        left = f1 <= f2  # the minimum lies in [a, x2]
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
        x2n = np.where(left, x1, a + phi * (b - a))
        x1n = np.where(left, b - phi * (b - a), x2)
        new = np.where(left, x1n, x2n)
        fn = half_spread(new)
        f1, f2 = np.where(left, fn, f2), np.where(left, f1, fn)
        x1, x2 = x1n, x2n
    return 1.0 / np.where(f1 <= f2, x1, x2), np.minimum(f1, f2)


def _ref_spread_floor(t: np.ndarray, r: np.ndarray, lo_unit_us: float, hi_unit_us: float
                  ) -> np.ndarray:
    """Reference (685f57c): Return per row a floor of the worst edge offset :func:`_minimax_edge` finds (same."""
    c = np.concatenate(([0.0], np.cumsum(r)))
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


def _ref_worst_edge_columns(tt: np.ndarray, r: np.ndarray, unit: np.ndarray, offset: np.ndarray
                        ) -> np.ndarray:
    """Reference (685f57c): Return :func:`_worst_edge` of ``tt.T`` (the same values) for edge times laid out as."""
    c = np.concatenate(([0.0], np.cumsum(r)))[:, None]
    w = np.divide(tt, unit, out=np.empty_like(tt))
    w -= offset
    w -= c
    np.abs(w, out=w)
    return w.max(axis=0)


# --- checks -----------------------------------------------------------------------------


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    """Equal dtype, shape and bits."""
    return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()


def _heads(rng: np.random.Generator, m: int, k: int, kind: str
           ) -> tuple[np.ndarray, np.ndarray]:
    """Return (edge times from the first edge, run lengths) of ``m`` random heads of
    ``k`` runs: jittered up to +-0.8 unit, rounded to whole µs, or exact."""
    r = rng.choice([1.0, 2.0, 3.0, 5.0], k)
    unit = 350.0 * rng.uniform(0.85, 1.15, (m, 1))
    if kind == "exact":
        d = np.broadcast_to(r * 350.0, (m, k)).copy()
    else:
        d = (r + rng.uniform(-0.8, 0.8, (m, k))) * unit
        if kind == "quantised":
            d = np.round(d)
    return np.concatenate((np.zeros((m, 1)), np.cumsum(d, axis=1)), axis=1), r


@pytest.mark.parametrize("kind", ["jitter", "quantised", "exact"])
@pytest.mark.parametrize("m", [1, 2, 3, 7, 8, 40, 300])
def test_grid_search_matches_reference(kind, m):
    """``_minimax_edge`` (both its row-by-row and its all-rows form, whichever it picks)
    equals the reference's units and worst offsets, for signatures of 2 to 31 runs."""
    rng = np.random.default_rng(m * 7 + len(kind))
    for k in (2, 5, 12, 20, 31):
        t, r = _heads(rng, m, k, kind)
        want = _ref_minimax_edge(t, r, 315.0, 385.0)
        for got in (detect._minimax_edge(t, r, 315.0, 385.0),
                    detect._minimax_edge(t, r, 315.0, 385.0, tt=np.ascontiguousarray(t.T)),
                    detect._minimax_rows(t, r, 315.0, 385.0),
                    detect._minimax_columns(np.ascontiguousarray(t.T), r, 315.0, 385.0)):
            assert _same(got[0], want[0]) and _same(got[1], want[1]), (k, m, kind)


def test_grid_search_picks_rows_for_few_heads_only():
    """The row-by-row form is used up to ``SCALAR_WORK`` edge offsets a step, the
    all-rows form beyond (both checked above against the reference)."""
    rng = np.random.default_rng(3)
    used = []
    real_rows, real_cols = detect._minimax_rows, detect._minimax_columns
    try:
        detect._minimax_rows = lambda *a: used.append("rows") or real_rows(*a)
        detect._minimax_columns = lambda *a: used.append("columns") or real_cols(*a)
        for m in (1, 7, 8, 100):
            t, r = _heads(rng, m, 12, "jitter")
            detect._minimax_edge(t, r, 315.0, 385.0)
    finally:
        detect._minimax_rows, detect._minimax_columns = real_rows, real_cols
    assert used == ["rows", "rows", "columns", "columns"]


def _channels(unit_us: float) -> list[ChannelSpec]:
    return [*PRESETS.values(), ChannelSpec(jitter_us=0.25 * unit_us, jitter_kind="uniform"),
            ChannelSpec(jitter_us=0.4 * unit_us, jitter_kind="uniform")]


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_candidates_match_reference_on_example_trains(path):
    """find_candidates (candidates and units, edge times given or not) equals the
    reference on trains of every example spec, every preset and +-25 %, +-40 % jitter
    (heads the least-squares line misses, so the grid search runs, for 1/3 codes)."""
    spec = load_spec(path)
    hm = compile_decoder(spec)
    for k, ch in enumerate(_channels(spec.unit_us)):
        for seed, n in ((1, 150), (2, 1), (3, 4)):
            rng = np.random.default_rng(seed)
            b = random_batch(spec, n, rng)
            rx = apply_channel(b.train, ch, rng, burst_starts_us=b.starts_us)
            clean = drop_glitches(rx.levels, rx.durations_us,
                                  spec.decoder.glitch_fraction * spec.unit_us)
            args = (clean.levels, clean.durations_us, hm.sig_levels, hm.sig_units,
                    spec.unit_us, hm.runs, MAX_CLOCK_ERROR)
            want_first, want_unit = _ref_find_candidates(*args)
            for edges in (None, pulse_edges_us(clean.durations_us)):
                first, unit = find_candidates(*args, edges_us=edges)
                assert _same(first, want_first) and _same(unit, want_unit), (k, seed)


def test_helpers_match_reference_on_random_candidates():
    """_one_per_cluster (clusters of every size, tied and untied scores), _spans_fit and
    _fit_line equal the reference on random candidates, one to thousands."""
    rng = np.random.default_rng(21)
    for n in (1, 2, 5, 40, 3000):
        for k in (4, 12, 29):
            cand = np.sort(rng.choice(20 * n + k, n, replace=False)).astype(np.int64)
            unit = rng.uniform(300.0, 400.0, n)
            worst = rng.choice([0.05, 0.1, 0.2, 0.25, 0.31, 0.45], n) + rng.uniform(0, 0.02, n)
            got = detect._one_per_cluster(cand, unit, worst, k)
            want = _ref_one_per_cluster(cand, unit, worst, k)
            assert _same(got[0], want[0]) and _same(got[1], want[1]), (n, k)
            r = rng.choice([1.0, 3.0], k)
            d = np.round(rng.uniform(150.0, 1300.0, 21 * n + 2 * k))
            pos = cand[cand + k <= d.size]
            for tol in (0.5, 0.75):
                assert _same(detect._spans_fit(pos, d, r, 385.0, tol),
                             _ref_spans_fit(pos, d, r, 385.0, tol)), (n, k, tol)
            rows = np.round(rng.uniform(150.0, 1300.0, (n, k)))
            t = np.concatenate((np.zeros((n, 1)), np.cumsum(rows, axis=1)), axis=1)
            for got_a, want_a in zip(detect._fit_line(t, r), _ref_fit_line(t, r), strict=True):
                assert _same(got_a, want_a), (n, k)


def test_runs_fit_matches_reference_on_periodic_and_mixed_signatures():
    """_runs_fit (tests ANDed over evenly spaced shifts by doubling) equals the
    reference for periodic preambles of every period and length and for irregular
    signatures, on random trains."""
    rng = np.random.default_rng(8)
    for _ in range(300):
        k = int(rng.integers(1, 33))
        period = int(rng.integers(1, 5))
        base_units = rng.choice([1.0, 2.0, 3.0], period)
        units = np.resize(base_units, k)
        if rng.random() < 0.3:
            units[-1] = 5.0  # a sync run at the end breaks the period
        if rng.random() < 0.2:
            units = rng.choice([1.0, 2.0, 3.0], k)
        sig_levels = (np.arange(k) + int(rng.integers(0, 2))) % 2
        lo = np.maximum(units - 1.0, 0.0) * 0.9 * 300.0
        hi = (units + 1.0) * 1.1 * 300.0
        n = int(rng.integers(k, k + 400))
        levels = (np.arange(n) % 2).astype(np.int8)
        d = rng.choice(units, n) * 300.0 * rng.uniform(0.7, 1.3, n)
        at = int(rng.integers(0, n - k + 1))  # one sure match
        levels[at:at + k], d[at:at + k] = sig_levels, units * 300.0
        got = detect._runs_fit(levels, d, sig_levels, lo, hi)
        want = _ref_runs_fit(levels, d, sig_levels, lo, hi)
        assert _same(got, want), (k, period)
        assert want[at]


def test_and_over_shifts_equals_one_and_per_shift():
    """_and_over_shifts equals ANDing the shifted slices one by one, for evenly spaced
    shifts (every step, start and count) and irregular ones."""
    rng = np.random.default_rng(4)
    for _ in range(3000):
        k, n = int(rng.integers(1, 40)), int(rng.integers(1, 60))
        ok = rng.random(n + k - 1) < rng.uniform(0.5, 1.0)
        if rng.random() < 0.6:
            p = int(rng.integers(1, 5))
            m = int(rng.integers(1, (k - 1) // p + 2))
            j0 = int(rng.integers(0, k - (m - 1) * p))
            js = list(range(j0, j0 + m * p, p))
        else:
            js = sorted(rng.choice(k, int(rng.integers(1, k + 1)), replace=False).tolist())
        got = rng.random(n) < 0.9
        want = got.copy()
        detect._and_over_shifts(got, ok, js)
        for j in js:
            want &= ok[j:j + n]
        assert _same(got, want), js
