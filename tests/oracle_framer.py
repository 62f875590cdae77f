"""Test oracle: the per-window framer and single-stream sync search the decoder used before
its one array framer (``ookframe.decode.framing``), kept here only to check that framer.

The library frames every candidate window at once; this module frames one window at a
time with the same decisions, the way the first decoder did, and ``oracle_frames`` runs
the decoder's own stages with it in place of the array framer.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from ookframe.decode import framing
from ookframe.decode.framer import DecodedFrame
from ookframe.decode.head import HeadModel
from ookframe.decode.windows import WindowRuns, Windows
from ookframe.frame import parse_frame
from ookframe.linecodes import DecodedBits, LineCode
from ookframe.spec.model import FrameSpec


def fit_unit(durations_us: np.ndarray, units: np.ndarray) -> np.ndarray:
    """Return the least-squares unit in µs (slope of edge time over edge chip count).

    ``durations_us`` is (..., k) measured runs, ``units`` their lengths in units (k,) or
    (..., k); every edge (k + 1 of them, the first at time 0) weighs the same, so the
    jitter of single edges averages out much better than in total time / total units.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    n = d.shape[-1] + 1  # the origin edge (0, 0) adds nothing to the sums below
    if d.ndim == 1:  # one fit: dot products (this runs once per decoded frame)
        t = d.cumsum()
        c = np.asarray(units).cumsum(dtype=np.float64)
        st, sc = t.sum(), c.sum()
        return np.float64((n * t.dot(c) - st * sc) / (n * c.dot(c) - sc * sc))
    t = np.cumsum(d, axis=-1)
    c = np.cumsum(np.broadcast_to(np.asarray(units, dtype=np.float64), d.shape), axis=-1)
    st, sc = t.sum(axis=-1), c.sum(axis=-1)
    return (n * (t * c).sum(axis=-1) - st * sc) / (n * (c * c).sum(axis=-1) - sc * sc)


def bit_chips(line_code: LineCode, cs: np.ndarray, run_index: np.ndarray, stop: int) -> np.ndarray:
    """Return the chip offset of the first chip of the code block of bits 0 .. stop-1.

    ``cs`` is the chip offset of every run given to ``decode``, ``run_index`` the run of
    each bit of one candidate. Fixed-length codes: block b sits at ``phase + b *
    chips_per_block``; a block's first chip lies in its run, so the phase is at least
    ``cs[run] - b * chips_per_block`` for every block, and the first block starts on the
    window's first run boundary at or after it. Other codes start every bit on a run.
    """
    r = run_index[:stop]
    cpb = line_code.chips_per_block
    if cpb is None or r.size == 0:
        return cs[r]
    block = np.arange(r.size) // line_code.bits_per_block * cpb
    phase = int((cs[r] - block).max())
    return phase + block


def split_candidates(runs: WindowRuns, cands: list[DecodedBits]) -> list[list[DecodedBits]]:
    """Return per window its part of every line-code candidate of the laid-out runs (run
    indices relative to the window's first run)."""
    out: list[list[DecodedBits]] = [[] for _ in range(runs.run_start.size)]
    for cand in cands:
        lo = np.searchsorted(cand.run_index, runs.run_start).tolist()
        hi = np.searchsorted(cand.run_index, runs.run_stop).tolist()
        for k, (a, b) in enumerate(zip(lo, hi, strict=True)):
            out[k].append(DecodedBits(cand.bits[a:b], cand.run_index[a:b] - runs.run_start[k],
                                      cand.valid[a:b]))
    return out
def pattern_errors(bits: np.ndarray, valid: np.ndarray, pattern: np.ndarray) -> np.ndarray:
    """Return (offsets x pattern bits) bool: True where the bit differs or is invalid.

    An invalid bit (bad codeword) always counts as an error. Rows: every offset at which
    the whole pattern fits (none when the stream is shorter than the pattern).
    """
    n = pattern.size
    if bits.size < n:
        return np.zeros((0, n), bool)
    return (sliding_window_view(bits, n) != pattern) | sliding_window_view(~valid, n)


def sync_distance(bits: np.ndarray, valid: np.ndarray, sync: np.ndarray) -> np.ndarray:
    """Return the Hamming distance (int64) between ``sync`` and the bits at every offset."""
    return pattern_errors(bits, valid, sync).sum(axis=1, dtype=np.int64)


