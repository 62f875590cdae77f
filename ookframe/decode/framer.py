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

import collections
import dataclasses
import itertools
from collections.abc import Iterable, Iterator
from dataclasses import dataclass

import numpy as np

from .._require import require_spec, require_train
from ..checks.strength import check_strength, covered_bits
from ..linecodes import DecodedBits
from ..plan import FramePlan
from ..pulses import PulseTrain, pulse_edges_us
from ..spec.model import FrameSpec
from .classify import is_allowed
from .detect import find_candidates
from .framing import frame_windows
from .glitch import drop_glitches
from .head import MAX_CLOCK_ERROR, HeadModel, build_head
from .merge import FrameMerge, Spans, Verdict, merge_overlapping
from .segment import burst_breaks, burst_end
from .tail import MAX_TRAILING_UNITS, CutTrains, cut_trains, join_spans
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
    spec's tolerance (a quality flag: no pulse is rejected for it); code_errors: data bits
    whose chips were no valid codeword; corrected: edges the check-aided recovery moved to
    the other grid point next to them to make the check pass (0: hard decisions).
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
    corrected: int = 0


def _plausible(spec: FrameSpec, frame: DecodedFrame) -> bool:
    """True unless the check cannot vouch for the frame (it failed, or there is none) and
    more than NOISE_TIMING_FRACTION of its pulses are out of tolerance: noise, not a frame."""
    if frame.crc_ok and spec.check.kind != "none":
        return True
    return frame.timing_errors <= NOISE_TIMING_FRACTION * max(frame.pulses, 1)


#: what the decoder takes: a spec, its compiled plan, or the decoder constants built from
#: the plan once (``compile_decoder``; cheapest when decoding many trains of one spec)
Receiver = FrameSpec | FramePlan | HeadModel


def compile_decoder(spec: Receiver) -> HeadModel:
    """Return the decoder constants of ``spec`` (a FrameSpec or FramePlan is compiled; a
    HeadModel is returned as it is): build them once, pass them to every ``decode``."""
    if isinstance(spec, HeadModel):
        return spec
    return build_head(require_spec(spec, "spec"))


def decode(spec: Receiver, train: PulseTrain, *,
           include_bad: bool | None = None, max_flips: int | None = None
           ) -> list[DecodedFrame]:
    """Return every frame of ``spec`` found in ``train``, in time order.

    Pipeline: validate (CaptureError on NaN / inf / non-positive durations or levels other
    than 0/1) -> glitch filter -> head signatures found at any clock within +-10 % of
    ``spec.unit_us`` (their edges on one chip grid; unit estimate from the preamble) -> for
    all candidates at once: unit refit over the head, every pulse's run length from its
    edges' places on the chip grid, one line-code decode, then framing (sync search with
    the allowed bit errors, unstuffing, fields and check, times). A frame whose check
    fails is decoded once more duration by duration with the drift-tracking loop, and the
    result replaces it where its check passes (so is a window whose first reading was
    taken for noise or not read past the sync: a frame read there joins where its check
    passes and it overlaps none); then, where noise hugs the frame's end, from
    the train cut at its carrier end; then, where the glitch filter dropped a pulse that
    heavy jitter may have shrunk, with the filter at half its width
    (``_low_filter_opinion``). Each opinion is one more reading of a stretch the first
    could not vouch for, taken only where the check passes: its false-accept risk is that
    of one more frame (2**-w for a w-bit check), and stress counts what it accepts like
    any other frame.
    Repeats are separate frames, each with its own ``start_us``; the search goes on after
    the end of every decoded frame. Frames whose check fails are included unless
    ``include_bad`` is False (default: the spec's ``decoder.report_bad_check``); a frame
    the check cannot vouch for (failed, or no check) with more than 20 % of its pulses out
    of tolerance is taken for noise. Frames cut off by the end of the train are left
    out. Random pulses never raise.

    Check-aided recovery: for a frame whose check fails, the least reliable edges (those
    nearest to halfway between two grid points) are moved to the other grid point, up
    to ``max_flips`` at a time (default: the spec's ``decoder.max_flips``), and the frame
    is taken when its check passes; never more edges than the check's Hamming distance
    at the frame's length leaves safe (HD - 2: one more error would still be detected;
    none for checksums of HD 2 or no check). Only edges at least 0.3 unit off their grid
    point are candidates, and at most 2**w / 4096 candidates are tried for a w-bit check,
    so the false-accept probability it adds to a failed frame stays below 2**-12 (checks
    narrower than 13 bits get none). ``corrected`` counts the edges moved.
    """
    hm = compile_decoder(spec)
    spec = hm.spec
    require_train(train, "train")
    validate_train(train)
    if include_bad is None:
        include_bad = spec.decoder.report_bad_check
    dec = spec.decoder
    clean = drop_glitches(train.levels, train.durations_us, dec.glitch_fraction * spec.unit_us)
    if len(clean) == 0:
        return []
    cw = _windows(hm, clean, spec.unit_us)
    if cw is None:  # the filter may have cut every head: the low-filter opinion still reads
        none = np.zeros(0, np.int64)
        cw = _CandidateWindows(clean.edges_us(), none, np.zeros(0), none, none)
        frames = _low_filter_opinion(spec, hm, train, clean, cw, [])
        return [f for f in frames if f.crc_ok or include_bad]
    found, ctx = _decode_clean(spec, hm, clean, cw, grid=True)
    frames = [f for f, _ in found]
    failing = any(not f.crc_ok for f in frames)
    if (failing or ctx.doubtful.size) and spec.check.kind != "none":
        flips = min(spec.decoder.max_flips if max_flips is None else max_flips,
                    safe_flips(spec))
        if flips > 0 and failing:
            frames = [f if f.crc_ok else _recover(spec, hm, ctx, k, flips) or f
                      for f, k in found]
        frames = _track_opinions(spec, hm, clean, cw, frames, found, ctx, failing)
    edges_us = None  # the unfiltered train's pulse boundaries, for both opinions below
    if ctx.unparsed_us.size or not all(f.crc_ok for f in frames):
        edges_us = pulse_edges_us(train.durations_us)
        frames = _tail_opinion(spec, hm, train, frames, ctx, edges_us)
    frames = _low_filter_opinion(spec, hm, train, clean, cw, frames, edges_us)
    return [f for f in frames if f.crc_ok or include_bad]


