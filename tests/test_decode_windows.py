"""classify_windows' cut at the first capped pulse and the grid's kept-edge counts, checked
against plain per-window loops (definitions in the docstrings of ``classify_windows`` and
``classify._Sums.count_kept``); the grid kernels' shortcuts (paired running sums, unwrap,
clipped length look-up) against the plain forms they stand for, bit for bit."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import ookframe
from ookframe.channel import apply_channel, get_preset
from ookframe.decode import compile_decoder
from ookframe.decode.classify import _Sums, _unwrap, is_allowed, run_table
from ookframe.decode.detect import find_candidates
from ookframe.decode.glitch import drop_glitches
from ookframe.decode.head import MAX_CLOCK_ERROR
from ookframe.decode.windows import classify_windows
from ookframe.stress.batch import random_batch

EXAMPLES = Path(ookframe.__file__).parent / "examples"


@pytest.mark.parametrize("grid", [True, False])
@pytest.mark.parametrize("reach", [1, 20, None])
def test_windows_end_at_their_first_capped_pulse(grid, reach):
    """Each window keeps its pulses up to and including its first capped one (all of
    them when none is capped, as in short windows inside a frame); capped pulses read as
    the longest run, their deviation as how far beyond it they are."""
    spec, _ = ookframe.load_spec_and_defaults(EXAMPLES / "gate_sensor.toml")
    hm = compile_decoder(spec)
    rng = np.random.default_rng(5)
    b = random_batch(hm.plan, 20, rng)
    rx = apply_channel(b.train, get_preset("budget-superregen"), rng,
                       burst_starts_us=b.starts_us)
    clean = drop_glitches(rx.levels, rx.durations_us,
                          spec.decoder.glitch_fraction * spec.unit_us)
    dur, lv = clean.durations_us, clean.levels
    first, unit0 = find_candidates(lv, dur, hm.sig_levels, hm.sig_units, spec.unit_us,
                                   hm.runs, MAX_CLOCK_ERROR)
    assert first.size > 0
    long = np.full(first.size, dur.size) if reach is None else first + reach
    stop = np.minimum(long, dur.size)
    ws = classify_windows(spec, hm, dur, first, stop, unit0, lv, grid=grid)
    top = hm.runs.top
    for w in range(first.size):
        a = int(ws.offset[w])
        cut = slice(a, a + int(stop[w] - first[w]))
        capped = np.flatnonzero(ws.capped[cut])
        want = int(capped[0]) + 1 if capped.size else int(stop[w] - first[w])
        assert ws.length[w] == want
        at = a + capped
        np.testing.assert_array_equal(ws.deviation[at], ws.ratio[at] - top)
        if grid:
            assert (ws.units[at] == top).all()
    if reach in (1, 20):
        assert not ws.capped.all()


def test_count_kept_is_the_moving_sum_of_the_keep_mask():
    """``_Sums.count_kept`` equals the moving sums of a 0/1 keep mask bit for bit."""
    rng = np.random.default_rng(1)
    for _ in range(500):
        lengths = rng.integers(1, 40, rng.integers(1, 12))
        before, after = int(rng.integers(0, 25)), int(rng.integers(0, 4))
        if rng.random() < 0.1:
            before = 1 << 30  # a frozen phase: the whole segment (phase_half_window(0.0))
        sums = _Sums(lengths, before, after)
        n = int(lengths.sum())
        dropped = np.flatnonzero(rng.random(n) < rng.random())
        keep = np.ones(n)
        keep[dropped] = 0.0
        assert sums(keep).tobytes() == sums.count_kept(dropped).tobytes()


def test_paired_moving_sums_equal_single_ones():
    """``_Sums.pair`` (both running sums as one complex cumsum) gives the bits of two
    single ``_Sums`` calls."""
    rng = np.random.default_rng(2)
    for _ in range(300):
        lengths = rng.integers(1, 40, rng.integers(1, 12))
        sums = _Sums(lengths, int(rng.integers(0, 25)), int(rng.integers(0, 4)))
        re, im = rng.standard_normal((2, int(lengths.sum())))
        want_re, want_im = sums(re), sums(im)
        sums.pair(re, im)
        assert re.tobytes() == want_re.tobytes() and im.tobytes() == want_im.tobytes()


def test_unwrap_equals_numpy_unwrap():
    """``classify._unwrap`` equals ``np.unwrap(p, period=1.0)`` bit for bit, with few and
    with many wraps (stretch by stretch and by a repeated array), -0.0 included."""
    rng = np.random.default_rng(3)
    for k in range(400):
        n = int(rng.integers(1, 300))
        walk = np.cumsum(rng.normal(0.0, float(rng.choice([0.05, 0.3, 0.8])), n))
        p = np.mod(walk + 0.5, 1.0) - 0.5
        p[rng.random(n) < 0.05] = -0.0
        if k % 7 == 0:
            p[rng.random(n) < 0.2] = 0.5
        want = np.unwrap(p, period=1.0)
        assert _unwrap(p).tobytes() == want.tobytes()


def test_is_allowed_by_one_clipped_index_equals_per_level_lookup():
    """``is_allowed`` through the clipped (length, level) index equals the per-level
    membership test, lengths below 0 and beyond the longest run included."""
    rng = np.random.default_rng(4)
    for space, mark in (((1, 2, 3), (1, 3)), ((2, 4), (1,)), ((1, 4, 7), (2, 3, 9))):
        table = run_table(space, mark)
        assert table.no_zero and not table.same
        n = rng.integers(-12, 20, 5000)
        lv = rng.integers(0, 2, n.size).astype(np.uint8)
        want = np.where(lv == 1, np.isin(n, mark), np.isin(n, space))
        np.testing.assert_array_equal(is_allowed(n, lv, table), want)


def test_bursts_of_takes_the_bursts_and_their_neighbours():
    """``_CandidateWindows.bursts_of``: the windows whose burst is one of the given windows'
    bursts or the burst just before or after it in the order of the bursts (ranks of the
    distinct burst ends), bursts in train order or not."""
    from ookframe.decode.framer import _CandidateWindows

    rng = np.random.default_rng(7)
    for trial in range(600):
        n = int(rng.integers(1, 30))
        burst = rng.integers(0, 12, n)
        if trial % 4:
            burst = np.sort(burst)  # as _windows makes them
        cw = _CandidateWindows(np.zeros(1), np.arange(n), np.ones(n), np.arange(n) + 1, burst)
        picked = sorted(set(rng.integers(0, n, int(rng.integers(1, n + 1))).tolist()))
        ends = sorted(set(burst.tolist()))
        rank = {b: r for r, b in enumerate(ends)}
        near = {rank[int(burst[k])] + s for k in picked for s in (-1, 0, 1)}
        want = [k for k in range(n) if rank[int(burst[k])] in near]
        got = cw.bursts_of(picked)
        assert got.first.tolist() == want
        assert got.burst.tolist() == burst[want].tolist()
