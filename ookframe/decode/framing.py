"""Framing of every candidate window at once: sync search with the bit-error allowance,
unstuffing, field parsing and check, frame start / end times, the unit refit and the
timing statistics, as array operations over all windows.

Every layout takes this one path. Frames of one fixed layout of integer fields, sent by a
block code without stuffing (:func:`fixed_body_bits`), are parsed as one array; for the
others (bit stuffing, a length field with bytes, codes of data-dependent length such as
pulse distance) the few windows whose sync was found are unstuffed and parsed one by
one, and everything else stays array-wide.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..frame import FrameColumns, parse_frames, parse_ragged, parse_rows
from ..linecodes import DecodedBits
from ..spec.model import FrameSpec
from .head import HeadModel
from .windows import WindowRuns, Windows, ragged_index


def array_body_bits(spec: FrameSpec, hm: HeadModel) -> int | None:
    """Return the fields + check bits of every frame when they are parsed as one array
    (one fixed layout, a block code, no stuffing), else None."""
    lc = hm.line_code
    n_body = hm.plan.fixed_body_bits
    if n_body is None or lc.chips_per_block is None or lc.max_stuffed_bits(n_body):
        return None
    return n_body


#: data bits whose worst-case stuffing tells whether a line code stuffs at all (none: the
#: bits as received are the frame's, read without unstuffing)
NO_STUFFING_PROBE_BITS = 1 << 16


@dataclass(frozen=True, eq=False)
class WindowFrames:
    """Per candidate window: whether a frame was decoded from it and its figures.

    Arrays have one entry per window (meaningless where ``found`` is False); ``parsed``
    holds the fields of the found windows, in window order (one entry per found window). Figures as in
    ``DecodedFrame``; ``last`` is the train index of the frame's last measured run;
    ``synced``: the sync word was found (whether or not the body could be read).
    """

    found: np.ndarray
    parsed: FrameColumns
    last: np.ndarray
    start_us: np.ndarray
    end_us: np.ndarray
    unit_us: np.ndarray
    worst_deviation: np.ndarray
    pulses: np.ndarray
    sync_errors: np.ndarray
    timing_errors: np.ndarray
    code_errors: np.ndarray
    synced: np.ndarray


@dataclass(frozen=True)
class _Streams:
    """The line-code candidates (one per chip phase) laid end to end, then zeros (bits 0,
    not valid: as many as the longest frame's on-air body, so a row of them can be taken
    from any stream index, :func:`_take_rows`), and where each window's part of each
    candidate lies: ``lo``/``hi`` are (phases x windows)."""

    bits: np.ndarray
    valid: np.ndarray
    run: np.ndarray
    lo: np.ndarray
    hi: np.ndarray


def _rows(*arrays: np.ndarray) -> np.ndarray:
    """Return 1-D arrays of one length and dtype as the rows of a 2-D array
    (``np.stack`` at a lower fixed cost)."""
    return np.concatenate(arrays).reshape(len(arrays), -1)


def _streams(runs: WindowRuns, cands: list[DecodedBits], pad: int) -> _Streams:
    run = np.concatenate([c.run_index for c in cands] + [np.zeros(1, np.int64)])
    # each window's part of each candidate: a search of its run indices (sorted), offset
    # by the bits of the candidates before it
    bounds = np.concatenate((runs.run_start, runs.run_stop))
    before = itertools.accumulate([c.bits.size for c in cands[:-1]], initial=0)
    lo_hi = np.concatenate([np.searchsorted(c.run_index, bounds) + at
                            for c, at in zip(cands, before, strict=True)])
    lo_hi = lo_hi.reshape(len(cands), 2, -1)
    pad = max(pad, 1)
    return _Streams(np.concatenate([c.bits for c in cands] + [np.zeros(pad, np.uint8)]),
                    np.concatenate([c.valid for c in cands] + [np.zeros(pad, bool)]),
                    run, lo_hi[:, 0], lo_hi[:, 1])


def _take_rows(a: np.ndarray, starts: np.ndarray, width: int) -> np.ndarray:
    """Return the rows ``a[s:s + width]`` for every ``s`` of ``starts`` (a new array; ``a``
    holds ``width`` entries past every start): a copy of whole rows, not of entry after
    entry."""
    every = np.ndarray((a.size - width + 1, width), a.dtype, a, 0, (a.itemsize, a.itemsize))
    return every[starts]


def _errors(st: _Streams, at: np.ndarray, pattern: np.ndarray) -> np.ndarray:
    """Return True where the bit at stream index ``at`` differs from ``pattern`` (last
    axis) or is invalid; indices out of the streams count as errors (callers mask them)."""
    at = np.minimum(np.maximum(at, 0), st.bits.size - 1)
    return (st.bits[at] != pattern) | ~st.valid[at]


#: the sync search's key of an offset that is no hit
_NO_HIT = np.iinfo(np.int64).max


def _find_sync(spec: FrameSpec, hm: HeadModel, st: _Streams
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return per window (found, phase, sync offset, sync errors) of the best sync hit.

    Offsets within ``sync_reach_bits`` of the expected one are tried in each candidate; a hit
    has at most ``max_errors`` errors in the sync word (an invalid bit is an error). The best
    hit has the fewest lead + sync errors (lead: the preamble bits just before the sync),
    then the fewest sync errors, then the offset closest to the expected one (the lowest
    offset of a tie), then the earliest phase.
    """
    sync, lead = hm.sync_bits, hm.lead_bits
    n, nl, e, reach = sync.size, lead.size, hm.sync_bit, hm.sync_reach_bits
    pattern = np.concatenate((lead, sync))
    n_phase, n_win = st.lo.shape
    length = st.hi - st.lo
    found = np.zeros(n_win, bool)
    phase = np.zeros(n_win, np.int64)
    pos = np.full(n_win, e, np.int64)
    errs = np.zeros(n_win, np.int64)
    # a perfect hit where expected (lead bits included) cannot be beaten: the first phase
    # with one wins
    exact = (length >= e + n) & ~_errors(st, st.lo[..., None] + (e - nl) + np.arange(nl + n),
                                         pattern).any(axis=-1)
    has = exact.any(axis=0)
    found[has] = True
    phase[has] = exact.argmax(axis=0)[has]
    rest = np.flatnonzero(~has)
    if rest.size == 0:
        return found, phase, pos, errs
    offs = np.arange(e - reach, e + reach + 1)
    rel = offs[:, None] + np.arange(-nl, n)  # offsets x (lead + sync) bit positions
    err = _errors(st, st.lo[:, rest, None, None] + rel, pattern) & (rel >= 0)
    sync_err = err[..., nl:].sum(axis=-1)
    total = sync_err + err[..., :nl].sum(axis=-1)
    ok = (offs >= 0) & (offs <= length[:, rest, None] - n) & (sync_err <= spec.sync.max_errors)
    key = np.where(ok, (total * (n + 1) + sync_err) * (reach + 1) + np.abs(offs - e), _NO_HIT)
    at = key.argmin(axis=-1)  # phases x rest: the first of ties is the lowest offset
    best = key.min(axis=-1)  # the key at ``at``
    ph = best.argmin(axis=0)  # the first of ties is the earliest phase
    cols = np.arange(rest.size)
    hit = best[ph, cols] < _NO_HIT
    o = at[ph, cols]
    found[rest] = hit
    phase[rest] = ph
    pos[rest] = offs[o]
    errs[rest] = sync_err[ph, cols, o]
    return found, phase, pos, errs