def safe_flips(spec: FrameSpec) -> int:
    """Return the most decisions the check-aided recovery may change: the check's Hamming
    distance at the frame's covered length less 2 (0 without a check)."""
    if spec.check.kind == "none":
        return 0
    return max(0, check_strength(spec.check, covered_bits(spec)).hd - 2)


#: least reliable edges of a frame the recovery chooses from
RECOVERY_EDGES = 8
#: an edge is a candidate only this far (units) or further from its grid point: a frame
#: whose edges all sit on the grid (a clean channel, a wrong sync hit on noise) is not
#: "corrected" into a false accept
RECOVERY_MIN_OFFSET = 0.3
#: bound on the false-accept probability the recovery adds to one failed frame: every
#: candidate tried passes a w-bit check by chance with probability 2**-w, so at most
#: 2**w * this many candidates are tried (none for checks narrower than 13 bits)
RECOVERY_FALSE_ACCEPT = 2.0 ** -12


@dataclass(frozen=True, eq=False)
class _Context:
    """What the recovery needs of one framing pass."""

    ws: Windows
    levels: np.ndarray
    dur: np.ndarray
    t0: np.ndarray
    unparsed_us: np.ndarray  # estimated start of windows whose sync was found, body not read
    unparsed_unit_us: np.ndarray  # their unit
    doubtful: np.ndarray  # windows no frame covers, none read from them (see _decode_clean)


def _recover(spec: FrameSpec, hm: HeadModel, ctx: _Context, k: int, max_flips: int
             ) -> DecodedFrame | None:
    """Return the frame of window ``k`` with up to ``max_flips`` of its least reliable
    edges moved to the grid point on their other side, the first (fewest moves, least
    reliable first) whose check passes; None if none does."""
    one = ctx.ws.one(k)
    units, lv, res = one.units, one.levels, one.end_residual
    m = int(one.length[0])
    j = np.arange(max(m - 1, 0))
    step = np.where(res[j] > 0, 1, -1)
    n1, n2 = units[j] + step, units[j + 1] - step
    ok = ~one.capped[j] & ~one.capped[j + 1]
    ok &= is_allowed(n1, lv[j], hm.runs) & is_allowed(n2, lv[j + 1], hm.runs)
    ok &= np.abs(res[j]) >= RECOVERY_MIN_OFFSET
    j = j[ok]
    cost = 0.5 - np.abs(res[j])
    order = np.argsort(cost, kind="stable")[:RECOVERY_EDGES]
    edges, step = j[order], np.where(res[j[order]] > 0, 1, -1)
    trials = sorted((c for n in range(1, max_flips + 1)
                     for c in itertools.combinations(range(edges.size), n)),
                    key=lambda c: (len(c), float(cost[order][list(c)].sum())))
    budget = int(2.0 ** spec.check.width_bits * RECOVERY_FALSE_ACCEPT)
    for combo in trials[:budget]:
        u = units.copy()
        for i in combo:
            u[edges[i]] += step[i]
            u[edges[i] + 1] -= step[i]
        if (u < 1).any():
            continue
        ws1 = ctx.ws.one(k, u)
        runs = lay_out(hm, ws1, ctx.levels)
        got = _frame_all(spec, hm, ws1, runs, hm.line_code.decode(runs.levels, runs.units),
                         ctx.levels, ctx.dur, ctx.t0)[0][0]
        if got is not None and got[0].crc_ok:
            return dataclasses.replace(got[0], corrected=len(combo))
    return None