def best_sync(bits: np.ndarray, valid: np.ndarray, lead: np.ndarray, sync: np.ndarray,
              expected: int, reach: int, max_errors: int) -> tuple[int, int, int] | None:
    """Return (offset, sync errors, lead errors) of the best sync hit near ``expected``.

    Offsets ``expected +- reach`` are tried; a hit has at most ``max_errors`` errors in
    the sync word (an invalid bit counts as an error). ``lead`` are the bits expected just
    before the sync (preamble tail, not counted where the stream starts later); the best
    hit has the fewest errors over lead + sync, then the fewest in the sync (exact hits
    first), then the offset closest to ``expected``. None if there is no hit.
    """
    n = sync.size
    lo = max(expected - reach, 0)
    hi = min(expected + reach, bits.size - n)
    if hi < lo:
        return None
    if hi - lo < _SMALL_SPAN and lead.size + n <= 64:
        return _best_sync_small(bits, valid, lead, sync, expected, lo, hi, max_errors)
    offsets = np.arange(lo, hi + 1)
    at = offsets[:, None] + np.arange(n)
    sync_err = ((bits[at] != sync) | ~valid[at]).sum(axis=1)
    ok = sync_err <= max_errors
    if not ok.any():
        return None
    offsets, sync_err = offsets[ok], sync_err[ok]
    at = offsets[:, None] + np.arange(-lead.size, 0)
    inside = at >= 0
    at = np.maximum(at, 0)
    lead_err = (((bits[at] != lead) | ~valid[at]) & inside).sum(axis=1)
    k = np.lexsort((np.abs(offsets - expected), sync_err, sync_err + lead_err))[0]
    return int(offsets[k]), int(sync_err[k]), int(lead_err[k])


#: offsets up to this many are tried one by one on packed integers (a few numpy calls
#: instead of a few dozen); wider searches use the array form above
_SMALL_SPAN = 32


def _as_int(bits: np.ndarray) -> int:
    """Return the bits (first bit most significant) as one integer."""
    return int.from_bytes(np.packbits(bits).tobytes(), "big") >> (-bits.size % 8)


def _best_sync_small(bits: np.ndarray, valid: np.ndarray, lead: np.ndarray, sync: np.ndarray,
                     expected: int, lo: int, hi: int, max_errors: int
                     ) -> tuple[int, int, int] | None:
    """:func:`best_sync` over offsets lo .. hi (both in range), on packed integers."""
    n, n_lead = sync.size, lead.size
    a, b = max(lo - n_lead, 0), hi + n
    seg = _as_int(bits[a:b])
    bad = _as_int(~valid[a:b])
    pattern = _as_int(np.concatenate((lead, sync)))
    sync_mask = (1 << n) - 1
    best = None
    best_key = None
    for o in range(lo, hi + 1):
        shift = b - o - n
        # lead bits before the stream start are not counted
        err = (((seg >> shift) ^ pattern) | (bad >> shift)) & ((1 << min(n_lead + n, o + n)) - 1)
        sync_err = (err & sync_mask).bit_count()
        if sync_err > max_errors:
            continue
        lead_err = (err >> n).bit_count()
        key = (sync_err + lead_err, sync_err, abs(o - expected))
        if best_key is None or key < best_key:  # first of ties: lowest offset
            best_key, best = key, (o, sync_err, lead_err)
    return best