def _starts(lengths: np.ndarray) -> np.ndarray:
    return np.cumsum(lengths) - lengths


@dataclass(frozen=True, eq=False)
class _Segments:
    """Segments of ``lengths`` laid end to end: where each starts, which are not empty
    (``nz``) and the starts of those (``at``, what ``reduceat`` takes); ``size``: their
    total length."""

    lengths: np.ndarray
    starts: np.ndarray
    nz: np.ndarray
    at: np.ndarray
    size: int


def _segments(lengths: np.ndarray) -> _Segments:
    ends = np.cumsum(lengths)
    starts = ends - lengths
    nz = lengths > 0
    return _Segments(lengths, starts, nz, starts[nz], int(ends[-1]) if ends.size else 0)


def _sums(values: np.ndarray, seg: _Segments) -> np.ndarray:
    """Return the sum of every segment of ``values`` (along the last axis; a 2-D array's
    rows are summed each on its own, as ``reduceat`` sums a 1-D row) as float."""
    if seg.at.size == seg.lengths.size and values.shape[-1]:
        return np.add.reduceat(values, seg.at, axis=-1).astype(np.float64, copy=False)
    out = np.zeros((*values.shape[:-1], seg.lengths.size))
    if values.shape[-1]:
        out[..., seg.nz] = np.add.reduceat(values, seg.at, axis=-1)
    return out