def _track_opinions(spec: FrameSpec, hm: HeadModel, clean: PulseTrain,
                    cw: _CandidateWindows, frames: list[DecodedFrame],
                    found: list[tuple[DecodedFrame, int]], ctx: _Context,
                    failing: bool = True) -> list[DecodedFrame]:
    """Return ``frames`` (one per frame of the grid reading ``found`` of ``clean``, after
    any recovery) with the duration-by-duration readings joined: the second opinion over
    the bursts of the frames whose check still fails, then the doubtful windows' own
    pass (:func:`_doubtful_opinion`). ``failing``: False when no frame of ``found`` failed
    (the recovery only turns failed frames into passing ones: none fails then)."""
    failed = ([k for f, (_, k) in zip(frames, found, strict=True) if not f.crc_ok]
              if failing else [])
    if failed:
        other, _ = _decode_clean(spec, hm, clean, cw.bursts_of(failed), grid=False)
        frames = _second_opinion(spec, frames, [f for f, _ in other])
    if ctx.doubtful.size:  # a pass of its own: its frames never block those above
        other, _ = _decode_clean(spec, hm, clean, cw.bursts_of(ctx.doubtful.tolist()),
                                 grid=False)
        frames = _doubtful_opinion(frames, [f for f, _ in other],
                                   cw.t0[cw.first[ctx.doubtful]])
    return frames


def _second_opinion(spec: FrameSpec, frames: list[DecodedFrame], other: list[DecodedFrame]
                    ) -> list[DecodedFrame]:
    """Return ``frames`` with every frame whose check failed replaced by a frame of
    ``other`` (decoded duration by duration) at the same start whose check passes."""
    good = [f for f in other if f.crc_ok]
    near = Spans((k, f.start_us, f.start_us) for k, f in enumerate(good))
    m = FrameMerge(frames)
    for i, f in enumerate(frames):
        if not f.crc_ok and (hit := near.nearest(f.start_us)) is not None:
            if hit[0] < 2 * spec.unit_us:
                m.replace(i, good[hit[1]])
    return m.frames()


def _doubtful_opinion(frames: list[DecodedFrame], other: list[DecodedFrame],
                      doubtful_us: np.ndarray) -> list[DecodedFrame]:
    """Return ``frames`` with every frame of ``other`` (decoded duration by duration)
    whose check passes, that holds one of ``doubtful_us`` (first pulses of windows whose
    first reading was taken for noise, found no sync or no body, and that no frame covers)
    and overlaps no frame, added. Its false-accept risk is that of one more reading of
    such a window, as for the frames the second opinion replaces."""
    times = np.sort(doubtful_us)
    # the rule skips a reading that fails or holds none of the times whatever it meets (a
    # skip changes nothing): only the others are looked up
    good = [g for g in other if g.crc_ok]
    if not good or times.size == 0:
        return frames
    held = _holding(np.array([g.start_us for g in good]), np.array([g.end_us for g in good]),
                    times)
    good = [g for g, h in zip(good, held.tolist(), strict=True) if h]
    if not good:
        return frames

    def rule(g: DecodedFrame, hit: list[DecodedFrame]) -> Verdict:
        return Verdict.SKIP if hit else Verdict.JOIN

    return merge_overlapping(frames, good, rule)


def _tail_opinion(spec: FrameSpec, hm: HeadModel, train: PulseTrain,
                  frames: list[DecodedFrame], ctx: _Context,
                  edges_us: np.ndarray | None = None) -> list[DecodedFrame]:
    """Return ``frames`` with every frame whose check failed replaced by the frame read
    from the unfiltered ``train`` cut at its carrier end (``tail.cut_trains``: receiver
    noise right after the last mark), where that frame's check passes; windows whose
    sync word was found but whose body could not be read get the same reading and join
    the frames where it passes. One more reading per such frame, chosen by timing alone
    (like the second opinion). ``edges_us``: ``train``'s pulse boundaries
    (``pulses.pulse_edges_us``) when the caller has them."""
    bad = [i for i, f in enumerate(frames) if not f.crc_ok]
    todo: list[tuple[float, float | None, float]] = [
        (frames[i].start_us, frames[i].end_us, frames[i].unit_us) for i in bad]
    owner: list[int] = list(bad)
    # starts read or to be read: the frames' and the unparsed windows' taken so far (an
    # unparsed window is taken unless one lies within 2 units)
    starts = np.array([f.start_us for f in frames], np.float64) if ctx.unparsed_us.size \
        else np.zeros(0)
    taken: list[float] = []
    for t, u in zip(ctx.unparsed_us.tolist(), ctx.unparsed_unit_us.tolist(), strict=True):
        if (starts.size and float(np.abs(starts - t).min()) < 2 * spec.unit_us) \
                or any(abs(v - t) < 2 * spec.unit_us for v in taken):
            continue
        taken.append(t)
        todo.append((t, None, u))
        owner.append(-1)
    trailing = min(int(hm.runs.allowed[0][-1]), MAX_TRAILING_UNITS)
    quiet_us = 2.0 * max(hm.break_us, 16 * spec.unit_us)
    cuts = cut_trains(train, todo, trailing, quiet_us, hm.body_chip, hm.max_frame_chips,
                      edges_us=edges_us)
    m = FrameMerge(frames)
    for f, k in _read_pieces(spec, hm, cuts, spec.decoder.glitch_fraction * spec.unit_us):
        if abs(cuts.start_us[k] - f.start_us) >= 2 * spec.unit_us:
            continue
        f = _shifted(f, float(cuts.origin_us[k]))
        i = owner[int(cuts.frame[k])]
        if i >= 0:
            m.replace(i, f)
        else:
            m.add(f)
    return m.frames()


