"""Candidate windows: their pulses classified together, then laid end to end as one run
sequence so the line code decodes every window in one call (ragged arrays throughout)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..ragged import ragged_index
from ..spec.model import FrameSpec
from .classify import grid_runs, head_unit, nearest_runs, phase_half_window, track_unit
from .head import HeadModel


@dataclass(frozen=True)
class Windows:
    """Classified pulses of every candidate window, concatenated (ragged arrays)."""

    first: np.ndarray  # train index of each window's first pulse (a signature pulse)
    offset: np.ndarray  # where each window starts in the arrays below
    length: np.ndarray  # pulses of each window
    start_unit_us: np.ndarray  # unit estimate at each window's start (head fit)
    units: np.ndarray  # whole units (capped at the longest run)
    deviation: np.ndarray  # |d/u - n|, or how far beyond the longest run
    unit_us: np.ndarray  # tracked unit each pulse was classified with
    capped: np.ndarray  # True where the pulse was longer than any run of a frame
    durations_us: np.ndarray  # the pulses' durations
    ratio: np.ndarray  # durations / tracked unit
    levels: np.ndarray  # the pulses' levels
    end_residual: np.ndarray  # signed offset of each pulse's end edge from its grid point

    def one(self, k: int, units: np.ndarray | None = None) -> Windows:
        """Return window ``k`` alone (with other ``units`` if given)."""
        a, m = int(self.offset[k]), int(self.length[k])
        cut = slice(a, a + m)
        return Windows(self.first[k:k + 1], np.zeros(1, np.int64), self.length[k:k + 1],
                       self.start_unit_us[k:k + 1],
                       self.units[cut] if units is None else units, self.deviation[cut],
                       self.unit_us[cut], self.capped[cut], self.durations_us[cut],
                       self.ratio[cut], self.levels[cut], self.end_residual[cut])


def classify_windows(spec: FrameSpec, hm: HeadModel, dur: np.ndarray, first: np.ndarray,
                     stop: np.ndarray, unit0: np.ndarray, levels: np.ndarray, *,
                     grid: bool = True) -> Windows:
    """Return the windows [first, stop) classified: head fit, then run lengths from the
    edges' places on the chip grid (``grid``, :func:`classify.grid_runs`) or from each
    duration with the drift-tracking loop (nearest allowed length).

    A window ends early at its first pulse longer than any run of a frame (included: a
    frame's last space runs into it), so only a window's last pulse can be capped.
    """
    dec = spec.decoder
    length = stop - first
    offset = length.cumsum()
    offset -= length
    idx = ragged_index(first, length, offset)
    d = dur[idx]
    lv = levels[idx]
    table = hm.runs
    start_unit = head_unit(d, length, unit0, hm.body_chip - int(hm.prefix_units.sum()),
                           levels=lv, table=table, offsets=offset)
    if grid:
        unit = start_unit.repeat(length)
        ratio = d / unit
        capped = ratio > table.cap_ratio
        g = grid_runs(d, lv, length, start_unit, table, capped=capped,
                      half_window=phase_half_window(dec.loop_gain), ratio=ratio,
                      offsets=offset)
        n, dev = g.units, g.deviation  # fresh arrays: capped pulses are set below
        end_res = g.end_residual
    else:  # duration by duration, with the tracking loop (follows a fast-drifting clock)
        unit = track_unit(d, length, start_unit, gain=dec.loop_gain, tolerance=dec.tolerance,
                          max_units=hm.cap_units + 1, levels=lv, table=table,
                          offsets=offset)
        ratio = d / unit
        capped = ratio > table.cap_ratio
        n, dev = nearest_runs(ratio, lv, table)
        end_res = np.zeros(d.size)
    # the few capped pulses: each window ends at its first (ascending, so the first of
    # each window is its first occurrence)
    cap_at = capped.nonzero()[0]
    cap_window = offset.searchsorted(cap_at, "right") - 1
    first_of = np.ones(cap_window.size, bool)
    first_of[1:] = cap_window[1:] != cap_window[:-1]
    windows_capped = cap_window[first_of]
    length = length.copy()
    length[windows_capped] = np.minimum(length[windows_capped],
                                        cap_at[first_of] - offset[windows_capped] + 1)
    if grid:
        n[cap_at] = table.top
    dev[cap_at] = ratio[cap_at] - table.top
    return Windows(first, offset, length, start_unit, n, dev, unit, capped, d, ratio, lv,
                   end_res)


@dataclass(frozen=True)
class WindowRuns:
    """Every window's runs (head prefix as sent + measured pulses) laid end to end.

    Codes decoded per chip phase get a space of 1 .. chips_per_block chips before each
    window, so every window starts on a block boundary after a space, as when decoded
    alone; codes read per mark get a space of the longest run after a window that ends
    with a mark, so its last bit is complete.
    """

    levels: np.ndarray  # uint8 per run
    units: np.ndarray  # int64 per run
    chip0: np.ndarray  # int64 chip offset of every run from the start of the sequence
    run_start: np.ndarray  # first run of every window (its first head-prefix run)
    run_stop: np.ndarray  # one past its last run
    n_prefix: int  # head-prefix runs at the start of every window


def lay_out(hm: HeadModel, ws: Windows, levels: np.ndarray) -> WindowRuns:
    """Return the runs of every window of ``ws`` laid end to end (see :class:`WindowRuns`)."""
    k = ws.first.size
    m = np.asarray(ws.length, dtype=np.int64)
    prefix_levels, prefix_units = hm.prefix_levels, hm.prefix_units
    n_pre = int(prefix_units.size)
    if int(m.sum()) == ws.units.size:  # no window was cut short: all their pulses, in order
        meas_units, meas_levels, m_start = ws.units, ws.levels, ws.offset
    else:
        m_start = m.cumsum()
        m_start -= m
        at = ragged_index(ws.offset, m)
        meas_units, meas_levels = ws.units[at], ws.levels[at]
    chips = int(prefix_units.sum()) + np.add.reduceat(meas_units, m_start) \
        if k else np.zeros(0, np.int64)
    last_level = levels[ws.first + m - 1]
    gap = np.zeros(k, np.int64)
    if k > 1:
        if hm.phased:
            cpb = int(hm.line_code.chips_per_block)  # type: ignore[arg-type]
            g = (-chips[:-1]) % cpb
            gap[1:] = np.where(g > 0, g, np.where(last_level[:-1] == 1, cpb, 0))
        else:
            gap[1:] = np.where(last_level[:-1] == 1, hm.cap_units, 0)
    has_gap = gap > 0
    run_stop = (m + n_pre + has_gap).cumsum()
    run_start = run_stop - n_pre - m
    total = int(run_stop[-1]) if k else 0
    lv = np.zeros(total, np.uint8)
    un = np.empty(total, np.int64)
    gaps = run_start[has_gap] - 1
    un[gaps] = gap[has_gap]
    pre = run_start[:, None] + np.arange(n_pre)
    lv[pre] = prefix_levels
    un[pre] = prefix_units
    dest = np.ones(total, bool)  # the measured pulses: every run but the gaps and prefixes
    dest[gaps] = False
    dest[pre] = False
    lv[dest] = meas_levels  # the windows' pulses of ``levels``: the same values
    un[dest] = meas_units
    chip0 = un.cumsum()
    chip0 -= un
    return WindowRuns(lv, un, chip0, run_start, run_stop, n_pre)