def _before(a: np.ndarray, start: np.ndarray) -> np.ndarray:
    """Return ``a[start - 1]``, 0 where ``start`` is 0 (``concatenate(([0], a))[start]``)."""
    if a.size == 0:
        return np.zeros(start.size, a.dtype)
    return np.where(start > 0, a[np.maximum(start - 1, 0)], a.dtype.type(0))


def _unit_fit(d: np.ndarray, units: np.ndarray, seg: _Segments) -> np.ndarray:
    """Return per segment the least-squares unit: the slope of edge time over chip count,
    every edge weighing the same (NaN or inf for segments of fewer than 2 runs). Chip
    counts stay integers (their sums are exact either way)."""
    t = np.cumsum(d)
    t -= np.repeat(_before(t, seg.starts), seg.lengths)
    c = np.cumsum(units)
    c -= np.repeat(_before(c, seg.starts), seg.lengths)
    return _slope(c, t, seg, seg.lengths + 1.0)


def _slope(x: np.ndarray, y: np.ndarray, seg: _Segments, n: np.ndarray) -> np.ndarray:
    """Return per segment (of ``seg``) the least-squares slope of ``y`` over ``x`` with
    ``n`` points (points at the origin add to ``n`` only); NaN or inf where undefined.
    Integer ``x`` is summed as integers (exact), ``y`` as float."""
    if x.dtype.kind == "f":
        sx, sy, sxx, sxy = _sums(_rows(x, y, x * x, x * y), seg)
    else:
        sx, sxx = _sums(_rows(x, x * x), seg)
        sy, sxy = _sums(_rows(y, x * y), seg)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (n * sxy - sx * sy) / (n * sxx - sx * sx)


def _bodies(spec: FrameSpec, hm: HeadModel, st: _Streams, lo: np.ndarray, hi: np.ndarray,
            body_at: np.ndarray) -> tuple[np.ndarray, FrameColumns, np.ndarray, np.ndarray]:
    """Return (parsed, their fields, on-air body bits, code errors) for windows whose body
    starts at stream index ``lo + body_at`` (their streams end at ``hi``)."""
    lc = hm.line_code
    n_fixed = array_body_bits(spec, hm)
    if n_fixed is not None:
        ok = hi - lo - body_at >= n_fixed
        at = lo[ok] + body_at[ok]
        pf = parse_frames(hm.plan, _take_rows(st.bits, at, n_fixed))  # each the whole body
        parsed = pf.columns(np.arange(pf.complete.size))
        code = np.zeros(lo.size, np.int64)
        code[ok] = (~_take_rows(st.valid, at, n_fixed)).sum(axis=1)
        return ok, parsed, np.full(lo.size, n_fixed, np.int64), code
    ok = np.zeros(lo.size, bool)
    n_air = np.zeros(lo.size, np.int64)
    code = np.zeros(lo.size, np.int64)
    starts = lo + body_at
    if not lc.max_stuffed_bits(NO_STUFFING_PROBE_BITS):  # the bits as received are the body's
        width = hm.plan.max_body_bits
        col = np.arange(width)
        avail = np.minimum(hi - starts, width)
        rows = _take_rows(st.bits, starts, width)
        rows &= col < avail[:, None]  # zero past a row's own bits
        pr = parse_rows(hm.plan, rows, avail)
        i = np.flatnonzero(pr.complete)
        n = pr.n_bits[i]  # a complete frame's bits are all there (no stuffing to run past)
        ok[i] = True
        n_air[i] = n
        code[i] = (~_take_rows(st.valid, starts[i], width) & (col < n[:, None])).sum(axis=1)
        return ok, pr.columns(i), n_air, code
    received, n_rx = lc.unstuff_rows(st.bits[ragged_index(starts, hi - starts)], hi - starts)
    at = np.cumsum(n_rx) - n_rx
    pr = parse_ragged(hm.plan, received, n_rx)
    i = np.flatnonzero(pr.complete)
    n_bits = pr.n_bits[i]
    n = lc.stuff_rows(received[ragged_index(at[i], n_bits)], n_bits)[1]
    whole = n <= hi[i] - starts[i]  # else the stuffed frame runs past the window: cut off
    i, n = i[whole], n[whole]
    ok[i] = True
    parsed = pr.columns(i)
    n_air[i] = n
    # invalid codewords among each frame's own bits (not a running count over every stream)
    frame_of = np.repeat(np.arange(i.size), n)
    code[i] = np.bincount(frame_of[~st.valid[ragged_index(starts[i], n)]], minlength=i.size)
    return ok, parsed, n_air, code