#: units a frame read from joined pieces may start before its piece (pieces lie at least
#: 32 units apart)
PIECE_SLACK_UNITS = 8


def _read_pieces(spec: FrameSpec, hm: HeadModel, cuts: CutTrains, min_us: float
                 ) -> list[tuple[DecodedFrame, int]]:
    """Return the frames whose check passes in the joined pieces ``cuts.train`` glitch
    filtered at ``min_us`` (times in the joined train), each with the piece it lies in
    (the last whose ``start_us`` is at most ``PIECE_SLACK_UNITS`` after the frame's start:
    a first chip that merged with the quiet before it is extrapolated)."""
    if cuts.frame.size == 0:
        return []
    clean = drop_glitches(cuts.train.levels, cuts.train.durations_us, min_us)
    cw = _windows(hm, clean, spec.unit_us)
    if cw is None:
        return []
    found, ctx = _decode_clean(spec, hm, clean, cw, grid=True)
    frames = [f for f, _ in found]
    if spec.check.kind != "none":  # the duration-by-duration readings, as in ``decode``
        frames = _track_opinions(spec, hm, clean, cw, frames, found, ctx)
    good = [f for f in frames if f.crc_ok]
    at = np.array([f.start_us for f in good], np.float64) + PIECE_SLACK_UNITS * spec.unit_us
    piece = (np.searchsorted(cuts.start_us, at) - 1).tolist()
    return [(f, k) for f, k in zip(good, piece, strict=True) if k >= 0]


#: glitch filter of the low-filter opinion, as a fraction of the spec's: heavy edge jitter
#: shrinks 1-unit pulses below the filter (two edges 0.35 unit inwards leave 0.3 unit)
LOW_FILTER_FRACTION = 0.5
#: pulses on each side of a dropped pulse of which all but ``ANCHOR_SHORT_NEIGHBOURS``
#: must be longer than the filter, and none shorter than the lower filter, for the
#: low-filter opinion to look for a frame around it (receiver noise, pulses of the order
#: of the filter, seldom has 14 of 16 that long and none shorter; a jittered frame nearly
#: always)
ANCHOR_CONTEXT_PULSES = 8
#: of those pulses, how many may be shorter than the filter: other shrunk pulses (at +-40 %
#: edge jitter about 1 in 130 one-unit pulses falls below 0.3 unit, so two more among 16
#: one-unit neighbours happens in about 1 in 140 anchors; 1 left such a copy unread)
ANCHOR_SHORT_NEIGHBOURS = 2
#: units at either end of a passing frame where a dropped pulse is taken for receiver noise
#: hugging the carrier, not for a shrunk pulse of the frame
ANCHOR_EDGE_UNITS = 1.5
#: a passing frame holding a dropped pulse is replaced by the low-filter reading only when
#: one of its pulses lies at least this far (units) from every grid point: the pulse the
#: filter dropped is missing from it (a frame that filtered a true glitch fits the grid)
REREAD_WORST_DEVIATION = 0.5


def _holds(frame: DecodedFrame, times_us: np.ndarray) -> bool:
    """True when one of ``times_us`` (sorted) lies within ``frame``."""
    i = int(np.searchsorted(times_us, frame.start_us))
    return i < times_us.size and times_us[i] <= frame.end_us


def _holding(start_us: np.ndarray, end_us: np.ndarray, times_us: np.ndarray) -> np.ndarray:
    """Per span (``start_us``, ``end_us``): ``_holds`` of a frame with those times."""
    if times_us.size == 0:
        return np.zeros(start_us.size, bool)
    i = np.searchsorted(times_us, start_us)
    return (i < times_us.size) & (times_us[np.minimum(i, times_us.size - 1)] <= end_us)


