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

from ..linecodes import DecodedBits
from ..pulses import PulseTrain
from ..spec.model import FrameSpec
from .detect import find_candidates
from .framing import frame_windows
from .glitch import drop_glitches
from .head import MAX_CLOCK_ERROR, HeadModel, head_model
from .segment import burst_breaks, burst_end
from .validate import validate_train
from .windows import WindowRuns, Windows, classify_windows, lay_out

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


def _plausible(spec: FrameSpec, frame: DecodedFrame) -> bool:
    """True unless the check cannot vouch for the frame (it failed, or there is none) and
    more than NOISE_TIMING_FRACTION of its pulses are out of tolerance: noise, not a frame."""
    if frame.crc_ok and spec.check.kind != "none":
        return True
    return frame.timing_errors <= NOISE_TIMING_FRACTION * max(frame.pulses, 1)


def decode(spec: FrameSpec, train: PulseTrain, *,
           include_bad: bool | None = None) -> list[DecodedFrame]:
    """Return every frame of ``spec`` found in ``train``, in time order.

    Pipeline: validate (CaptureError on NaN / inf / non-positive durations or levels other
    than 0/1) -> glitch filter -> head signatures found at any clock within +-10 % of
    ``spec.unit_us`` (their edges on one chip grid; unit estimate from the preamble) -> for
    all candidates at once: unit refit over the head, every pulse's run length from its
    edges' places on the chip grid, one line-code decode, then framing (sync search with
    the allowed bit errors, unstuffing, fields and check, times). A frame whose check
    fails is decoded once more duration by duration with the drift-tracking loop, and the
    result replaces it where its check passes.
    Repeats are separate frames, each with its own ``start_us``; the search goes on after
    the end of every decoded frame. Frames whose check fails are included unless
    ``include_bad`` is False (default: the spec's ``decoder.report_bad_check``); a frame
    the check cannot vouch for (failed, or no check) with more than 20 % of its pulses out
    of tolerance is taken for noise. Frames cut off by the end of the train are left
    out. Random pulses never raise.
    """
    validate_train(train)
    if include_bad is None:
        include_bad = spec.decoder.report_bad_check
    dec = spec.decoder
    clean = drop_glitches(train.levels, train.durations_us, dec.glitch_fraction * spec.unit_us)
    if len(clean) == 0:
        return []
    hm = head_model(spec)
    frames = _decode_clean(spec, hm, clean, grid=True)
    if any(not f.crc_ok for f in frames) and spec.check.kind != "none":
        frames = _second_opinion(spec, frames, _decode_clean(spec, hm, clean, grid=False))
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


def _decode_clean(spec: FrameSpec, hm: HeadModel, clean: PulseTrain, *,
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
    results = _frame_all(spec, hm, ws, runs, cands, levels, dur, t0)
    frames: list[DecodedFrame] = []
    done = -1
    for k, i in enumerate(first.tolist()):
        if i <= done:
            continue
        got = results[k]
        if got is None:
            continue
        frame, last = got
        if not _plausible(spec, frame):
            continue  # noise that happened to parse: later candidates may lie inside it
        done = last
        frames.append(frame)
    return frames


def _frame_all(spec: FrameSpec, hm: HeadModel, ws: Windows, runs: WindowRuns,
               cands: list[DecodedBits], levels: np.ndarray, dur: np.ndarray, t0: np.ndarray
               ) -> list[tuple[DecodedFrame, int] | None]:
    """Return per window (frame, train index of its last pulse), or None: every window
    framed at once (``framing.frame_windows``)."""
    bf = frame_windows(spec, hm, ws, runs, cands, dur, t0)
    out: list[tuple[DecodedFrame, int] | None] = [None] * bf.found.size
    f = np.flatnonzero(bf.found)
    unit = bf.unit_us[f]
    columns = zip(f.tolist(), bf.parsed, bf.start_us[f].tolist(),
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
