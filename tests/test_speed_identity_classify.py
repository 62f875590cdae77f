"""The faster glitch filter, run merging and unit estimators give the same results, to the
last bit, as the plain formulations they replaced.

Reference for every check below: the implementation before the speed-up (git history of
ookframe/pulses.py, ookframe/decode/glitch.py and ookframe/decode/classify.py, commit
3ba4d04), written out here as ``_ref_*``; and for ``np.add.reduceat`` / ``np.bincount``
the numpy 2.x reference docs (reduceat: sum over ``x[starts[i]:starts[i + 1]]``;
bincount with weights: the weights added per bin in index order).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import lfilter

from ookframe.decode.classify import _column_sums, classify, head_unit, track_unit
from ookframe.decode.glitch import drop_glitches
from ookframe.pulses import PulseTrain, _sum_runs, merge_runs


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    """Equal dtype, shape and bits (NaN included)."""
    return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()


# --- references: the implementation before the speed-up (commit 3ba4d04) -----------------

def _ref_merge_runs(levels, durations_us):
    levels = np.asarray(levels, dtype=np.uint8)
    durations_us = np.asarray(durations_us, dtype=np.float64)
    if levels.size == 0:
        return levels, durations_us
    starts = np.flatnonzero(np.concatenate(([True], levels[1:] != levels[:-1])))
    return levels[starts], np.add.reduceat(durations_us, starts)


def _ref_drop_glitches(levels, durations_us, min_us):
    lv, du = _ref_merge_runs(levels, durations_us)
    glitch = du < min_us
    if not glitch.any():
        return lv, du
    keep = np.flatnonzero(~glitch)
    if keep.size == 0:
        return np.zeros(0, np.uint8), np.zeros(0)
    owner = np.maximum.accumulate(np.where(glitch, -1, np.arange(du.size)))
    owner[owner < 0] = keep[0]
    return _ref_merge_runs(lv[owner], du)


def _ref_classify(durations_us, unit_us):
    ratio = np.asarray(durations_us, dtype=np.float64) / unit_us
    units = np.maximum(np.rint(ratio), 1.0)
    return units.astype(np.int64), np.abs(ratio - units)


def _ref_ragged(lengths):
    lengths = np.asarray(lengths, dtype=np.int64)
    offsets = np.concatenate(([0], np.cumsum(lengths)[:-1]))
    return np.repeat(np.arange(lengths.size), lengths), offsets


def _ref_cumsum_within(x, window, offsets):
    cs = np.cumsum(x)
    return cs - np.concatenate(([0], cs))[offsets][window]


def _ref_head_unit(d, lengths, unit0, head_units, iterations=2):
    d = np.asarray(d, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    window, offsets = _ref_ragged(lengths)
    n_win = offsets.size
    unit = np.array(unit0, dtype=np.float64, copy=True)
    t = _ref_cumsum_within(d, window, offsets)
    for _ in range(iterations):
        n, _ = _ref_classify(d, unit[window])
        c = _ref_cumsum_within(n, window, offsets).astype(np.float64)
        w = (c <= head_units).astype(np.float64)
        npts = np.bincount(window, w, n_win) + 1.0
        st = np.bincount(window, t * w, n_win)
        sc = np.bincount(window, c * w, n_win)
        stc = np.bincount(window, t * c * w, n_win)
        scc = np.bincount(window, c * c * w, n_win)
        den = npts * scc - sc * sc
        with np.errstate(divide="ignore", invalid="ignore"):
            fitted = (npts * stc - st * sc) / den
        ok = (npts >= 3) & (den > 0) & (fitted > 0)
        unit = np.where(ok, fitted, unit)
    return unit


def _ref_track_unit(d, lengths, unit0, *, gain, tolerance, iterations=2, max_units=None):
    d = np.asarray(d, dtype=np.float64)
    window, offsets = _ref_ragged(lengths)
    u0 = np.asarray(unit0, dtype=np.float64)[window]
    u_prev = u0.copy()
    if d.size == 0 or gain <= 0.0:
        return u_prev
    first = np.zeros(d.size, bool)
    first[offsets[np.asarray(lengths) > 0]] = True
    for _ in range(iterations):
        n, dev = _ref_classify(d, u_prev)
        if max_units is not None:
            n = np.minimum(n, max_units)
        x = np.where(dev <= tolerance, d / n, u_prev) - u0
        y = lfilter([gain], [1.0, gain - 1.0], np.repeat(x, n))
        end = np.cumsum(n) - 1
        start = end - n + 1
        w_start = start[offsets][window]
        carry = np.concatenate(([0.0], y))[w_start]
        after = y[end] - carry * (1.0 - gain) ** (end - w_start + 1).astype(np.float64)
        u_prev = np.where(first, u0, np.concatenate(([0.0], after[:-1])) + u0)
    return u_prev


# --- inputs ---------------------------------------------------------------------------

def _values(rng: np.random.Generator, m: int, kind: int) -> np.ndarray:
    if kind == 0:
        return rng.exponential(100.0, m)
    if kind == 1:
        return rng.normal(0.0, 1.0, m) * 10.0 ** rng.integers(-10, 17, m)
    if kind == 2:
        return rng.choice([0.0, -0.0, 1.0, -1.0, 1e16, 3.3, np.inf, -np.inf, np.nan], m)
    return rng.uniform(0.0, 1.0, m) * 10.0 ** rng.integers(0, 17, m)


def _windows(rng: np.random.Generator, unit_us: float, n_win: int, max_len: int):
    """Ragged windows of OOK-like pulses (1-4 units, +-20 % edge noise, a few outliers)."""
    lengths = rng.integers(1, max_len + 1, n_win)
    lengths[rng.random(n_win) < 0.1] = 0  # empty windows in between
    lengths[-1] = max(int(lengths[-1]), 1)
    total = int(lengths.sum())
    d = rng.integers(1, 5, total) * unit_us + rng.uniform(-0.2, 0.2, total) * unit_us
    d[rng.random(total) < 0.03] *= rng.uniform(0.3, 8.0)  # out-of-tolerance pulses
    u0 = unit_us * rng.uniform(0.95, 1.05, n_win)
    return np.abs(d) + 1.0, lengths, u0


# --- checks ---------------------------------------------------------------------------

def test_sum_runs_is_reduceat_bit_for_bit():
    rng = np.random.default_rng(10)
    for trial in range(1500):
        m = int(rng.integers(1, 300))
        x = _values(rng, m, trial % 4)
        run = rng.integers(1, int(rng.choice([1, 2, 4, 9, 12, 40, 300])) + 1, m)
        if trial % 3 == 0:
            run[rng.random(m) < 0.8] = 1
        starts = np.concatenate(([0], np.cumsum(run)))
        starts = starts[starts < m]
        with np.errstate(invalid="ignore"):
            assert _same(_sum_runs(x, starts), np.add.reduceat(x, starts))


# the inputs include inf - inf sums on purpose (NaN must come out where the reference has it)
@pytest.mark.filterwarnings("ignore:invalid value encountered in reduceat:RuntimeWarning")
def test_merge_runs_matches_reference():
    rng = np.random.default_rng(11)
    for trial in range(600):
        m = int(rng.integers(0, 200))
        levels = rng.integers(0, 2 if trial % 5 else 4, m)
        if trial % 3 == 0:  # strictly alternating: the nothing-to-merge path
            levels = (np.arange(m) + trial) % 2
        du = _values(rng, m, trial % 4)
        got = merge_runs(levels, du)
        want_lv, want_du = _ref_merge_runs(levels, du)
        assert _same(got.levels, want_lv) and _same(got.durations_us, want_du)
    lv, du = np.array([0, 1, 0], np.uint8), np.array([1.0, 2.0, 3.0])
    merge_runs(lv, du)
    assert lv.flags.writeable and du.flags.writeable  # the caller's arrays are not taken


def test_drop_glitches_matches_reference():
    rng = np.random.default_rng(12)
    cases = [(np.zeros(0, np.uint8), np.zeros(0), 10.0), ([0, 1], [1.0, 2.0], 10.0),
             ([1, 0, 0, 1], [5.0, 100.0, 50.0, 200.0], 10.0), ([1, 1, 1], [1.0, 2.0, 300.0], 10.0)]
    for trial in range(600):
        m = int(rng.integers(1, 400))
        levels = rng.integers(0, 2, m) if trial % 2 else np.arange(m) % 2
        cases.append((levels, rng.exponential(50.0, m), float(rng.uniform(1.0, 120.0))))
    for levels, du, min_us in cases:
        got = drop_glitches(np.asarray(levels), np.asarray(du), min_us)
        want_lv, want_du = _ref_drop_glitches(levels, du, min_us)
        assert isinstance(got, PulseTrain)
        assert _same(got.levels, want_lv) and _same(got.durations_us, want_du)


def test_classify_matches_reference():
    rng = np.random.default_rng(13)
    d = np.concatenate((rng.uniform(0.0, 2000.0, 500), [0.0, -5.0, 50.0, 49.999, 150.0, 250.0]))
    for unit in (100.0, rng.uniform(80.0, 120.0, d.size)):
        n, dev = classify(d, unit)
        want_n, want_dev = _ref_classify(d, unit)
        assert _same(n, want_n) and _same(dev, want_dev)


@pytest.mark.parametrize("n_win, max_len, head_units", [(1, 80, 30), (2, 5, 30), (40, 120, 57),
                                                        (300, 60, 40), (7, 3, 0)])
def test_head_unit_matches_reference(n_win, max_len, head_units):
    rng = np.random.default_rng(14 + n_win)
    for _ in range(5):
        d, lengths, u0 = _windows(rng, 417.0, n_win, max_len)
        got = head_unit(d, lengths, u0, head_units)
        assert _same(got, _ref_head_unit(d, lengths, u0, head_units))


def test_column_sums_add_in_row_order():
    rng = np.random.default_rng(15)
    for n_col in (1, 2, 3, 17, 503):
        for n_row in (1, 9, 57, 130):
            x = rng.normal(0.0, 1.0, (n_row, n_col)) * 10.0 ** rng.integers(-5, 10, (n_row, n_col))
            want = np.bincount(np.repeat(np.arange(n_col), n_row), x.T.ravel(), n_col)
            assert _same(_column_sums(x), want)


@pytest.mark.parametrize("gain, max_units", [(0.05, 3), (0.05, None), (0.2, 5), (0.0, None)])
def test_track_unit_matches_reference(gain, max_units):
    rng = np.random.default_rng(16)
    for n_win, max_len in ((1, 300), (50, 150), (400, 40)):
        d, lengths, u0 = _windows(rng, 500.0, n_win, max_len)
        kw = dict(gain=gain, tolerance=0.35, max_units=max_units)
        assert _same(track_unit(d, lengths, u0, **kw), _ref_track_unit(d, lengths, u0, **kw))