def _frame_chips(hm: HeadModel, st: _Streams, lo: np.ndarray, body_at: np.ndarray,
                 n_air: np.ndarray) -> np.ndarray:
    """Return the chips of every frame (head + on-air body): fixed per block for block
    codes, else the code's own count for the bits received."""
    lc = hm.line_code
    n_bits = hm.head_bits.size + n_air
    if lc.chips_per_block is not None:
        return n_bits // lc.bits_per_block * lc.chips_per_block
    head = hm.head_bits
    h = head.size
    lengths = h + n_air
    if n_air.size == 0:
        return lc.chip_counts(np.zeros(0, np.uint8), lengths)
    # every frame as a row (head, then its body bits), cut to its own bits row after row
    col = np.arange(int(n_air.max()))
    rows = np.empty((n_air.size, h + col.size), np.uint8)
    rows[:, :h] = head
    rows[:, h:] = _take_rows(st.bits, lo + body_at, col.size)
    return lc.chip_counts(rows[np.arange(rows.shape[1]) < lengths[:, None]], lengths)


def _start_chips(hm: HeadModel, st: _Streams, runs: WindowRuns, lo: np.ndarray,
                 pos: np.ndarray, base: np.ndarray) -> np.ndarray:
    """Return per window the chip offset (from the window's first run) of the frame start:
    the sync's first chip less the head's chips before it."""
    lc = hm.line_code
    if lc.chips_per_block is None:  # every bit starts on a run of its own
        return runs.chip0[st.run[lo + pos]] - base - hm.sync_chip
    cpb, bpb = int(lc.chips_per_block), lc.bits_per_block
    # block b of a candidate sits at phase + b * cpb; a block's first chip lies in its run
    i = ragged_index(lo, pos + 1)
    v = runs.chip0[st.run[i]] - (i - np.repeat(lo, pos + 1)) // bpb * cpb
    return np.maximum.reduceat(v, _starts(pos + 1)) - base + pos // bpb * cpb - hm.sync_chip


#: a frame's start counted from the window's first pulse is replaced by the one counted
#: back from its sync word when they differ by more than this many units: more than two
#: edges can move apart under edge jitter below +-50 % of a unit, so the chip count of the
#: head between them is wrong
SYNC_LOCK_UNITS = 1.0
#: the lock steps back over the head at the frame's fitted unit, or at the head's where
#: the frame's is further than this fraction from the sync edges' own slope and the
#: head's nearer (a misread run late in the frame bends the frame's fit)
SYNC_UNIT_SLACK = 0.01


