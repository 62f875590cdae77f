"""The reference decoder: pulse train -> decoded frames (pipeline in ``decode``).

Limits (by design, not bugs):

- A sync word that merely continues the preamble pattern cannot be located.
- With fewer than 4 preamble runs the sync word's runs join the signature, so the sync
  must then arrive without bit errors.
- Transmitter clocks within +-10 % of ``unit_us`` are searched (``head.MAX_CLOCK_ERROR``).
- The tracking loop's estimate wanders by about ``loop_gain`` x the edge jitter, so with
  +-15 % edge jitter NRZ runs much longer than ~30 units can be misread; stuffing,
  whitening or a smaller ``decoder.loop_gain`` keep long-run links decodable.
- Frames cut off by the end of the train are not reported.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..frame import parse_frame
from ..linecodes import DecodedBits
from ..pulses import PulseTrain
from ..spec.model import FrameSpec
from .bulk import BulkFrames, bulk_body_bits, bulk_frames
from .classify import fit_unit
from .detect import find_candidates
from .glitch import drop_glitches
from .head import MAX_CLOCK_ERROR, HeadModel, bit_chips, head_model
from .segment import burst_breaks, burst_end
from .sync import best_sync
from .validate import validate_train
from .windows import Windows, classify_windows, lay_out, split_candidates

#: a frame the check cannot vouch for is taken for noise when more than this fraction
#: of its pulses is out of tolerance (random pulses: typically 25-50 %; real frames hit
#: by interference: a few %)
NOISE_TIMING_FRACTION = 0.2


@dataclass(frozen=True)
class DecodedFrame:
    """One frame found in a pulse train.

    fields: name -> physical value (bytes fields as hex); raw: name -> raw int / bytes;
    payload_hex: the field bytes as packed on air, de-whitened; crc_ok: the check (CRC or
    checksum) matches (True when the spec has none).
    start_us / end_us: time of the frame's first chip start and last chip end, measured
    from the start of the train (the first chip is extrapolated when it merged with idle).
    unit_us: estimated symbol unit of this frame (least-squares fit of its edge times over
    their chip counts);
    clock_error: unit_us / spec.unit_us - 1.
    worst_deviation: largest |duration / tracked unit - whole units| of the frame's pulses,
    as a fraction of one unit (0.5 would be a coin toss between two unit counts).
    pulses: measured pulses wholly inside the frame (the rates below are out of these);
    sync_errors: bit errors in the sync word; timing_errors: pulses off by more than the
    spec's tolerance; code_errors: data bits whose chips were no valid codeword.
    """

    fields: dict[str, object]
    raw: dict[str, object]
    payload_hex: str
    crc_ok: bool
    start_us: float
    end_us: float
    unit_us: float
    clock_error: float
    worst_deviation: float
    pulses: int
    sync_errors: int
    timing_errors: int
    code_errors: int


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


def _plausible(spec: FrameSpec, frame: DecodedFrame) -> bool:
    """True unless the check cannot vouch for the frame (it failed, or there is none) and
    more than NOISE_TIMING_FRACTION of its pulses are out of tolerance: noise, not a frame."""
    if frame.crc_ok and spec.check.kind != "none":
        return True
    return frame.timing_errors <= NOISE_TIMING_FRACTION * max(frame.pulses, 1)


def decode(spec: FrameSpec, train: PulseTrain, *,
           include_bad: bool | None = None, bulk: bool = True) -> list[DecodedFrame]:
    """Return every frame of ``spec`` found in ``train``, in time order.

    Pipeline: validate (CaptureError on NaN / inf / non-positive durations or levels other
    than 0/1) -> glitch filter -> head signatures found at any clock within +-10 % of
    ``spec.unit_us`` (unit estimate from the preamble) -> for all candidates at once:
    unit refit over the head, drift tracking, classification, line-code decode -> per
    candidate: sync search with the allowed bit errors, unstuff, field parsing and check.
    Repeats are separate frames, each with its own ``start_us``; the search goes on after
    the end of every decoded frame. Frames whose check fails are included unless
    ``include_bad`` is False (default: the spec's ``decoder.report_bad_check``); a frame
    the check cannot vouch for (failed, or no check) with more than 20 % of its pulses out
    of tolerance is taken for noise. Frames cut off by the end of the train are left
    out. Random pulses never raise.

    Specs of one fixed layout (block code, no stuffing, integer fields) are framed for all
    candidates at once (``bulk``); ``bulk=False`` frames candidate by candidate, with the
    same results (kept as the reference the bulk framer is tested against).
    """
    validate_train(train)
    if include_bad is None:
        include_bad = spec.decoder.report_bad_check
    dec = spec.decoder
    clean = drop_glitches(train.levels, train.durations_us, dec.glitch_fraction * spec.unit_us)
    if len(clean) == 0:
        return []
    hm = head_model(spec)
    frames = _decode_clean(spec, hm, clean, bulk, grid=True)
    if any(not f.crc_ok for f in frames) and spec.check.kind != "none":
        frames = _second_opinion(spec, frames, _decode_clean(spec, hm, clean, bulk, grid=False))
    return [f for f in frames if f.crc_ok or include_bad]


def _second_opinion(spec: FrameSpec, frames: list[DecodedFrame], other: list[DecodedFrame]
                    ) -> list[DecodedFrame]:
    """Return ``frames`` with every frame whose check failed replaced by a frame of
    ``other`` (decoded duration by duration) at the same start whose check passes."""
    good = [f for f in other if f.crc_ok]
    starts = np.array([f.start_us for f in good])
    out = []
    for f in frames:
        if not f.crc_ok and starts.size:
            k = int(np.abs(starts - f.start_us).argmin())
            if abs(starts[k] - f.start_us) < 2 * spec.unit_us:
                f = good[k]
        out.append(f)
    return out


def _decode_clean(spec: FrameSpec, hm: HeadModel, clean: PulseTrain, bulk: bool, *,
                  grid: bool) -> list[DecodedFrame]:
    """Return the frames of the glitch-filtered train ``clean`` (see :func:`decode`),
    those whose check fails included; run lengths by ``grid`` (see classify_windows)."""
    levels, dur = clean.levels, clean.durations_us
    first, unit0 = find_candidates(levels, dur, hm.sig_levels, hm.sig_units, spec.unit_us,
                                   hm.runs, MAX_CLOCK_ERROR)
    if first.size == 0:
        return []
    t0 = clean.edges_us()
    prefix_chips = int(hm.prefix_units.sum())
    stop = burst_end(first, burst_breaks(dur, hm.break_us), dur.size)
    reach_us = t0[first] + (hm.max_frame_chips - prefix_chips) * unit0 * (1 + MAX_CLOCK_ERROR)
    stop = np.minimum(stop, np.searchsorted(t0, reach_us, side="right") + 1)
    stop = np.maximum(np.minimum(stop, dur.size), first + 1)
    ws = classify_windows(spec, hm, dur, first, stop, unit0, levels, grid=grid)
    runs = lay_out(hm, ws, levels)
    cands = hm.line_code.decode(runs.levels, runs.units)
    if bulk and bulk_body_bits(spec, hm) is not None:
        results = _bulk_results(spec, bulk_frames(spec, hm, ws, runs, cands, dur, t0))

        def frame_of(k: int) -> tuple[DecodedFrame, int] | None:
            return results[k]
    else:
        per_window = split_candidates(runs, cands)

        def frame_of(k: int) -> tuple[DecodedFrame, int] | None:
            return _frame_from(spec, hm, _window(hm, ws, k, levels, dur, t0), per_window[k])
    frames: list[DecodedFrame] = []
    done = -1
    for k, i in enumerate(first.tolist()):
        if i <= done:
            continue
        got = frame_of(k)
        if got is None:
            continue
        frame, last = got
        if not _plausible(spec, frame):
            continue  # noise that happened to parse: later candidates may lie inside it
        done = last
        frames.append(frame)
    return frames


def _bulk_results(spec: FrameSpec, bf: BulkFrames) -> list[tuple[DecodedFrame, int] | None]:
    """Return per window what ``_frame_from`` returns, from the bulk framer's arrays."""
    out: list[tuple[DecodedFrame, int] | None] = [None] * bf.found.size
    f = np.flatnonzero(bf.found)
    unit = bf.unit_us[f]
    columns = zip(f.tolist(), bf.parsed.frames(), bf.start_us[f].tolist(),
                  bf.end_us[f].tolist(), unit.tolist(), (unit / spec.unit_us - 1.0).tolist(),
                  bf.worst_deviation[f].tolist(), bf.pulses[f].tolist(),
                  bf.sync_errors[f].tolist(), bf.timing_errors[f].tolist(),
                  bf.code_errors[f].tolist(), bf.last[f].tolist(), strict=True)
    for k, p, t_start, t_end, u, ce, worst, pulses, se, te, code, last in columns:
        out[k] = (DecodedFrame(
            fields=p.fields, raw=p.raw, payload_hex=p.payload_hex, crc_ok=p.check_ok,
            start_us=t_start, end_us=t_end, unit_us=u, clock_error=ce, worst_deviation=worst,
            pulses=pulses, sync_errors=se, timing_errors=te, code_errors=code), last)
    return out
