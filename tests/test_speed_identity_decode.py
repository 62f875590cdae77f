"""The faster decoder kernels (grid placement, nearest allowed lengths, signature search)
give the same results, to the last bit, as the implementation they replaced.

Reference for every check below: the implementation before the speed-up (git history of
ookframe/decode/classify.py and ookframe/decode/detect.py, commit da398e3), kept verbatim
here as ``_ref_*`` (docstrings shortened); the checks compare bit for bit (dtype, shape and
bytes) on trains of every example spec through every channel preset and uniform jitter,
quantised edges included (worst signature offsets land on ``FIT_STEP`` boundaries there).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from ookframe.channel import ChannelSpec, apply_channel
from ookframe.channel.presets import PRESETS
from ookframe.decode import compile_decoder
from ookframe.decode.classify import (
    LOOK_AHEAD,
    PHASE_HALF_WINDOW,
    GridRuns,
    RunTable,
    _repair,
    grid_runs,
    is_allowed,
    nearest_runs,
)
from ookframe.decode.detect import (
    MAX_EDGE_OFFSET,
    SHORT_SIGNATURE_RUNS,
    _one_per_cluster,
    _spans_fit,
    find_candidates,
    run_spacing,
)
from ookframe.decode.glitch import drop_glitches
from ookframe.decode.head import MAX_CLOCK_ERROR
from ookframe.spec_io import load_spec
from ookframe.stress.batch import random_batch

EXAMPLES = sorted((Path(__file__).parent.parent / "ookframe" / "examples").glob("*.toml"))

# --- references: the implementation before the speed-up (commit da398e3) -----------------

def _ref_nearest_runs(ratio: np.ndarray, levels: np.ndarray, table: RunTable
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Return (nearest allowed run length as int64, |ratio - length|) per pulse (see the module docstring)."""
    r = np.asarray(ratio, dtype=np.float64)
    if table.same:
        units = np.rint(r)
        np.clip(units, 1.0, float(table.top), out=units)
        units = units.astype(np.int64)
    else:  # both levels looked up over the whole array (cheaper than masked parts)
        a0, a1 = table.allowed
        units = np.where(levels == 1, a1[np.searchsorted(table.mids[1], r)],
                         a0[np.searchsorted(table.mids[0], r)])
    beyond = r > table.cap_ratio
    if beyond.any():
        units[beyond] = np.rint(r[beyond]).astype(np.int64)
    return units, np.abs(r - units)