def _low_filter_opinion(spec: FrameSpec, hm: HeadModel, train: PulseTrain,
                        clean: PulseTrain, cw: _CandidateWindows,
                        frames: list[DecodedFrame], edges_us: np.ndarray | None = None
                        ) -> list[DecodedFrame]:
    """Return ``frames`` with stretches of the unfiltered ``train`` read once more with the
    glitch filter at ``LOW_FILTER_FRACTION`` of the spec's: heavy edge jitter shrinks a
    1-unit pulse below the filter, which joins its neighbours into a run the code does not
    have (even a burst break) or shifts the head. Read again: a frame's reach
    (``stream_span_us``) after every candidate window of ``clean`` that no frame whose
    check passes covers, where the filter dropped a pulse at least the lower width; a
    frame's reach either side of every dropped pulse amid kept ones (``_anchors``) that
    no frame covers; and the frame itself where one whose check passes holds such a pulse.

    A frame found there whose check passes replaces the frames it overlaps when all of
    theirs failed, or joins the frames when it overlaps none; it replaces a frame whose
    check passes only where that frame holds a dropped pulse and a pulse at least
    ``REREAD_WORST_DEVIATION`` off the grid, and has the same fields (times from the
    reading that kept every pulse) or a smaller worst deviation. Glitches
    shorter than the lower filter still never reach the chip grid; the check vouches for
    the rest (one more reading per stretch, like the other opinions). ``edges_us``:
    ``train``'s pulse boundaries (``pulses.pulse_edges_us``) when the caller has them."""
    min_us = spec.decoder.glitch_fraction * spec.unit_us
    low_us = LOW_FILTER_FRACTION * min_us
    d = train.durations_us
    short = np.flatnonzero((d >= low_us) & (d < min_us))
    if short.size == 0:
        return frames
    alone = _anchors(d, short, min_us, low_us)
    all_start = np.array([f.start_us for f in frames], np.float64)
    all_end = np.array([f.end_us for f in frames], np.float64)
    ok = np.array([f.crc_ok for f in frames], bool)
    passed = bool(ok.any())
    f_start, f_end = all_start[ok], all_end[ok]
    t = cw.t0[cw.first]
    j = np.searchsorted(f_start, t, side="right") - 1
    t = t[(j < 0) | (t > f_end[np.maximum(j, 0)])] if passed else t
    if t.size == 0 and alone.size == 0:
        return frames  # nothing to read (and the train's edges not needed)
    if edges_us is None:
        edges_us = pulse_edges_us(d)
    t_short = edges_us[short]
    t_alone = t_short[alone]
    # the signature may match anywhere before the sync word
    lead_us = (hm.sync_chip + 4) * spec.unit_us * (1 + MAX_CLOCK_ERROR)
    span_us = stream_span_us(hm)
    keep = np.searchsorted(t_short, t + span_us) > np.searchsorted(t_short, t - lead_us)
    t = t[keep]
    # a dropped pulse from a lead before a passing frame to its end: the frame holds it
    # (re-read that frame) unless it lies within EDGE_UNITS of the frame's first or last
    # chip, where receiver noise hugs the carrier (ignored)
    j = np.searchsorted(f_start - lead_us, t_alone, side="right") - 1
    near = held = np.zeros(t_alone.size, bool)
    if passed:
        jj = np.maximum(j, 0)
        near = (j >= 0) & (t_alone <= f_end[jj])
        edge_us = ANCHOR_EDGE_UNITS * spec.unit_us
        held = near & (t_alone >= f_start[jj] + edge_us) & (t_alone <= f_end[jj] - edge_us)
    t_held = t_alone[held]
    free = t_alone[~near]
    a_us = np.concatenate((t - lead_us, free - span_us - lead_us, f_start[j[held]] - lead_us))
    b_us = np.concatenate((t + span_us, free + span_us, f_end[j[held]] + 2 * spec.unit_us))
    if a_us.size == 0:
        return frames
    order = np.argsort(a_us, kind="stable")
    a_us, b_us = a_us[order], b_us[order]
    new = np.concatenate(([True], a_us[1:] > np.maximum.accumulate(b_us)[:-1]))
    spans = list(zip(a_us[new].tolist(),
                     np.maximum.reduceat(b_us, np.flatnonzero(new)).tolist(), strict=True))
    quiet_us = 2.0 * max(hm.break_us, 16 * spec.unit_us)
    cuts = join_spans(train, spans, quiet_us, edges_us)

    def rule(f: DecodedFrame, hit: list[DecodedFrame]) -> Verdict:
        if all(not g.crc_ok for g in hit):
            return Verdict.JOIN
        if (len(hit) == 1 and _holds(g := hit[0], t_held)
                and g.worst_deviation >= REREAD_WORST_DEVIATION
                and (g.raw == f.raw or f.worst_deviation < g.worst_deviation)):
            return Verdict.REPLACE
        return Verdict.SKIP

    readings = (_shifted(f, float(cuts.origin_us[k]))
                for f, k in _read_pieces(spec, hm, cuts, low_us))
    # a reading meets the frames it was given and their replacements, not the frames
    # the readings before it joined
    return merge_overlapping(frames, readings, rule, added_block=False, sort=True,
                             spans=(all_start, all_end))