def _sync_chips(hm: HeadModel, st: _Streams, runs: WindowRuns, lo: np.ndarray,
                pos: np.ndarray, base: np.ndarray) -> np.ndarray:
    """Return per window the chip offset (from the window's first run) of the sync word's
    first chip as its own bits place it (block codes: the block phase of the sync's bits
    alone, so a misread run before it does not move it, where the sync as sent pins it)."""
    lc = hm.line_code
    if lc.chips_per_block is None:
        return runs.chip0[st.run[lo + pos]] - base
    cpb, bpb, n = int(lc.chips_per_block), lc.bits_per_block, hm.sync_bits.size
    # a block's first chip lies in its run, so each bit bounds the phase from below: its
    # own bits pin it where every block of the sync as sent starts a run (PWM); else the
    # whole head's phase (Manchester: a 1 after a 0 starts inside the 0's run)
    blocks = hm.sync_chip + np.arange(-(-n // bpb)) * cpb
    if not np.isin(blocks, np.cumsum(hm.units) - hm.units).all():
        return _start_chips(hm, st, runs, lo, pos, base) + hm.sync_chip
    i = ragged_index(lo + pos, np.full(pos.size, n))
    bit = i - np.repeat(lo, n)  # bit index from the window's first
    v = runs.chip0[st.run[i]] - np.repeat(base, n) - bit // bpb * cpb
    return np.maximum.reduceat(v, np.arange(pos.size) * n) + pos // bpb * cpb


def _sync_start_us(hm: HeadModel, runs: WindowRuns, rs: np.ndarray, nr: np.ndarray,
                   base: np.ndarray, c_sync: np.ndarray, t0: np.ndarray, first: np.ndarray,
                   units_us: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """Return per frame its start as the sync word puts it: the median over the measured
    edges of the sync word (its first chip ``c_sync`` to the body's, chips from the
    window's ``base``) of the edge's time less its chips from the sync's first, less the
    head's chips before the sync as sent; NaN where none is measured. The unit: the
    frame's fit (``units_us`` = (the head's, the frame's)), or the head's where
    ``SYNC_UNIT_SLACK`` says (the sync's own slope, least squares over its edges, is too
    noisy to step back over the head with), so a misread run outside the sync that bent
    one of them does not carry into the long step back. One misplaced edge (a pulse
    merged with a neighbour the glitch filter dropped) does not move the median."""
    n_pre = runs.n_prefix
    at = c_sync + base
    lo = np.searchsorted(runs.chip0, at, side="left") - rs
    hi = np.searchsorted(runs.chip0, at + (hm.body_chip - hm.sync_chip), side="right") - rs
    lo, hi = np.maximum(lo, n_pre), np.minimum(hi, nr)
    cnt = np.maximum(hi - lo, 0)
    seg = _segments(cnt)
    # the measured runs of the sync word, per frame (their chips from the sync's first, and
    # their start times)
    k = np.arange(seg.size)
    per = np.repeat(_rows(rs + lo - seg.starts, at, first + lo - n_pre - seg.starts),
                    cnt, axis=1)
    chips = (runs.chip0[per[0] + k] - per[1]).astype(np.float64)
    t = t0[per[2] + k]
    t_rel = t - np.repeat(t[np.minimum(seg.starts, t.size - 1)], cnt) if t.size else t
    own = _slope(chips, t_rel, seg, cnt.astype(np.float64))
    head, frame = units_us
    off = np.abs(frame - own)
    unit = np.where(np.isfinite(frame) & (frame > 0) & ~((off > SYNC_UNIT_SLACK * frame)
                                                         & (np.abs(head - own) < off)),
                    frame, head)
    out = np.full(cnt.size, np.nan)
    if seg.size == 0:
        return out
    # the median of every frame's estimates: each frame's row sorted (NaN after every
    # number, as in one sort of all of them by frame then value)
    est = np.full((cnt.size, int(cnt.max())), np.nan)
    est[np.arange(est.shape[1]) < cnt[:, None]] = t - chips * np.repeat(unit, cnt)
    est.sort(axis=1)
    m = np.flatnonzero(seg.nz)
    c = cnt[m]
    mid = (est[m, (c - 1) // 2] + est[m, c // 2]) / 2
    out[m] = mid - hm.sync_chip * unit[m]
    return out


def frame_windows(spec: FrameSpec, hm: HeadModel, ws: Windows, runs: WindowRuns,
                  cands: list[DecodedBits], dur: np.ndarray, t0: np.ndarray) -> WindowFrames:
    """Return the frame decoded from every window (any layout).

    ``cands`` are the line-code candidates of ``runs`` (one ``decode`` call), ``dur`` and
    ``t0`` the durations and start times of the (glitch-filtered) train.
    """
    width = hm.plan.max_body_bits
    st = _streams(runs, cands, width + hm.line_code.max_stuffed_bits(width))
    n_win = ws.first.size
    found, phase, pos, sync_err = _find_sync(spec, hm, st)
    win = np.arange(n_win)
    lo_all, hi_all = st.lo[phase, win], st.hi[phase, win]
    body_at_all = pos + hm.sync_bits.size
    synced = found.copy()
    f = np.flatnonzero(found & (hi_all - lo_all - body_at_all >= 0))
    ok, parsed, n_air, code_errors = _bodies(spec, hm, st, lo_all[f], hi_all[f],
                                             body_at_all[f])
    f, n_air, code_errors = f[ok], n_air[ok], code_errors[ok]
    found = np.zeros(n_win, bool)
    found[f] = True
    lo, pos, body_at = lo_all[f], pos[f], body_at_all[f]
    rs, nr = runs.run_start[f], runs.run_stop[f] - runs.run_start[f]
    base = runs.chip0[rs]
    c_start = _start_chips(hm, st, runs, lo, pos, base)
    c_end = c_start + _frame_chips(hm, st, lo, body_at, n_air)
    n_pre = runs.n_prefix
    pre_chips = int(hm.prefix_units.sum())
    first, off, unit0 = ws.first[f], ws.offset[f], ws.start_unit_us[f]

    def run_at(chip: np.ndarray) -> np.ndarray:
        r = np.searchsorted(runs.chip0, chip + base, side="right") - 1 - rs
        return np.minimum(np.maximum(r, 0), nr - 1)

    def measured(r: np.ndarray) -> np.ndarray:
        return np.maximum(r - n_pre, 0)

    def chip_of(r: np.ndarray) -> np.ndarray:
        return runs.chip0[rs + r] - base

    def start_time(r: np.ndarray) -> np.ndarray:
        return np.where(r < n_pre, t0[first] - (pre_chips - chip_of(r)) * unit0,
                        t0[first + measured(r)])

    def unit_at(r: np.ndarray) -> np.ndarray:
        return np.where(r < n_pre, unit0, ws.unit_us[off + measured(r)])

    r0 = run_at(c_start)
    start_us = start_time(r0) + (c_start - chip_of(r0)) * unit_at(r0)
    last = run_at(c_end - 1)
    last_capped = (last >= n_pre) & ws.capped[off + measured(last)]
    whole = (c_end == chip_of(last) + runs.units[rs + last]) & (last >= n_pre) & ~last_capped
    end_us = np.where(whole, start_time(last) + ws.durations_us[off + measured(last)],
                      start_time(last) + (c_end - chip_of(last)) * unit_at(last))

    # measured runs wholly inside the frame: a contiguous range [i0, i1); the last run is
    # left out when it was capped (it is the gap after the frame)
    i0 = np.maximum(n_pre, np.searchsorted(runs.chip0, c_start + base, side="left") - rs)
    ends = runs.chip0 + runs.units
    i1 = np.minimum(last + 1, np.searchsorted(ends, c_end + base, side="right") - rs)
    i1 = i1 - ((i1 == last + 1) & last_capped)
    cnt = np.maximum(i1 - i0, 0)
    seg = _segments(cnt)
    at = ragged_index(off + i0 - n_pre, seg.lengths, seg.starts)  # the runs in the Windows arrays
    dev = ws.deviation[at]
    worst = np.zeros(f.size)
    if dev.size:
        worst[seg.nz] = np.maximum.reduceat(dev, seg.at)
    timing = _sums((dev > spec.decoder.tolerance).astype(np.float64), seg)
    d, units = ws.durations_us[at], ws.units[at]
    # a frame of one run: its duration over its units (the sums of one entry)
    one = np.minimum(seg.starts, max(d.size - 1, 0))
    unit = np.where(cnt >= 2, _unit_fit(d, units, seg),
                    np.where(cnt == 1, d[one] / np.maximum(units[one], 1), ws.unit_us[off])
                    if d.size else ws.unit_us[off])

    sync_us = _sync_start_us(hm, runs, rs, nr, base, _sync_chips(hm, st, runs, lo, pos, base),
                             t0, first, (unit0, unit))
    start_us = np.where(np.abs(start_us - sync_us) > SYNC_LOCK_UNITS * unit0, sync_us, start_us)

    def full(values: np.ndarray, dtype: type) -> np.ndarray:
        out = np.zeros(n_win, dtype)
        out[f] = values
        return out

    return WindowFrames(
        found=found, parsed=parsed,
        last=full(first + last - n_pre, np.int64),
        start_us=full(start_us, np.float64), end_us=full(end_us, np.float64),
        unit_us=full(unit, np.float64), worst_deviation=full(worst, np.float64),
        pulses=full(cnt, np.int64), sync_errors=sync_err,
        timing_errors=full(timing, np.int64), code_errors=full(code_errors, np.int64),
        synced=synced)