class _ref_Segments:
    """Per element of segments of ``lengths`` laid end to end: its index and the bounds (see the module docstring)."""

    def __init__(self, lengths: np.ndarray) -> None:
        self.start = np.repeat(np.cumsum(lengths) - lengths, lengths)
        self.stop = self.start + np.repeat(lengths, lengths)
        self.i = np.arange(self.start.size)

    def bounds(self, before: int, after: int) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of the ``before`` elements before each element, itself and ``after``
        after it, within its segment."""
        return (np.maximum(self.i - before, self.start),
                np.minimum(self.i + (after + 1), self.stop))


def _ref_moving_sum(x: np.ndarray, bounds: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """Return the sums of ``x`` (real or complex) over the ``_ragged_bounds`` ranges (see the module docstring)."""
    cs = np.empty(x.size + 1, x.dtype)
    cs[0] = 0
    np.cumsum(x, out=cs[1:])
    return cs[bounds[1]] - cs[bounds[0]]


def _ref_phasor_sum(x: np.ndarray, dropped: np.ndarray, bounds: tuple[np.ndarray, np.ndarray]
                ) -> np.ndarray:
    """Return the moving sums of the unit phasors of the fractional parts of ``x`` over (see the module docstring)."""
    turn = 2 * np.pi * x
    z = np.empty(x.size, np.complex128)
    np.cos(turn, out=z.real)
    np.sin(turn, out=z.imag)
    z[dropped] = 0.0
    return _ref_moving_sum(z, bounds)


def _ref_unwrap(p: np.ndarray) -> np.ndarray:
    """Return ``np.unwrap(p, period=1.0)`` (same values): only the steps of half a period (see the module docstring)."""
    dd = np.diff(p)
    big = np.flatnonzero(np.abs(dd) >= 0.5)
    step = dd[big]
    mod = np.mod(step + 0.5, 1.0) - 0.5
    mod[(mod == -0.5) & (step > 0)] = 0.5
    correct = np.zeros(dd.size)
    correct[big] = mod - step
    out = p.copy()
    out[1:] = p[1:] + np.cumsum(correct)
    return out


def _ref_grid_runs(durations_us: np.ndarray, levels: np.ndarray, lengths: np.ndarray,
              unit_us: np.ndarray, table: RunTable, *, half_window: int = PHASE_HALF_WINDOW,
              capped: np.ndarray | None = None) -> GridRuns:
    # ``unit_us``: one unit per window, or one per pulse (a tracked clock)
    """Return the run length of every pulse of ragged windows from its edges' places on (see the module docstring)."""
    d = np.asarray(durations_us, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    n_edges = lengths + 1
    u = np.asarray(unit_us, dtype=np.float64)
    u_pulse = u if u.size == d.size and u.size != lengths.size else np.repeat(u, lengths)
    # edge times from each window's first edge: per window 0, d0, d0 + d1, ...
    e_start = np.cumsum(n_edges) - n_edges
    p_start = np.cumsum(lengths) - lengths
    pulse_edge = np.arange(d.size) + np.repeat(e_start - p_start, lengths) + 1  # end edge
    t = np.zeros(int(n_edges.sum()))
    t[pulse_edge] = d / u_pulse  # durations in (tracked) units
    cs = np.cumsum(t)
    x = cs - np.repeat(cs[e_start], n_edges)
    keep = np.ones(x.size)
    dropped = pulse_edge[capped] if capped is not None else np.zeros(0, np.int64)
    keep[dropped] = 0.0
    # rough phase over +-2 edges (follows a fast drift), unwrapped and averaged over the
    # window; then the circular mean of what is left around it
    b, a = 2 * half_window, LOOK_AHEAD
    segments = _ref_Segments(n_edges)
    near, wide = segments.bounds(4, a), segments.bounds(b, a)
    rough = _ref_unwrap(np.angle(_ref_phasor_sum(x, dropped, near)) / (2 * np.pi))
    trend = _ref_moving_sum(rough * keep, wide) / np.maximum(_ref_moving_sum(keep, wide), 1.0)
    phase = trend + np.angle(_ref_phasor_sum(x - trend, dropped, wide)) / (2 * np.pi)
    phase = _ref_unwrap(phase)  # a step of the rough phase must not move the grid
    grid = x - phase
    c = np.rint(grid)
    residual = grid - c
    start_edge = pulse_edge - 1
    n = (c[pulse_edge] - c[start_edge]).astype(np.int64)
    ok = is_allowed(n, levels, table)
    if not ok.all():  # move the less sure edge of a bad pulse to its other grid point
        c, residual = _repair(c, residual, grid, pulse_edge, n, ok, levels, table)
        n = (c[pulse_edge] - c[start_edge]).astype(np.int64)
        ok = is_allowed(n, levels, table)
    ratio = d / u_pulse
    fallback, _ = _ref_nearest_runs(ratio, levels, table)
    n = np.where(ok, n, fallback)
    ar = np.abs(residual)
    if capped is not None:
        ar[pulse_edge[capped]] = 0.0
    dev = np.maximum(ar[pulse_edge - 1], ar[pulse_edge])
    return GridRuns(n, dev, residual, residual[pulse_edge])



def _ref_find_candidates(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
                    sig_units: np.ndarray, unit_us: float, table: RunTable,
                    clock_error: float) -> tuple[np.ndarray, np.ndarray]:
    """Return (index of the first signature pulse, estimated unit in µs) per candidate (see the module docstring)."""
    k = sig_units.size
    n = durations_us.size - k + 1
    if k == 0 or n <= 0:
        return np.zeros(0, np.int64), np.zeros(0)
    r = sig_units.astype(np.float64)
    lo_us = np.maximum(r - 2 * MAX_EDGE_OFFSET, 0.0) * (1.0 - clock_error) * unit_us
    hi_us = np.minimum(r + 2 * MAX_EDGE_OFFSET, table.cap_ratio) * (1.0 + clock_error) * unit_us
    d0 = durations_us[:n]
    cand = np.flatnonzero((levels[:n] == sig_levels[0]) & (d0 > lo_us[0]) & (d0 < hi_us[0]))
    cand = _spans_fit(cand, durations_us, r, (1.0 + clock_error) * unit_us)
    for j in range(1, k):
        if cand.size == 0:
            break
        dj = durations_us[cand + j]
        cand = cand[(levels[cand + j] == sig_levels[j]) & (dj > lo_us[j]) & (dj < hi_us[j])]
    if cand.size == 0:
        return cand.astype(np.int64), np.zeros(0)
    d = durations_us[cand[:, None] + np.arange(k)]
    unit, worst = _ref_edge_fit(d, r)
    ok = np.abs(unit / unit_us - 1.0) <= clock_error
    ok &= worst < MAX_EDGE_OFFSET
    if k < SHORT_SIGNATURE_RUNS:  # few runs say little: every duration must fit as well
        got, _ = _ref_nearest_runs(d / unit[:, None], np.broadcast_to(sig_levels, d.shape), table)
        ok &= (got == sig_units).all(axis=1)
    cand, unit, worst = cand[ok], unit[ok], worst[ok]
    if cand.size > 1:
        cand, unit = _one_per_cluster(cand, unit, worst, k)
    return cand.astype(np.int64), unit


def _ref_edge_fit(d: np.ndarray, r: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return per row (unit in µs, largest distance of an edge from the fitted grid in (see the module docstring)."""
    t = np.concatenate((np.zeros((d.shape[0], 1)), np.cumsum(d, axis=1)), axis=1)
    c = np.concatenate(([0.0], np.cumsum(r)))
    cm = c.mean()
    tm = t.mean(axis=1)
    slope = ((t - tm[:, None]) @ (c - cm)) / ((c - cm) @ (c - cm))
    unit = np.where(slope > 0, slope, np.nan)
    offset = (tm - slope * cm) / unit
    worst = np.abs(t / unit[:, None] - offset[:, None] - c).max(axis=1)
    return unit, worst


# --- checks -----------------------------------------------------------------------------


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    """Equal dtype, shape and bits."""
    return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()


def _channels(unit_us: float) -> list[ChannelSpec]:
    return [*PRESETS.values(), ChannelSpec(jitter_us=0.25 * unit_us, jitter_kind="uniform")]


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_kernels_match_reference_on_example_trains(path):
    """find_candidates (candidates and units), and grid_runs and nearest_runs over every
    candidate window, equal the reference on trains of every preset and +-25 % jitter."""
    from ookframe.decode import framer, windows

    spec = load_spec(path)
    hm = compile_decoder(spec)
    got_args = []
    real = windows.grid_runs

    def spy(*a, **k):
        got_args.append((a, k))
        return real(*a, **k)

    for k, ch in enumerate(_channels(spec.unit_us)):
        for seed in (1, 2):
            rng = np.random.default_rng(seed)
            b = random_batch(spec, 150, rng)
            rx = apply_channel(b.train, ch, rng, burst_starts_us=b.starts_us)
            clean = drop_glitches(rx.levels, rx.durations_us,
                                  spec.decoder.glitch_fraction * spec.unit_us)
            args = (clean.levels, clean.durations_us, hm.sig_levels, hm.sig_units,
                    spec.unit_us, hm.runs, MAX_CLOCK_ERROR)
            first, unit = find_candidates(*args)
            if run_spacing(hm.runs) == 1:
                # codes with runs 2+ units apart (PWM, pulse distance) add the grid refit
                # on purpose; tests/test_decode.py holds that to a dense scan
                want_first, want_unit = _ref_find_candidates(*args)
                assert _same(first, want_first) and _same(unit, want_unit), (k, seed)
            got_args.clear()
            windows.grid_runs = spy
            try:
                framer.decode(hm, rx, include_bad=True)
            finally:
                windows.grid_runs = real
            for a, kw in got_args:
                d, lv, lengths, u, table = a
                ratio = d / np.repeat(u, lengths)
                # the caller's ratio (if it passes one) is the reference's own d / unit
                given = kw.pop("ratio", None)
                assert given is None or _same(given, ratio)
                # and its window offsets (if it passes them) the windows' own starts
                offsets = kw.pop("offsets", None)
                assert offsets is None or _same(offsets, np.cumsum(lengths) - lengths)
                g = grid_runs(*a, ratio=given, offsets=offsets, **kw)
                w = _ref_grid_runs(*a, **kw)
                for field in ("units", "deviation", "residual", "end_residual"):
                    assert _same(getattr(g, field), getattr(w, field)), (k, seed, field)
                for x, y in zip(nearest_runs(ratio, lv, table),
                                _ref_nearest_runs(ratio, lv, table), strict=True):
                    assert _same(x, y)
