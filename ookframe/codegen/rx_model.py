"""Values of the generated C receiver (``emit --side rx``), computed from the spec and the
reference decoder's own tables, validated before rendering.

The receiver is fed one pulse per edge (``<p>_rx_edge(level, ticks)``, the level and
timer ticks of the pulse that just ended) and decides as the reference decoder does
(``ookframe.decode``), in integers:

- glitch filter: a pulse shorter than ``decoder.glitch_fraction`` units joins the pulse
  before it (``decode/glitch.py``); mark-space codes keep one in a frame's body that is at
  least half the filter when its neighbours fit runs of the code and joined would not,
  the pulse after also from the short one's start (``LOW_KEEP_*``: the reference's
  low-filter reading, ``decode/framer.py``);
- clock: each edge is placed on a chip grid (unit in 1/16 tick, ``UNIT_FRAC``); a pulse's
  run length is the allowed length (``LineCode.run_lengths`` and the head's, per level,
  midpoint thresholds) nearest to the distance from the previous edge's grid point;
  a phase loop and a frequency loop follow the clock while hunting, and at the sync the
  unit is refitted over the run of well-placed edges before it (the head); fixed-chip
  codes hold each decided pulse until the next is decided: when the next fits no run the
  code has (its nearest allowed length more than half a unit off) and the held pulse's
  end edge is the less sure of its two edges, that edge moves to the grid point on its
  other side and both pulses are decided again from the held one's clock state
  (``classify._repair``: one jittered edge past halfway makes one pulse a unit too long
  and the next a unit too short, or of no length at all);
- line code: fixed-chip block codes decode per chip phase from a chip-pattern table;
  mark-space codes (pulse width, pulse distance) decode per (mark, space) pair;
- clock: while hunting the frequency loop pulls in fast for the first ``GEAR_CHIPS`` chips
  of a run of well-placed edges, then holds steady (the reference fits one unit over the
  head); an edge far off the grid ends the run and restarts the pull-in (from the
  nominal unit when the unit has wandered more than ``KEEP_SPAN_PCT`` off it);
- sync: the preamble's last ``LEAD`` bits with at most 4 in 16 wrong (the reference only
  ranks sync hits by their lead errors), then the sync word with at most
  ``sync.max_errors`` bit errors (invalid code words count as errors);
- body: unstuffing, the length field (whitening constant applied), then the frame goes
  to the ready queue; the main loop (``_rx_take``) de-whitens, checks and unpacks.

``_rx_edge`` itself only queues the pulse in an edge FIFO; the decisions above run in
``_rx_poll`` (called by ``_rx_ready`` and ``_rx_take``) in the main loop, so the capture
ISR stays a few tens of cycles on an 8-bit MCU.

Check-aided recovery (``decode.framer``'s rules, every code the receiver decodes): in the
body the receiver keeps the ``RECOVERY_EDGES`` least reliable edges (at least
``RECOVERY_MIN_OFFSET`` unit off their grid point, both pulses they bound still of
allowed lengths if the edge moves to the grid point on its other side) and the frame's
chips (a pulse of n units: n chips of its level); ``_rx_take`` tries, for a frame whose
check fails, up to ``recovery_trials`` combinations of at most ``recovery_flips`` of those
edges moved (fewest first, then least reliable), re-decoding the chips each time, and
takes the first whose check passes (``corrected``: edges moved). Fixed-chip codes decode
the chips per block as the ISR's decisions do; mark-space codes read them again as runs,
a block per (mark, space) pair, a last mark as one whose space ran into the gap: a moved
edge makes one mark and the space beside it a unit longer and shorter, so it changes the
pair holding both (a mark's end) or two pairs (a space's end), as in the reference. The
limits are the reference's: flips = min(max_flips, HD - 2), trials = 2**w / 4096 for a
w-bit check; a mark-space code none of whose edges can move with both pulses keeping
allowed lengths (pulse distance: one mark length; pulse width with long - short > 1) gets
no recovery, the reference moving none either. Unlike the reference it ranks body edges
only (moving a preamble edge cannot change the body), and the C's pulse decisions differ
from the reference's where a pulse lies past the longest run (the C takes the nearest
allowed length, the reference holds the grid length and repairs it): there the two may
correct different frames.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import CodegenError
from ..plan import FramePlan
from .linecode_table import CodeTable
from .timing import Timing

#: fractional bits of the unit and residuals (unit kept in 1/16 tick)
UNIT_FRAC = 4
#: preamble bits just before the sync matched with the sync word (the reference's
#: ``head.LEAD_BITS``, shorter when the preamble is)
LEAD_BITS = 16
#: frequency window the receiver's unit may wander in while hunting (fraction); a little
#: wider than the reference's search (``head.MAX_CLOCK_ERROR``)
CLOCK_SPAN = 0.12
#: ... for mark-space codes, whose reference locks the head over the whole clock range
#: (``decode.detect``): measured with ``margin --decoder c`` on gate_sensor, whose
#: clock-error margins that lock moved to +19.1 % / -17.2 %: 0.12 lost 0.51 / 0.039 of
#: the copies there (reference 0), 0.22 none; presets unchanged (edge-of-range copy loss
#: gate_sensor 0.049, greenhouse_probe 0.045 either way)
CLOCK_SPAN_PAIRS = 0.22
#: frequency window of the unit in a frame's body (fraction of nominal): a transmitter clock
#: drifting during the frame takes the unit further than the hunting window (the reference
#: follows it without a bound: ``classify.track_unit``, ``grid_runs``); measured with
#: ``margin --decoder c`` on tank_level at its drift margins (+-480 %/s): the hunting
#: window lost every first copy of more than 15 note bytes there (their unit ends 13-22 %
#: off), 0.5 none
BODY_CLOCK_SPAN = 0.5
#: allowed-length tables longer than this are decided by division (NRZ without stuffing)
MAX_LADDER = 16
#: frames held by the ready queue unless <PREFIX>_RX_QUEUE says otherwise
DEFAULT_QUEUE = 2
#: the frequency loop's step divisor while hunting (unit += residual / (run units *
#: divisor)); larger: a steadier but slower clock
FREQ_DIV_HUNT = 64
#: ... and while the run of well-placed edges is shorter than GEAR_CHIPS chips (a fast
#: pull-in after noise or at a new transmitter clock, then a steady clock for the sync)
FREQ_DIV_PULL_IN = 16
GEAR_CHIPS = 16
#: an edge that ends the run of well-placed edges also sets the unit back to nominal when
#: it has wandered further than KEEP_SPAN_PCT (noise drags it towards the clamps); a unit
#: nearer nominal is kept, so a transmitter 10 % off is still pulled in (measured: reset
#: always lost every frame of hive_scale at -10 %, never resetting lost 30 % of
#: tank_level's copies on edge-of-range-superregen)
RESET_ON_BREAK = True
KEEP_SPAN_PCT = 6
#: the frequency loop's step divisor in the body
FREQ_DIV_BODY = 64
#: added to the body phase loop's shift worked out from ``decoder.loop_gain``: -1 (a
#: phase loop twice as fast) follows a drifting clock as the reference's grid phase does
#: (measured: coldframe_vent at its drift margin lost 7.6 % of copies with 0, none with
#: -1; jitter margins within a few tenths of a percent either way)
BODY_SHIFT_EXTRA = -1
#: an edge further than this from its grid point (1/20 unit) ends the run of well-placed
#: edges the head refit spans
STREAK_BREAK_20THS = 9
#: entries of the edge FIFO between rx_edge (ISR) and rx_poll (main loop) unless
#: <PREFIX>_RX_EDGE_FIFO says otherwise
DEFAULT_EDGE_FIFO = 16
#: fewest chips of well-placed edges before the sync for the head refit of the unit
MIN_REFIT_CHIPS = 8
#: codes whose receiver keeps a pulse shorter than the glitch filter but at least
#: ``decode.framer.LOW_FILTER_FRACTION`` of it (the reference's low-filter reading,
#: decided pulse by pulse from the pulse after it) when the pulses either side fit runs
#: the code has: within LOW_KEEP_LOOSE_20THS / 20 unit when the three joined lie further
#: than LOW_KEEP_JOIN_20THS / 20 unit from any run the code has (a glitch inside a run
#: joins into that run, so only a shrunk pulse gets there) or, in a frame's body, once a
#: pulse has strayed LOW_KEEP_WORST_20THS / 20 unit (heavy jitter); else within
#: LOW_KEEP_TIGHT_20THS / 20. Measured (copy loss, C against the reference's 95 % CI upper
#: bound, seeds 0-3 at the jitter margin, 0-2 on edge-of-range-superregen): gate_sensor at
#: 65.6 us 0.209 -> 0.051-0.060 (<= 0.085-0.103), greenhouse_probe at 78.1 us 0.188 ->
#: 0.037-0.050 (<= 0.128-0.150); edge-of-range 0.032-0.039 (<= 0.042-0.051) and
#: 0.037-0.058 (<= 0.057-0.071). Tried: the filter halved in the body (margins met,
#: edge-of-range 2x the copies lost); the body only (gate 0.086-0.109, fails 2 of 4
#: seeds); one tolerance of 13/20 whatever the join (gate on edge-of-range at the CI
#: bound). Fixed-chip codes keep none (their check-aided recovery covers them; keeping
#: them lost 2x the copies on edge-of-range). The pulse after must also fit from the short
#: pulse's start at the grid point the pulse before ends on (the short pulse its shortest
#: run): a mark glitch just after a long space starts left a kept sliver of space there
#: (measured: gate_sensor at its glitch-rate margin, 0.0316 per ms, seed 0, copy loss
#: 0.417 -> 0.384, reference 0.364 <= 0.395; jitter, edge-of-range and mark-bias margins
#: within 0.002)
LOW_KEEP_FAMILIES = ("pairs",)
LOW_KEEP_JOIN_20THS = 10
LOW_KEEP_TIGHT_20THS = 10
LOW_KEEP_LOOSE_20THS = 16
LOW_KEEP_WORST_20THS = 6
#: the pulse after a short one, where it misses and the three joined make no run: the
#: short pulse and it together, from the end of the pulse before, within
#: LOW_KEEP_PAIR_20THS / 20 unit of the short pulse's shortest run plus a run of the pulse
#: after's level (a mark bias moves the ends of both neighbours alike). Measured (copy
#: loss, C at the reference's mark-bias margins, seed 0, 200 transmissions;
#: edge-of-range-superregen, 300): 3 lost every copy at greenhouse_probe's -0.81 unit, 5
#: passes at every margin, gate_sensor's edge-of-range copy loss stays 0.049 (reference
#: 0.043, CI upper 0.055). Without the no-run condition, 5 raised that to 0.053 and the
#: pulses' own tolerance (TIGHT / LOOSE) to 0.059.
LOW_KEEP_PAIR_20THS = 5
#: lead bits (of LEAD_BITS) that may be wrong at a sync hit: the reference decoder only
#: ranks sync hits by their lead errors; a few allowed keep a jittered preamble edge from
#: losing the frame while a sync hit inside random data stays unlikely
LEAD_MAX_ERRORS_PER_16 = 4
#: ATmega328P Timer1 clock select (TCCR1B CS12..CS10) per prescaler (datasheet, Timer1
#: clock select bit description, from memory)
AVR_TIMER1_CLOCK_BITS = {1: "(1u << CS10)", 8: "(1u << CS11)", 64: "((1u << CS11) | (1u << CS10))",
                         256: "(1u << CS12)", 1024: "((1u << CS12) | (1u << CS10))"}


@dataclass(frozen=True)
class RxModel:
    """Everything the receiver templates place (literals, tables, flags)."""

    family: str  # "chips" (fixed chips per block) | "pairs" (mark, space per block)
    bits_per_block: int
    chips_per_block: int  # chips family; 0 for pairs
    differential: bool
    chip_table: tuple[str, ...]  # chips family: block value per chip pattern, 0xFF invalid
    pair_marks: tuple[int, ...]  # pairs family: allowed mark units (row index)
    pair_spaces: tuple[int, ...]  # pairs family: allowed space units (column index)
    pair_table: tuple[tuple[str, ...], ...]  # block value per (mark, space), 0xFF invalid
    mark_only: tuple[str, ...]  # block value of a mark whose space ran into a gap
    allowed: tuple[tuple[int, ...], tuple[int, ...]]  # per level (0 space, 1 mark)
    ladder: bool  # nearest allowed length by comparisons (else by division)
    contiguous: bool  # both levels allow the same unbroken run of lengths
    top: int
    cap_ratio: int  # a pulse longer than this many units ends the window
    unit16: int
    unit16_min: int
    unit16_max: int
    unit16_body_min: int
    unit16_body_max: int
    glitch_ticks: int
    pattern_bits: int
    pattern_type: str
    pattern: str
    sync_mask: str
    lead_mask: str
    max_errors: int
    lead_max_errors: int
    body_min_bits: int
    body_max_bits: int
    body_bytes: int
    variable: bool
    len_offset: int
    len_width: int
    len_weights: tuple[str, ...]
    len_xor: tuple[int, ...]
    len_max: int
    len_fixed_bits: int
    stuff_after: int
    stuff_value: str
    queue: int
    edge_fifo: int
    recip: tuple[int, ...]  # round(256 / n) for n = 0..top (0 unused)
    phase_shift_hunt: int
    phase_shift_body: int
    freq_div_hunt: int
    freq_div_pull_in: int
    gear_chips: int
    reset_on_break: bool
    unit16_keep_min: int
    unit16_keep_max: int
    freq_div_body: int
    #: the frequency steps' divisions 256 * div as (|y| << up) >> 16 (up = 16 - log2 of it;
    #: 0 where it is no power of two within 2^9..2^16): cheap on 8-bit MCUs while |y| << up
    #: provably stays below 2^31 (``freq_fast``)
    freq_up_pull_in: int
    freq_up_hunt: int
    freq_up_body: int
    freq_fast: bool
    min_refit_chips: int
    recovery_flips: int  # 0: no check-aided recovery
    recovery_trials: int
    recovery_edges: int
    recovery_min_offset_10ths: int
    raw_chips: int  # body chips kept for the recovery (0 without)
    recovery_none: str  # why there is no recovery (comment text), "" with one
    streak_break_20ths: int
    low_keep: bool  # shrunk pulses kept in a body (mark-space codes)
    low_keep_join_20ths: int
    low_keep_tight_20ths: int
    low_keep_loose_20ths: int
    low_keep_worst_20ths: int
    low_keep_pair_20ths: int
    glitch_low_ticks: int
    #: Timer1 clock-select bits (ATmega328P TCCR1B) for the timer's prescaler, as a C
    #: expression; "" when Timer1 has no such prescaler (no <PREFIX>_RX_AVR_ICP1 ISRs)
    avr_icp1_clock: str = ""

    @property
    def ram_bytes(self) -> int:
        """Upper bound of the receiver's static RAM in bytes (state, queue, edge FIFO), as in
        the header (padding on 32-bit targets may add a few bytes)."""
        return self._ram(recovery=True)

    @property
    def ram_bytes_plain(self) -> int:
        """``ram_bytes`` with the check-aided recovery left out (``<PREFIX>_RX_RECOVERY 0``)."""
        return self._ram(recovery=False)

    def _ram(self, *, recovery: bool) -> int:
        reg = 8 if self.pattern_type == "uint64_t" else 4
        phases = self.chips_per_block if self.family == "chips" else 1
        state = 4 * 8 + 16 + 2 * reg * phases + self.body_bytes
        slot = self.body_bytes + 12 + 8  # bits, quality (padded), worst16 and unit16
        if self.recovery_flips and recovery:
            slot += (self.raw_chips + 7) // 8 + 6 + 8 * self.recovery_edges
        held = 3 if self.low_keep else 0  # a short pulse waiting for the next
        if self.family == "chips":  # the pulse held for the repair: two clock states, end, ticks
            held += 2 * 14 + 2 * 4 + 6
        drop = 3  # hunt_skips and the edge-loss byte rx_poll compares (backlog drop)
        return state + self.queue * slot + 16 + 3 * self.edge_fifo + 2 + held + drop


def _shift_up(d: int) -> int:
    """Return 16 - log2(d) for a power of two d within 2^9..2^16, else 0."""
    k = d.bit_length() - 1
    return 16 - k if d == 1 << k and 9 <= k <= 16 else 0


def _literal(value: int, bits: int) -> str:
    if bits > 32:
        return f"UINT64_C(0x{value:X})"
    return f"0x{value:X}u"


def _chip_table(code: CodeTable, cpb: int) -> tuple[str, ...]:
    """Block value of every chip pattern of ``cpb`` chips (first chip in the top bit)."""
    table = ["0xFFu"] * (1 << cpb)
    for value, w in enumerate(code.words):
        chips: list[int] = []
        level = w.first_level
        for u in w.runs_units:
            chips += [level] * u
            level ^= 1
        if len(chips) != cpb:
            raise CodegenError(f"line code {code.name!r}: block {value} has {len(chips)} chips, "
                               f"not {cpb}; the C receiver needs a fixed chip count")
        pat = int("".join(map(str, chips)), 2)
        table[pat] = f"0x{value:02X}u"
    return tuple(table)


def _pairs(code: CodeTable, allowed: tuple[tuple[int, ...], tuple[int, ...]]
           ) -> tuple[tuple[int, ...], tuple[int, ...], tuple[tuple[str, ...], ...], tuple[str, ...]]:
    marks, spaces = allowed[1], allowed[0]
    table = [["0xFFu"] * len(spaces) for _ in marks]
    by_mark: dict[int, set[int]] = {}
    for value, w in enumerate(code.words):
        m, s = w.runs_units
        if m not in marks or s not in spaces:
            raise CodegenError(f"line code {code.name!r}: block {value} uses runs the decoder "
                               "does not allow")
        table[marks.index(m)][spaces.index(s)] = f"0x{value:02X}u"
        by_mark.setdefault(m, set()).add(value)
    mark_only = tuple(f"0x{next(iter(by_mark[m])):02X}u" if len(by_mark.get(m, ())) == 1
                      else "0xFFu" for m in marks)
    return marks, spaces, tuple(tuple(r) for r in table), mark_only


def _pair_edge_moves(allowed: tuple[tuple[int, ...], tuple[int, ...]]) -> bool:
    """True if some edge of a mark-space code can move one unit with both pulses it bounds
    (a mark and a space) keeping allowed lengths: the recovery's only candidates."""
    marks, spaces = allowed[1], allowed[0]
    return any(m + d in marks and s - d in spaces
               for m in marks for s in spaces for d in (1, -1))