def _anchors(d: np.ndarray, short: np.ndarray, min_us: float, low_us: float) -> np.ndarray:
    """Return the places in ``short`` (indices into durations ``d``, ascending) of the
    pulses that lie amid pulses the filter keeps: of the 2 on each side all but one, of
    the ``ANCHOR_CONTEXT_PULSES`` on each side all but ``ANCHOR_SHORT_NEIGHBOURS`` at least
    ``min_us``, and none shorter than ``low_us`` (a shrunk pulse, not receiver noise);
    beyond the train's ends: idle."""
    n = max(ANCHOR_CONTEXT_PULSES, 2)
    # per pulse, with n pulses of idle (at least min_us, not below low_us) either side:
    # whether it is at least min_us (counted) and whether it is below low_us
    longer = np.ones(d.size + 2 * n, np.int8)
    np.greater_equal(d, min_us, out=longer[n:n + d.size].view(bool))
    shorter = np.zeros(d.size + 2 * n, bool)
    np.less(d, low_us, out=shorter[n:n + d.size])
    # the 2 either side first (all but one kept): most noise fails there
    at = short + n
    near = longer[at - 2] + longer[at - 1] + longer[at + 1] + longer[at + 2]
    keep = np.flatnonzero((near >= 3) & ~(shorter[at - 2] | shorter[at - 1]
                                          | shorter[at + 1] | shorter[at + 2]))
    m = ANCHOR_CONTEXT_PULSES  # then the few left against their wider context
    j = at[keep][:, None] + np.concatenate((np.arange(-m, 0), np.arange(1, m + 1)))
    return keep[(longer[j].sum(axis=1) >= 2 * m - ANCHOR_SHORT_NEIGHBOURS)
                & ~shorter[j].any(axis=1)]


@dataclass(frozen=True, eq=False)
class _CandidateWindows:
    """Where frames may start in a glitch-filtered train and how far each may reach.

    first / unit0: the signature matches (``find_candidates``); stop: one past the last
    pulse of each window; burst: the break ending each window's burst (the train's
    length for the last burst). A frame never reaches past its burst's break, so windows
    of different bursts never decide for each other. t0: the train's pulse start times.
    """

    t0: np.ndarray
    first: np.ndarray
    unit0: np.ndarray
    stop: np.ndarray
    burst: np.ndarray

    def select(self, keep: np.ndarray) -> _CandidateWindows:
        return _CandidateWindows(self.t0, self.first[keep], self.unit0[keep],
                                 self.stop[keep], self.burst[keep])

    def bursts_of(self, windows: list[int]) -> _CandidateWindows:
        """Return the windows in the bursts of ``windows`` and the bursts next to them."""
        b = self.burst
        if b.size and bool((b[1:] >= b[:-1]).all()):
            # the bursts ascend (windows in train order): a burst's rank counts the changes
            # before it, as ``np.unique``'s inverse does
            ids = np.zeros(b.size, np.int64)
            np.cumsum(b[1:] != b[:-1], out=ids[1:])
            want = np.zeros(int(ids[-1]) + 3, bool)  # rank r at r + 1: r - 1 >= -1 fits
            want[ids[np.asarray(windows, np.int64)][:, None] + np.arange(3)] = True
            return self.select(want[ids + 1])
        ids = np.unique(b, return_inverse=True)[1]
        near = np.unique(ids[np.asarray(windows, np.int64)][:, None] + np.arange(-1, 2))
        return self.select(np.isin(ids, near))


def _windows(hm: HeadModel, clean: PulseTrain, unit_us: float) -> _CandidateWindows | None:
    """Return the candidate windows of the glitch-filtered train ``clean`` (None if none)."""
    levels, dur = clean.levels, clean.durations_us
    # the edge times once, for the candidate search and the windows' start times (the
    # same running sum as ``clean.edges_us()``)
    edges = pulse_edges_us(dur)
    first, unit0 = find_candidates(levels, dur, hm.sig_levels, hm.sig_units, unit_us,
                                   hm.runs, MAX_CLOCK_ERROR, edges_us=edges)
    if first.size == 0:
        return None
    t0 = edges[:-1]
    prefix_chips = int(hm.prefix_units.sum())
    burst = burst_end(first, burst_breaks(dur, hm.break_us), dur.size)
    reach_us = t0[first] + (hm.max_frame_chips - prefix_chips) * unit0 * (1 + MAX_CLOCK_ERROR)
    stop = np.minimum(burst, np.searchsorted(t0, reach_us, side="right") + 1)
    stop = np.maximum(np.minimum(stop, dur.size), first + 1)
    return _CandidateWindows(t0, first, unit0, stop, burst)


def _decode_clean(spec: FrameSpec, hm: HeadModel, clean: PulseTrain, cw: _CandidateWindows,
                  *, grid: bool) -> tuple[list[tuple[DecodedFrame, int]], _Context]:
    """Return the frames of the candidate windows ``cw`` of the glitch-filtered train
    ``clean`` (see :func:`decode`) with the window each came from, those whose check
    fails included, and the pass's context; run lengths by ``grid`` (see
    classify_windows)."""
    levels, dur = clean.levels, clean.durations_us
    first, t0 = cw.first, cw.t0
    ws = classify_windows(spec, hm, dur, first, cw.stop, cw.unit0, levels, grid=grid)
    runs = lay_out(hm, ws, levels)
    cands = hm.line_code.decode(runs.levels, runs.units)
    results, synced = _frame_all(spec, hm, ws, runs, cands, levels, dur, t0)
    frames: list[tuple[DecodedFrame, int]] = []
    unparsed: list[int] = []
    doubtful: list[int] = []
    done = -1
    for k, i in enumerate(first.tolist()):
        if i <= done:
            continue
        got = results[k]
        if got is None:
            if synced[k]:
                unparsed.append(k)
            doubtful.append(k)
            continue
        frame, last = got
        if not _plausible(spec, frame):
            doubtful.append(k)
            continue  # noise that happened to parse: later candidates may lie inside it
        done = last
        frames.append((frame, k))
    u = np.array(unparsed, np.int64)
    unparsed_us = t0[first[u]] - int(hm.prefix_units.sum()) * ws.start_unit_us[u]
    # windows no frame covers whose reading found no sync, no body or only noise: the
    # head matched, so another reading may find the frame (an overlapping head of the same
    # frame, covered by it, needs none)
    d = np.array(doubtful, np.int64)
    if d.size and frames:
        fs = np.array([f.start_us for f, _ in frames])
        fe = np.array([f.end_us for f, _ in frames])
        t = t0[first[d]]
        j = np.searchsorted(fs, t, side="right") - 1
        d = d[(j < 0) | (t > fe[np.maximum(j, 0)])]
    return frames, _Context(ws, levels, dur, t0, unparsed_us, ws.start_unit_us[u], d)


