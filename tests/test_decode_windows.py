"""classify_windows' cut at the first capped pulse and the grid's kept-edge counts, checked
against plain per-window loops (definitions in the docstrings of ``classify_windows`` and
``classify._Sums.count_kept``)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import ookframe
from ookframe.channel import apply_channel, get_preset
from ookframe.decode import compile_decoder
from ookframe.decode.classify import _Sums
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
        sums = _Sums(lengths, before, after)
        n = int(lengths.sum())
        dropped = np.flatnonzero(rng.random(n) < rng.random())
        keep = np.ones(n)
        keep[dropped] = 0.0
        assert sums(keep).tobytes() == sums.count_kept(dropped).tobytes()


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