def build_rx(plan: FramePlan, code: CodeTable, timing: Timing) -> RxModel:
    """Return the receiver values of ``plan`` (CodegenError naming what is unsupported)."""
    from ..decode.head import head_model  # the decoder pulls in scipy: only when needed

    spec = plan.spec
    lc = plan.line_code
    hm = head_model(spec)
    k = code.bits_per_block
    cpb = lc.chips_per_block
    name = spec.line_code.name
    if plan.head_bits.size % k:
        raise CodegenError(f"line code {name!r}: preamble + sync is not a whole number of "
                           f"{k}-bit blocks; the C receiver cannot align it")
    two_run = all(len(w.runs_units) == 2 and w.first_level == 1 for w in code.words)
    allowed = (tuple(int(x) for x in hm.runs.allowed[0]), tuple(int(x) for x in hm.runs.allowed[1]))
    top = int(hm.runs.top)
    if top > 255:
        raise CodegenError(f"line code {name!r}: runs of up to {top} units; the C receiver "
                           "handles runs of at most 255 units (use bit stuffing)")
    chip_table: tuple[str, ...] = ()
    pair_marks: tuple[int, ...] = ()
    pair_spaces: tuple[int, ...] = ()
    pair_table: tuple[tuple[str, ...], ...] = ()
    mark_only: tuple[str, ...] = ()
    trailer_mark = code.trailer is not None and len(code.trailer.runs_units) == 1 \
        and code.trailer.first_level == 1
    if two_run and not code.differential and (code.trailer is None or trailer_mark):
        family = "pairs"
        pair_marks, pair_spaces, pair_table, mark_only = _pairs(code, allowed)
        cpb_out = 0
    elif cpb is not None and 1 <= cpb <= 8 and code.trailer is None:
        family = "chips"
        chip_table = _chip_table(code, cpb)
        cpb_out = cpb
    else:
        raise CodegenError(f"line code {name!r}: the C receiver decodes fixed-chip block codes "
                           "(up to 8 chips) and mark-space codes; this one is neither")
    # head pattern: lead bits of the preamble + the sync word
    pre_bits = plan.spec.preamble.length_bits
    sync_n = plan.sync_bits.size
    lead_n = min(LEAD_BITS, pre_bits // 2)  # the first preamble bits may meet receiver noise
    lead_n -= lead_n % k
    if sync_n + lead_n > 64:
        lead_n = max(0, 64 - sync_n)
        lead_n -= lead_n % k
    if sync_n > 64:
        raise CodegenError(f"sync word of {sync_n} bits; the C receiver handles up to 64")
    pat_bits = lead_n + sync_n
    head = plan.head_bits
    pat = [int(b) for b in head[pre_bits - lead_n:]]
    value = int("".join(map(str, pat)), 2) if pat else 0
    reg_bits = 32 if pat_bits <= 32 else 64
    # the unit in 1/16 tick and its hunting span
    unit16 = round(spec.unit_us / timing.tick_us * (1 << UNIT_FRAC))
    if unit16 < 4 << UNIT_FRAC:
        raise CodegenError(f"one unit is {spec.unit_us / timing.tick_us:.2f} timer ticks; the C "
                           "receiver needs at least 4 (a faster timer clock or smaller prescaler)")
    span = CLOCK_SPAN_PAIRS if family == "pairs" else CLOCK_SPAN
    if (top + 2) * unit16 * (1 + max(span, BODY_CLOCK_SPAN)) >= (1 << 30):
        raise CodegenError("the longest run is too many timer ticks for the receiver's 32-bit "
                           "arithmetic; use a larger prescaler")
    glitch = int(spec.decoder.glitch_fraction * spec.unit_us / timing.tick_us + 0.5)
    # body: length field
    lf = plan.length_field
    variable = plan.bytes_field is not None
    len_offset = len_width = len_max = 0
    weights: tuple[str, ...] = ()
    xor: tuple[int, ...] = ()
    if variable:
        assert lf is not None and lf.width_bits is not None and lf.weights is not None
        len_offset, len_width = lf.offset_bits, lf.width_bits
        if len_width > 16:
            raise CodegenError(f"length field '{lf.name}' is {len_width} bits; the C receiver "
                               "reads length fields of up to 16 bits")
        weights = tuple(f"{int(w)}u" for w in lf.weights)
        xor = tuple(int(x) for x in plan.fields_mask[len_offset:len_offset + len_width])
        len_max = plan.bytes_field.field.max_len_bytes  # type: ignore[union-attr]
    body_max = plan.max_body_bits
    if body_max > 65535:
        raise CodegenError(f"frames of up to {body_max} body bits; the C receiver handles 65535")
    recip = tuple(0 if n == 0 else round(256 / n) for n in range(top + 1))
    # check-aided recovery: the reference decoder's limits (decode.framer)
    from ..decode import framer

    flips = min(spec.decoder.max_flips, framer.safe_flips(spec))
    trials = int(2.0 ** spec.check.width_bits * framer.RECOVERY_FALSE_ACCEPT) \
        if spec.check.kind != "none" else 0
    if family == "pairs" and flips and trials and not _pair_edge_moves(allowed):
        why = ("no edge of this code can move a unit with the mark and the space it bounds "
               "keeping allowed lengths (the reference decoder moves none either)")
        flips = trials = 0
    elif flips == 0 or trials == 0:
        why = "the check's Hamming distance and width leave no safe flips"
        flips = trials = 0
    else:
        why = ""
    raw_bits = body_max + lc.max_stuffed_bits(body_max)
    # chips of one block (and one block more: the pulses after the frame's end a
    # corrected frame may still need); mark-space codes: the longest (mark, space) pair
    block_chips = cpb_out if family == "chips" else max(sum(w.runs_units) for w in code.words)
    if family == "pairs" and code.trailer is not None:
        block_chips += sum(code.trailer.runs_units)
    raw_chips = (raw_bits + k - 1) // k * block_chips + block_chips if flips else 0
    if raw_chips > 65535:
        raise CodegenError(f"frames of up to {raw_chips} body chips; the C receiver's "
                           "check-aided recovery handles 65535")
    ups = tuple(_shift_up(256 * d) for d in (FREQ_DIV_PULL_IN, FREQ_DIV_HUNT, FREQ_DIV_BODY))
    body_max16 = max(int(unit16 * (1 + BODY_CLOCK_SPAN)), int(unit16 * (1 + span))) + 1
    # |e| <= 2 units (a pulse past the longest run, or a repaired one), round(256 / n) <= 256
    fast = all(ups) and (2 * body_max16 * 256) << max(ups) < (1 << 31)
    gain = spec.decoder.loop_gain
    body_shift = 3 if gain >= 0.04 else (4 if gain >= 0.02 else 5)
    body_shift += BODY_SHIFT_EXTRA
    return RxModel(
        family=family, bits_per_block=k, chips_per_block=cpb_out,
        differential=code.differential, chip_table=chip_table, pair_marks=pair_marks,
        pair_spaces=pair_spaces, pair_table=pair_table, mark_only=mark_only, allowed=allowed,
        ladder=not hm.runs.same or top <= MAX_LADDER, top=top,
        contiguous=allowed[0] == allowed[1]
        and allowed[0] == tuple(range(allowed[0][0], allowed[0][-1] + 1)),
        cap_ratio=int(hm.runs.cap_ratio), unit16=unit16,
        unit16_min=int(unit16 * (1 - span)), unit16_max=int(unit16 * (1 + span)) + 1,
        unit16_body_min=min(int(unit16 * (1 - BODY_CLOCK_SPAN)), int(unit16 * (1 - span))),
        unit16_body_max=max(int(unit16 * (1 + BODY_CLOCK_SPAN)), int(unit16 * (1 + span))) + 1,
        glitch_ticks=glitch, pattern_bits=pat_bits, pattern_type=f"uint{reg_bits}_t",
        pattern=_literal(value, reg_bits),
        sync_mask=_literal((1 << sync_n) - 1, reg_bits),
        lead_mask=_literal(((1 << lead_n) - 1) << sync_n, reg_bits),
        max_errors=spec.sync.max_errors, lead_max_errors=lead_n * LEAD_MAX_ERRORS_PER_16 // 16,
        body_min_bits=plan.min_body_bits,
        body_max_bits=body_max, body_bytes=max(1, (body_max + 7) // 8), variable=variable,
        len_offset=len_offset, len_width=len_width, len_weights=weights, len_xor=xor,
        len_max=len_max, len_fixed_bits=plan.min_body_bits,
        stuff_after=code.stuff_after, stuff_value=code.stuff_value, queue=DEFAULT_QUEUE,
        edge_fifo=DEFAULT_EDGE_FIFO,
        recip=recip, phase_shift_hunt=2, phase_shift_body=body_shift,
        freq_div_hunt=FREQ_DIV_HUNT, freq_div_pull_in=FREQ_DIV_PULL_IN, gear_chips=GEAR_CHIPS,
        reset_on_break=RESET_ON_BREAK, unit16_keep_min=unit16 * (100 - KEEP_SPAN_PCT) // 100,
        unit16_keep_max=unit16 * (100 + KEEP_SPAN_PCT) // 100 + 1,
        freq_div_body=FREQ_DIV_BODY, min_refit_chips=MIN_REFIT_CHIPS,
        freq_up_pull_in=ups[0], freq_up_hunt=ups[1], freq_up_body=ups[2], freq_fast=fast,
        recovery_flips=flips, recovery_trials=min(trials, 255),
        recovery_edges=framer.RECOVERY_EDGES,
        recovery_min_offset_10ths=round(framer.RECOVERY_MIN_OFFSET * 10), raw_chips=raw_chips, recovery_none=why,
        streak_break_20ths=STREAK_BREAK_20THS,
        low_keep=family in LOW_KEEP_FAMILIES, low_keep_join_20ths=LOW_KEEP_JOIN_20THS,
        low_keep_tight_20ths=LOW_KEEP_TIGHT_20THS, low_keep_loose_20ths=LOW_KEEP_LOOSE_20THS,
        low_keep_worst_20ths=LOW_KEEP_WORST_20THS,
        low_keep_pair_20ths=LOW_KEEP_PAIR_20THS,
        glitch_low_ticks=int(framer.LOW_FILTER_FRACTION * spec.decoder.glitch_fraction
                             * spec.unit_us / timing.tick_us + 0.5),
        avr_icp1_clock=AVR_TIMER1_CLOCK_BITS.get(timing.prescaler, ""))