def _frame_all(spec: FrameSpec, hm: HeadModel, ws: Windows, runs: WindowRuns,
               cands: list[DecodedBits], levels: np.ndarray, dur: np.ndarray, t0: np.ndarray
               ) -> tuple[list[tuple[DecodedFrame, int] | None], np.ndarray]:
    """Return per window (frame, train index of its last pulse), or None: every window
    framed at once (``framing.frame_windows``); and per window whether its sync word was
    found."""
    bf = frame_windows(spec, hm, ws, runs, cands, dur, t0)
    out: list[tuple[DecodedFrame, int] | None] = [None] * bf.found.size
    f = np.flatnonzero(bf.found)
    unit = bf.unit_us[f]
    p = bf.parsed
    rows = zip(p.fields, p.raw, p.payload_hex, p.check_ok, bf.start_us[f].tolist(),
               bf.end_us[f].tolist(), unit.tolist(), (unit / spec.unit_us - 1.0).tolist(),
               bf.worst_deviation[f].tolist(), bf.pulses[f].tolist(),
               bf.sync_errors[f].tolist(), bf.timing_errors[f].tolist(),
               bf.code_errors[f].tolist(), itertools.repeat(0, f.size), strict=True)
    for k, got in zip(f.tolist(), zip(_frames_of(rows, f.size), bf.last[f].tolist(),
                                    strict=True),
                      strict=True):
        out[k] = got
    return out, bf.synced


#: DecodedFrame's attributes in order (what ``_frames_of`` fills)
_FRAME_KEYS = tuple(fl.name for fl in dataclasses.fields(DecodedFrame))


def _frames_of(rows: Iterator[tuple], n: int) -> list[DecodedFrame]:
    """Return ``DecodedFrame(*values)`` (every attribute, in order) for each of the ``n``
    rows without the frozen ``__init__``, which sets each of its 14 attributes through
    ``object.__setattr__``: the same objects at about a third of the cost, for the
    thousands a stress chunk decodes (built by ``map``, no Python loop per frame)."""
    frames = list(map(object.__new__, itertools.repeat(DecodedFrame, n)))
    dicts = map(dict, map(zip, itertools.repeat(_FRAME_KEYS), rows))
    collections.deque(map(object.__setattr__, frames, itertools.repeat("__dict__"), dicts),
                      maxlen=0)
    return frames


@dataclass(frozen=True)
class DecodeReport:
    """How far the decoder got in a pulse train (for "no frames found" messages).

    pulses / after_glitch_filter: pulses in the train and left after the glitch filter;
    bursts: stretches between pulses too long to lie inside a frame; heads: places where
    the preamble's signature matched (``head_units_us``: the unit measured there, at most
    the first 5); synced: of those, windows where the sync word was found and the fields
    could be read; check_ok: frames whose check passed; unit_us: the spec's unit.
    """

    pulses: int
    after_glitch_filter: int
    bursts: int
    heads: int
    head_units_us: tuple[float, ...]
    synced: int
    check_ok: int
    unit_us: float

    def __add__(self, other: DecodeReport) -> DecodeReport:
        """The counts of two pieces of one capture together (the first 5 units kept)."""
        return DecodeReport(
            self.pulses + other.pulses, self.after_glitch_filter + other.after_glitch_filter,
            self.bursts + other.bursts, self.heads + other.heads,
            (self.head_units_us + other.head_units_us)[:5], self.synced + other.synced,
            self.check_ok + other.check_ok, self.unit_us)

    @property
    def stage(self) -> str:
        """The first stage nothing passed, in words."""
        if self.after_glitch_filter == 0:
            return "every pulse was shorter than the glitch filter"
        if self.heads == 0:
            return "no preamble found (no run of pulses matched its signature)"
        if self.synced == 0:
            return "preamble found but no sync word after it"
        if self.check_ok == 0:
            return "frames found but every check failed"
        return "frames found"


