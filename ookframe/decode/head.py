"""What the decoder knows in advance about every frame of a spec: the runs of the
preamble + sync (the head), the signature used to find frames, and timing limits.

``build_head(plan)`` works them out from a compiled :class:`~ookframe.plan.FramePlan`
(well under 2 ms); nothing is cached: whoever decodes many trains of one spec builds the
model once and passes it to ``decode`` (the stress runner does, once per run).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..linecodes import LineCode
from ..plan import FramePlan, as_plan
from ..pulses import chips_to_runs
from ..spec.model import FrameSpec
from .classify import RunTable, run_table
from .segment import break_threshold_us

#: largest transmitter clock error searched for (fraction); twice the +-5 % of cheap RC
#: oscillators (common practice, no source)
MAX_CLOCK_ERROR = 0.10
#: fewest preamble runs for a preamble-only signature (else the sync joins it)
MIN_SIGNATURE_RUNS = 4
#: leading head runs left out of the signature when the preamble is long enough: noise
#: just before the carrier starts can merge with them (common practice, no source)
LEAD_SKIP_RUNS = 4
#: preamble bits just before the sync that also rank sync hits
LEAD_BITS = 16
#: most runs in a signature (the last ones before the sync: early runs may be eaten by AGC)
MAX_SIGNATURE_RUNS = 32


@dataclass(frozen=True, eq=False)
class HeadModel:
    """Decoder constants of one spec (see module docstring), with the compiled plan they
    come from. Run arrays are of the head."""

    plan: FramePlan
    line_code: LineCode
    head_bits: np.ndarray
    sync_bits: np.ndarray
    lead_bits: np.ndarray
    levels: np.ndarray
    units: np.ndarray
    sig_start: int
    sig_stop: int
    sync_bit: int
    sync_chip: int
    body_chip: int
    sync_reach_bits: int
    max_frame_chips: int
    cap_units: int
    break_us: float
    phased: bool  # the code's decoder gives one candidate per chip phase (fixed blocks)
    runs: RunTable  # allowed run lengths per level (head runs included), decision thresholds

    @property
    def spec(self) -> FrameSpec:
        return self.plan.spec

    @property
    def sig_levels(self) -> np.ndarray:
        return self.levels[self.sig_start:self.sig_stop]

    @property
    def sig_units(self) -> np.ndarray:
        return self.units[self.sig_start:self.sig_stop]

    @property
    def prefix_levels(self) -> np.ndarray:
        """Levels of the head runs before the signature (not measured: taken as sent)."""
        return self.levels[:self.sig_start]

    @property
    def prefix_units(self) -> np.ndarray:
        return self.units[:self.sig_start]


def _signature(levels: np.ndarray, units: np.ndarray, sync_chip: int) -> tuple[int, int]:
    cs = np.concatenate(([0], np.cumsum(units)))
    pre = np.flatnonzero(cs[1:] <= sync_chip)  # runs wholly before the sync's block
    # the first runs may merge with the idle level or with receiver noise just before the
    # carrier starts (a superregenerative receiver is noisy until then): skip a few when
    # the preamble is long enough to spare them
    skip = LEAD_SKIP_RUNS if (pre >= LEAD_SKIP_RUNS).sum() >= MIN_SIGNATURE_RUNS else 1
    pre = pre[pre >= skip]
    if pre.size >= MIN_SIGNATURE_RUNS:
        stop = int(pre[-1]) + 1
        return max(int(pre[0]), stop - MAX_SIGNATURE_RUNS), stop
    if levels.size >= 3:  # interior head runs (sync included; needs an exact sync)
        return 1, min(levels.size - 1, 1 + MAX_SIGNATURE_RUNS)
    first_mark = int(np.argmax(levels == 1))
    return first_mark, first_mark + 1


def _self_shift_bits(levels: np.ndarray, units: np.ndarray, start: int, stop: int,
                     line_code: LineCode) -> int:
    """Bits by which the signature can also match later in the head (periodic preambles)."""
    cs = np.concatenate(([0], np.cumsum(units)))
    best = 0
    for s in range(1, levels.size - 1 - stop + 1):
        a, b = start + s, stop + s
        if np.array_equal(levels[a:b], levels[start:stop]) and np.array_equal(
            units[a:b], units[start:stop]
        ):
            best = max(best, int(cs[a] - cs[start]))
    return math.ceil(best / line_code.units_per_bit)


def _max_chips_per_bit(lc: LineCode) -> float:
    k = lc.bits_per_block
    n = max(lc.encode(np.zeros(k, np.uint8)).size, lc.encode(np.ones(k, np.uint8)).size)
    return n / k


def build_head(spec: FrameSpec | FramePlan) -> HeadModel:
    """Return the decoder constants of a compiled plan (a spec is compiled first)."""
    plan = as_plan(spec)
    spec = plan.spec
    lc = plan.line_code
    sync = plan.sync_bits
    head = plan.head_bits
    pre = head[:head.size - sync.size]
    chips = lc.encode(head)
    levels, units = chips_to_runs(chips)
    cs = np.concatenate(([0], np.cumsum(units)))
    bpb = lc.bits_per_block
    cpb = lc.chips_per_block
    if cpb is not None:
        sync_chip = pre.size // bpb * cpb
    else:  # bits start on marks: locate the sync's first bit through the code's decoder
        cand = lc.decode(levels, units)[0]
        sync_chip = int(cs[cand.run_index[pre.size]])
    if cpb is not None:
        body_chip = head.size // bpb * cpb
    else:
        longer = lc.encode(np.concatenate((head, np.zeros(bpb, np.uint8))))
        cand = lc.decode(*chips_to_runs(longer))[0]
        body_chip = int(np.concatenate(([0], np.cumsum(chips_to_runs(longer)[1])))[
            cand.run_index[head.size]])
    start, stop = _signature(levels, units, sync_chip)
    reach = max(_self_shift_bits(levels, units, start, stop, lc), 0) + 2 * bpb
    n_max = head.size + plan.max_body_bits
    n_max += lc.max_stuffed_bits(plan.max_body_bits)
    max_chips = math.ceil(n_max * _max_chips_per_bit(lc)) + 2 * (cpb or 1)
    max_run = lc.max_run_units
    if max_run is None:
        max_run = max_chips
    elif lc.max_stuffed_bits(1 << 16):
        # the head is not stuffed, and stuffing starts afresh after the sync: a body run
        # can extend the head's last run
        max_run = max(max_run + int(units[-1]), int(units.max()))
    allowed = []
    for lv in (0, 1):
        own = lc.run_lengths(lv)
        if own is None or lc.max_stuffed_bits(1 << 16):
            allowed.append(tuple(range(1, int(max_run) + 1)))
        else:
            allowed.append(tuple(sorted(set(own) | set(units[levels == lv].tolist()))))
    return HeadModel(
        plan=plan,
        line_code=lc,
        head_bits=head,
        sync_bits=sync,
        lead_bits=pre[max(pre.size - LEAD_BITS, 0):],
        levels=levels,
        units=units,
        sig_start=start,
        sig_stop=stop,
        sync_bit=int(pre.size),
        sync_chip=int(sync_chip),
        body_chip=int(body_chip),
        sync_reach_bits=int(reach),
        max_frame_chips=int(max_chips),
        cap_units=int(max_run),
        break_us=break_threshold_us(max_run, spec.unit_us, MAX_CLOCK_ERROR),
        phased=cpb is not None and len(lc.decode(levels, units)) > 1,
        runs=run_table(allowed[0], allowed[1]),
    )


def head_model(spec: FrameSpec | FramePlan | HeadModel) -> HeadModel:
    """Return the decoder constants: ``spec`` itself when it is a HeadModel, else built
    afresh from the spec or plan (not cached)."""
    return spec if isinstance(spec, HeadModel) else build_head(spec)