@dataclass(frozen=True)
class _Window:
    """Runs given to the line code for one candidate: the head prefix (runs as sent, not
    measured) + the window's measured pulses; timing looked up on demand."""

    levels: np.ndarray
    units: np.ndarray
    chip0: np.ndarray  # chip offset of every run
    n_prefix: int
    first: int  # train index of the first measured pulse
    at: int  # where the measured pulses start in the Windows arrays
    unit0_us: float
    ws: Windows
    t0: np.ndarray  # start time of every pulse of the train
    dur: np.ndarray  # durations of every pulse of the train

    def start_us(self, r: int) -> float:
        """Start time of run ``r`` (prefix runs extrapolated back with the start unit)."""
        if r < self.n_prefix:
            return float(self.t0[self.first] - (self.chip0[self.n_prefix] - self.chip0[r])
                         * self.unit0_us)
        return float(self.t0[self.first + r - self.n_prefix])

    def unit_us(self, r: int) -> float:
        return self.unit0_us if r < self.n_prefix else float(
            self.ws.unit_us[self.at + r - self.n_prefix])

    def measured(self, runs: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Return (runs not capped, their durations, deviation of all ``runs``) for runs
        of the measured part."""
        k = runs - self.n_prefix
        capped = self.ws.capped[self.at + k]
        return runs[~capped], self.dur[self.first + k[~capped]], self.ws.deviation[self.at + k]

    def time_of_chip(self, chip: int, *, end: bool = False) -> tuple[float, int]:
        """Return (time in µs, run) of the start of ``chip`` (of its end with ``end``)."""
        c = chip - 1 if end else chip
        r = int(self.chip0.searchsorted(c, side="right")) - 1
        r = min(max(r, 0), self.levels.size - 1)
        if end and chip == self.chip0[r] + self.units[r] and r >= self.n_prefix \
                and not self.ws.capped[self.at + r - self.n_prefix]:
            return self.start_us(r) + float(self.dur[self.first + r - self.n_prefix]), r
        return self.start_us(r) + (chip - int(self.chip0[r])) * self.unit_us(r), r


def _window(hm: HeadModel, ws: Windows, k: int, levels: np.ndarray, dur: np.ndarray,
            t0: np.ndarray) -> _Window:
    """Return the runs of candidate window ``k`` with the head prefix in front."""
    first, a = int(ws.first[k]), int(ws.offset[k])
    m = int(ws.length[k])
    units = np.concatenate((hm.prefix_units, ws.units[a:a + m]))
    chip0 = np.cumsum(units) - units
    return _Window(np.concatenate((hm.prefix_levels, levels[first:first + m])), units, chip0,
                   int(hm.prefix_units.size), first, a, float(ws.start_unit_us[k]), ws, t0, dur)


def _rank(hit: tuple[int, int, int], hm: HeadModel) -> tuple[int, int, int]:
    pos, sync_errors, lead_errors = hit
    return sync_errors + lead_errors, sync_errors, abs(pos - hm.sync_bit)


def _frame_from(spec: FrameSpec, hm: HeadModel, w: _Window, cands: list[DecodedBits]
                ) -> tuple[DecodedFrame, int] | None:
    """Return (frame, train index of its last pulse) decoded from one window (its runs and
    their line-code candidates), or None."""
    lc = hm.line_code
    sync = hm.sync_bits
    best = None
    for cand in cands:
        hit = best_sync(cand.bits, cand.valid, hm.lead_bits, sync, hm.sync_bit,
                        hm.sync_reach_bits, spec.sync.max_errors)
        if hit is not None and (best is None or _rank(hit, hm) < _rank(best[1], hm)):
            best = (cand, hit)
            if _rank(hit, hm) == (0, 0, 0):
                break  # a perfect hit where expected: no other phase can beat it
    if best is None:
        return None
    cand, (pos, sync_errors, _) = best
    body_at = pos + sync.size
    body = lc.unstuff(cand.bits[body_at:])
    parsed = parse_frame(spec, body)
    if parsed is None:
        return None
    on_air = lc.stuff(body[:parsed.n_bits])
    end_bit = body_at + on_air.size
    if end_bit > cand.bits.size:
        return None
    c_start = int(bit_chips(lc, w.chip0, cand.run_index, pos + 1)[pos]) - hm.sync_chip
    n_bits = hm.head_bits.size + on_air.size
    if lc.chips_per_block is not None:
        n_chips = n_bits // lc.bits_per_block * lc.chips_per_block
    else:
        n_chips = lc.encode(np.concatenate((hm.head_bits, on_air))).size
    start_us, _ = w.time_of_chip(c_start)
    end_us, last = w.time_of_chip(c_start + n_chips, end=True)
    # measured runs wholly inside the frame (the last one often runs on into the gap)
    inner = np.arange(max(w.n_prefix, int(np.searchsorted(w.chip0, c_start))), last + 1)
    inner = inner[w.chip0[inner] + w.units[inner] <= c_start + n_chips]
    measured, d, dev = w.measured(inner)
    if inner.size and inner[-1] == last and (measured.size == 0 or measured[-1] != last):
        inner, dev = inner[:-1], dev[:-1]  # the last run was capped: it is the gap
    if measured.size >= 2 and measured[-1] - measured[0] == measured.size - 1:
        unit_us = float(fit_unit(d, w.units[measured]))
    elif measured.size:
        unit_us = float(d.sum() / w.units[measured].sum())
    else:
        unit_us = w.unit_us(w.n_prefix)
    # the start counted back from the sync word's measured edges (median), where it
    # differs from the one counted on from the window's first pulse by over a unit; the
    # unit of the frame's fit, or the head's where the frame's strays from the sync's slope
    head_runs = np.cumsum(hm.units) - hm.units
    if lc.chips_per_block is None:
        c_sync = int(w.chip0[cand.run_index[pos]])
    elif all(hm.sync_chip + b * lc.chips_per_block in head_runs
             for b in range(-(-sync.size // lc.bits_per_block))):
        # the sync's first chip as its own bits place it (their block phase alone)
        j = np.arange(pos, pos + sync.size)
        block = j // lc.bits_per_block * lc.chips_per_block
        c_sync = int((w.chip0[cand.run_index[j]] - block).max()) + int(block[0])
    else:  # a block of the sync as sent starts inside a run: its bits alone do not pin it
        c_sync = c_start + hm.sync_chip
    runs = np.arange(w.n_prefix, w.levels.size)
    runs = runs[(w.chip0[runs] >= c_sync) & (w.chip0[runs] <= c_sync + hm.body_chip
                                               - hm.sync_chip)]
    if runs.size:
        c = (w.chip0[runs] - c_sync).astype(np.float64)
        t = w.t0[w.first + runs - w.n_prefix]
        tr = t - t[0]
        n = float(c.size)
        with np.errstate(divide="ignore", invalid="ignore"):
            own = (n * (c * tr).sum() - c.sum() * tr.sum()) / (n * (c * c).sum() - c.sum() ** 2)
        off = abs(unit_us - own)
        lock_unit = unit_us if np.isfinite(unit_us) and unit_us > 0 and not (
            off > framing.SYNC_UNIT_SLACK * unit_us and abs(w.unit0_us - own) < off
        ) else w.unit0_us
        sync_us = float(np.median(t - c * lock_unit)) - hm.sync_chip * lock_unit
        if abs(start_us - sync_us) > framing.SYNC_LOCK_UNITS * w.unit0_us:
            start_us = sync_us
    frame = DecodedFrame(
        fields=parsed.fields,
        raw=parsed.raw,
        payload_hex=parsed.payload_hex,
        crc_ok=parsed.check_ok,
        start_us=start_us,
        end_us=end_us,
        unit_us=unit_us,
        clock_error=unit_us / spec.unit_us - 1.0,
        worst_deviation=float(dev.max()) if dev.size else 0.0,
        pulses=int(inner.size),
        sync_errors=sync_errors,
        timing_errors=int((dev > spec.decoder.tolerance).sum()),
        code_errors=int((~cand.valid[body_at:end_bit]).sum()),
    )
    return frame, w.first + last - w.n_prefix




def oracle_frames(spec: FrameSpec, hm: HeadModel, ws: Windows, runs: WindowRuns,
                  cands: list[DecodedBits], levels: np.ndarray, dur: np.ndarray,
                  t0: np.ndarray) -> tuple[list[tuple[DecodedFrame, int] | None], np.ndarray]:
    """Same interface as ``framer._frame_all``: every window framed on its own; and per
    window whether its sync word was found."""
    per_window = split_candidates(runs, cands)
    frames = [_frame_from(spec, hm, _window(hm, ws, k, levels, dur, t0), per_window[k])
              for k in range(ws.first.size)]
    synced = np.array([any(best_sync(c.bits, c.valid, hm.lead_bits, hm.sync_bits, hm.sync_bit,
                                     hm.sync_reach_bits, spec.sync.max_errors) is not None
                           for c in per_window[k]) for k in range(ws.first.size)], bool)
    return frames, synced