def diagnose(spec: Receiver, train: PulseTrain) -> DecodeReport:
    """Return how far :func:`decode` gets in ``train`` (stage by stage counts)."""
    hm = compile_decoder(spec)
    spec = hm.spec
    validate_train(train)
    clean = drop_glitches(train.levels, train.durations_us,
                          spec.decoder.glitch_fraction * spec.unit_us)
    n = len(clean)
    bursts = int(burst_breaks(clean.durations_us, hm.break_us).size) + 1 if n else 0
    first, unit0 = (find_candidates(clean.levels, clean.durations_us, hm.sig_levels,
                                    hm.sig_units, spec.unit_us, hm.runs, MAX_CLOCK_ERROR)
                    if n else (np.zeros(0, np.int64), np.zeros(0)))
    cw = _windows(hm, clean, spec.unit_us) if first.size else None
    found = _decode_clean(spec, hm, clean, cw, grid=True)[0] if cw is not None else []
    return DecodeReport(len(train), n, bursts, int(first.size),
                        tuple(round(float(u), 3) for u in unit0[:5]), len(found),
                        sum(f.crc_ok for f, _ in found), float(spec.unit_us))


#: units of margin added to a frame's longest span when decoding in pieces
STREAM_MARGIN_UNITS = 8
#: pulses kept before the carried-over tail of a piece, so the glitch filter and the head
#: search see the same neighbours as in the whole train
STREAM_CONTEXT_PULSES = 8


def stream_span_us(spec: Receiver) -> float:
    """Return the longest time a frame of ``spec`` can take as the decoder searches it:
    its most chips at the slowest clock searched (``MAX_CLOCK_ERROR``), +10 %, plus
    ``STREAM_MARGIN_UNITS`` units."""
    hm = compile_decoder(spec)
    slow_unit_us = hm.spec.unit_us * (1 + MAX_CLOCK_ERROR)
    return (hm.max_frame_chips * 1.1 + STREAM_MARGIN_UNITS) * slow_unit_us


def decode_stream(spec: Receiver, chunks: Iterable[PulseTrain], *,
                  include_bad: bool | None = None) -> Iterator[DecodedFrame]:
    """Yield the frames :func:`decode` finds in the train made of ``chunks`` joined, in
    time order, holding only a piece of it at a time (memory bounded by the chunk size
    plus one frame span, :func:`stream_span_us`).

    Each round decodes the carried-over tail plus the next chunk and emits the frames that
    start before ``cut`` = the buffer's end less the span (so they lie whole in the
    buffer) and not before the previous round's cut nor inside a frame it emitted; the
    next buffer starts at the pulse boundary at or before ``cut`` (earlier when a frame
    emitted this round reaches past ``cut``, so its pulses are again skipped over),
    plus ``STREAM_CONTEXT_PULSES``. Times (``start_us``, ``end_us``) count from the start
    of the first chunk. The frames are :func:`decode`'s for the whole train whenever no
    decision depends on more than the span around a frame (times equal to float rounding).
    """
    hm = compile_decoder(spec)
    spec = hm.spec
    if include_bad is None:
        include_bad = spec.decoder.report_bad_check
    span_us = stream_span_us(hm)
    levels = np.zeros(0, np.uint8)
    dur = np.zeros(0)
    origin_us = 0.0            # absolute time of the buffer's first pulse
    handled_us = -np.inf       # frames starting before it were dealt with
    handled_end_us = -np.inf   # end of the last frame dealt with
    for chunk in chunks:
        validate_train(chunk)
        levels = np.concatenate((levels, chunk.levels))
        dur = np.concatenate((dur, chunk.durations_us))
        edges = np.concatenate(([0.0], np.cumsum(dur)))
        cut = float(edges[-1]) - span_us
        if cut <= handled_us - origin_us or cut <= 0:
            continue
        keep_us = cut
        for f in decode(hm, PulseTrain(levels, dur), include_bad=True):
            if f.start_us >= cut:
                break
            start = f.start_us + origin_us
            if start < handled_us or start < handled_end_us:
                continue
            handled_end_us = max(handled_end_us, f.end_us + origin_us)
            if f.end_us > cut:
                keep_us = min(keep_us, f.start_us)
            if f.crc_ok or include_bad:
                yield _shifted(f, origin_us)
        i = max(int(np.searchsorted(edges, keep_us, side="right")) - 1
                - STREAM_CONTEXT_PULSES, 0)
        handled_us = origin_us + cut
        origin_us += float(edges[i])
        levels, dur = levels[i:], dur[i:]
    if len(dur) == 0:
        return
    for f in decode(hm, PulseTrain(levels, dur), include_bad=True):
        start = f.start_us + origin_us
        if start < handled_us or start < handled_end_us:
            continue
        handled_end_us = max(handled_end_us, f.end_us + origin_us)
        if f.crc_ok or include_bad:
            yield _shifted(f, origin_us)


def _shifted(frame: DecodedFrame, origin_us: float) -> DecodedFrame:
    """Return ``frame`` with its times moved by ``origin_us``."""
    if origin_us == 0.0:
        return frame
    return dataclasses.replace(frame, start_us=frame.start_us + origin_us,
                               end_us=frame.end_us + origin_us)
