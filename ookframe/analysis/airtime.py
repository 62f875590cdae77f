"""Airtime, duty cycle, collision odds and transmit energy of a node reporting periodically.

Times: one *transmission* is ``repeats`` frames ``gap_us`` apart; ``interval_s`` is the time
between the starts of consecutive transmissions of one node.

Collisions (pure ALOHA; N. Abramson, "THE ALOHA SYSTEM - Another alternative for computer
communications", AFIPS Fall Joint Computer Conference 1970): N nodes report at the same
interval I with independent, uniformly random phases; a frame is lost when any other frame
overlaps it in time (no capture effect, the receiver always listens). A frame of length T
meets one other node's frame with probability 2T/I (vulnerable window 2T), so it survives
N-1 single-frame nodes with probability (1 - 2T/I)^(N-1), exact for T <= I/2. This tends
to exp(-2G') as N grows, G' = (N-1) R T / I being the load the *other* nodes offer (frames
per frame time); the total offered load G = N R T / I (which G' approaches for large N)
gives the channel throughput S = G exp(-2G), peaking at G = 1/2 with S = 1/(2e).

Repeats: every node sends R copies spaced S = T + gap. Copies of two nodes collide together
(their repeat patterns are the same), so the copies of one report are *not* independent.
:func:`collisions` gives the exact probability that at least one copy survives under the
model above, and also the figure under the common simplifying assumption that copies are
lost independently (optimistic).

Energy: the carrier is on only during marks, so energy = mark time x TX current x supply
voltage. Left out: sleep current, self-discharge, temperature, regulator losses, transmitter
start-up (oscillator settling), and the microcontroller and sensor's own active time.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import ValueRangeError
from ..plan import FramePlan, as_plan, spec_of
from ..spec.model import FrameSpec
from .linecode_stats import frame_stats
from .regions import REGIONS, Finding, check_region, usage
from .spectrum import chip_stream

#: a keyed 433 MHz transmitter draws about this with the carrier on (common practice, no source)
TYPICAL_TX_CURRENT_MA = 12.0
#: supply voltage of the typical figure above (common practice, no source)
TYPICAL_SUPPLY_V = 4.8
#: maximum throughput of pure ALOHA, 1/(2e) (Abramson 1970)
ALOHA_MAX_THROUGHPUT = 1.0 / (2.0 * math.e)
#: random payloads averaged for mean frame length and mark time
MEAN_FRAMES = 64
#: seed of the deterministic mean figures in :func:`tx_timing` when no generator is given
TIMING_SEED = 7
ENERGY_IGNORES: tuple[str, ...] = (
    "sleep current", "self-discharge", "temperature", "regulator losses",
    "transmitter start-up", "microcontroller and sensor active time",
)


@dataclass(frozen=True)
class TxTiming:
    """Timing of one transmission, in µs: means over random payloads and upper bounds."""

    frame_us: float
    airtime_us: float
    mark_us: float
    max_frame_us: float
    max_airtime_us: float
    repeats: int
    gap_us: float
    data_dependent: bool


@dataclass(frozen=True)
class DutyCycle:
    """Transmissions per hour, on-time in the worst 1 h window (s) and duty cycle (%)."""

    airtime_us: float
    interval_s: float
    transmissions_per_hour: float
    on_time_per_hour_s: float
    duty_cycle_pct: float


@dataclass(frozen=True)
class Collisions:
    """Pure-ALOHA odds for one report among ``n_nodes`` unsynchronised nodes.

    offered_load: G = N R T / I (all nodes, frames per frame time); throughput = G exp(-2G);
    others_load: G' = (N-1) R T / I (the other nodes' load, what one frame meets);
    p_frame_ok: exact P(one copy survives); p_frame_ok_poisson: exp(-2 G');
    p_report_ok: exact P(at least one of the R copies survives); p_report_ok_independent:
    1 - (1 - p_frame_ok)^R (copies assumed lost independently, optimistic);
    expected_deliveries: R p_frame_ok (copies received per report).
    """

    n_nodes: int
    frame_us: float
    repeats: int
    spacing_us: float
    interval_s: float
    offered_load: float
    others_load: float
    p_frame_ok: float
    p_frame_ok_poisson: float
    throughput: float
    p_report_ok: float
    p_report_ok_independent: float
    expected_deliveries: float


@dataclass(frozen=True)
class Energy:
    """Transmit energy (µJ per transmission, J per day), charge and battery-life estimate."""

    mark_us: float
    tx_current_ma: float
    supply_v: float
    interval_s: float
    energy_per_tx_uj: float
    energy_per_day_j: float
    charge_per_day_mah: float
    mean_current_ua: float
    battery_mah: float | None
    battery_life_days: float | None
    ignores: tuple[str, ...] = ENERGY_IGNORES


@dataclass(frozen=True)
class AirtimeReport:
    """Everything ``ookframe airtime`` reports (regions: name -> findings)."""

    timing: TxTiming
    duty: DutyCycle
    regions: dict[str, list[Finding]]
    collisions: Collisions
    energy: Energy
    rf_bandwidth_hz: float | None


def max_frame_us(spec: FrameSpec | FramePlan) -> float:
    """Return an upper bound in µs on one frame's duration over all payloads.

    From the exact worst-case chip count of :func:`.linecode_stats.frame_stats` (longest
    bytes field, stuffing and data-dependent symbol lengths included).
    """
    return _max_frame_us(spec_of(spec))


@lru_cache(maxsize=64)
def _max_frame_us(spec: FrameSpec) -> float:
    return frame_stats(spec).max_frame_chips * spec.unit_us


def max_airtime_us(spec: FrameSpec | FramePlan) -> float:
    """Return an upper bound in µs on one transmission (repeats + gaps) over all payloads."""
    spec = spec_of(spec)
    return max_frame_us(spec) * spec.repeats + spec.gap_us * (spec.repeats - 1)


def tx_timing(spec: FrameSpec | FramePlan, rng: np.random.Generator,
              n_frames: int = MEAN_FRAMES) -> TxTiming:
    """Return mean frame, airtime and mark time over ``n_frames`` random payloads, plus bounds."""
    plan = as_plan(spec)
    spec = plan.spec
    chips = chip_stream(plan, rng, n_frames)
    frame_us = chips.size / n_frames * spec.unit_us
    mark_us = float(chips.sum()) / n_frames * spec.unit_us * spec.repeats
    max_f = max_frame_us(spec)
    gaps_us = spec.gap_us * (spec.repeats - 1)
    return TxTiming(frame_us=frame_us, airtime_us=frame_us * spec.repeats + gaps_us,
                    mark_us=mark_us, max_frame_us=max_f, max_airtime_us=max_airtime_us(spec),
                    repeats=spec.repeats, gap_us=spec.gap_us,
                    data_dependent=not math.isclose(frame_us, max_f, rel_tol=1e-12))


def duty_cycle(airtime_us: float, interval_s: float) -> DutyCycle:
    """Return transmissions per hour, worst 1 h on-time (s) and duty cycle (%) at an interval."""
    u = usage(airtime_us, interval_s)
    return DutyCycle(airtime_us=u.airtime_us, interval_s=u.interval_s,
                     transmissions_per_hour=3600.0 / u.interval_s,
                     on_time_per_hour_s=u.on_time_per_hour_s, duty_cycle_pct=u.duty_cycle_pct)


def aloha_p_success(frame_us: float, interval_s: float, n_nodes: int) -> float:
    """Return P(a frame survives) against N-1 single-frame nodes: (1 - 2T/I)^(N-1), exact."""
    _check_nodes(n_nodes)
    x = 2.0 * frame_us * 1e-6 / interval_s
    return max(0.0, 1.0 - x) ** (n_nodes - 1)


def aloha_p_success_poisson(offered_load: float) -> float:
    """Return exp(-2G), the pure-ALOHA success probability of a frame that meets a load of G
    other frames per frame time (Poisson limit of many nodes)."""
    return math.exp(-2.0 * offered_load)


def aloha_throughput(offered_load: float) -> float:
    """Return S = G exp(-2G), pure-ALOHA throughput (successful frames per frame time)."""
    return offered_load * math.exp(-2.0 * offered_load)


def _check_nodes(n_nodes: int) -> None:
    if not (isinstance(n_nodes, int | np.integer) and n_nodes >= 1):
        raise ValueRangeError(f"nodes must be an integer >= 1, got {n_nodes}")


def _hit_cells(frame_s: float, spacing_s: float, repeats: int, interval_s: float
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Split one other node's phase circle [0, I) into arcs; return (length s, a, b) per arc.

    At phase delta (start of its burst relative to ours) that node's copy m overlaps our copy
    k iff |delta - d S| < T (circular) with d = k - m. A hit at d < 0 takes our first R - |d|
    copies, at d > 0 our last R - d, at d = 0 all: a / b are the prefix / suffix lengths hit.
    """
    r = repeats
    d = np.arange(-(r - 1), r)
    centres = (d * spacing_s) % interval_s
    cuts = np.concatenate(([0.0, interval_s], (centres - frame_s) % interval_s,
                           (centres + frame_s) % interval_s))
    cuts = np.unique(np.clip(cuts, 0.0, interval_s))
    lengths = np.diff(cuts)
    mid = cuts[:-1] + lengths / 2
    dist = np.abs((mid[:, None] - centres[None, :] + interval_s / 2) % interval_s - interval_s / 2)
    hit = dist < frame_s
    reach = r - np.abs(d)
    a = np.max(np.where(hit & (d < 0), reach, 0), axis=1)
    b = np.max(np.where(hit & (d > 0), reach, 0), axis=1)
    full = hit[:, r - 1]
    a = np.where(full, r, a)
    b = np.where(full, r, b)
    return lengths, a, b


def collisions(frame_us: float, repeats: int, gap_us: float, interval_s: float,
               n_nodes: int) -> Collisions:
    """Return pure-ALOHA collision odds for one report of ``repeats`` copies of a frame.

    Exact under the model of the module docstring: N-1 other nodes with the same frame
    length, repeats and interval, independent uniform phases. Our report fails when the
    copies hit by other nodes (each a prefix and/or a suffix of our copies) cover all R, so
    with n = N - 1 and G1(a, b) = P(one node hits at most a first and b last copies),
    P(report ok) = sum_a [G1(a, R-1-a)^n - G1(a-1, R-1-a)^n].
    """
    _check_nodes(n_nodes)
    if repeats < 1:
        raise ValueRangeError(f"repeats must be >= 1, got {repeats}")
    if not frame_us > 0 or gap_us < 0:
        raise ValueRangeError(f"frame_us must be > 0 and gap_us >= 0, got {frame_us}, {gap_us}")
    airtime_us = frame_us * repeats + gap_us * (repeats - 1)
    usage(airtime_us, interval_s)  # validates interval > airtime
    n = n_nodes - 1
    frame_s, spacing_s = frame_us * 1e-6, (frame_us + gap_us) * 1e-6
    lengths, a, b = _hit_cells(frame_s, spacing_s, repeats, interval_s)
    hist = np.zeros((repeats + 1, repeats + 1))
    np.add.at(hist, (a, b), lengths / interval_s)
    g1 = np.cumsum(np.cumsum(hist, axis=0), axis=1)  # g1[a, b] = P(A1 <= a, B1 <= b)
    g = np.clip(g1, 0.0, 1.0) ** n
    k = np.arange(repeats)
    beta = repeats - 1 - k
    below = np.where(k > 0, g[np.maximum(k - 1, 0), beta], 0.0)
    p_report = float(np.sum(g[k, beta] - below))
    # copy 0 survives a node that hits no prefix (a = 0, b < R); every copy is equally
    # exposed, its hit set being a translate of copy 0's
    p_copy = float(g[0, repeats - 1])
    load = n_nodes * repeats * frame_s / interval_s
    others = n * repeats * frame_s / interval_s
    return Collisions(n_nodes=n_nodes, frame_us=frame_us, repeats=repeats,
                      spacing_us=frame_us + gap_us, interval_s=interval_s, offered_load=load,
                      others_load=others, p_frame_ok=p_copy, p_frame_ok_poisson=aloha_p_success_poisson(others),
                      throughput=aloha_throughput(load), p_report_ok=min(1.0, p_report),
                      p_report_ok_independent=1.0 - (1.0 - p_copy) ** repeats,
                      expected_deliveries=repeats * p_copy)


def energy(mark_us: float, interval_s: float, tx_current_ma: float, supply_v: float,
           battery_mah: float | None = None) -> Energy:
    """Return transmit energy per transmission (µJ) and per day (J), and battery life (days).

    Battery life = capacity / transmit charge per day; see ``Energy.ignores`` for what
    the estimate leaves out (with them, real life is shorter, often much shorter).
    """
    for name, v in (("mark_us", mark_us), ("interval_s", interval_s),
                    ("tx_current_ma", tx_current_ma), ("supply_v", supply_v)):
        if not v > 0:
            raise ValueRangeError(f"{name} must be > 0, got {v}")
    if battery_mah is not None and not battery_mah > 0:
        raise ValueRangeError(f"battery_mah must be > 0, got {battery_mah}")
    mark_s = mark_us * 1e-6
    per_day = 86400.0 / interval_s
    e_tx_j = mark_s * tx_current_ma * 1e-3 * supply_v
    charge_day_mah = mark_s * tx_current_ma * per_day / 3600.0
    life = None if battery_mah is None else battery_mah / charge_day_mah
    return Energy(mark_us=mark_us, tx_current_ma=tx_current_ma, supply_v=supply_v,
                  interval_s=interval_s, energy_per_tx_uj=e_tx_j * 1e6,
                  energy_per_day_j=e_tx_j * per_day, charge_per_day_mah=charge_day_mah,
                  mean_current_ua=charge_day_mah / 24.0 * 1000.0, battery_mah=battery_mah,
                  battery_life_days=life)


def airtime_report(spec: FrameSpec | FramePlan, interval_s: float, rng: np.random.Generator, *,
                   n_nodes: int = 1, regions: tuple[str, ...] = tuple(REGIONS),
                   power_mw: float | None = None, rf_bandwidth_hz: float | None = None,
                   tx_current_ma: float = TYPICAL_TX_CURRENT_MA,
                   supply_v: float = TYPICAL_SUPPLY_V,
                   battery_mah: float | None = None,
                   carrier_hz: float | None = None) -> AirtimeReport:
    """Return timing, duty cycle, region findings, collision odds and energy for a spec.

    Duty cycle and region rules use the upper-bound airtime (conservative); collisions and
    energy use means over random payloads (expected values). ``power_mw`` (e.r.p.),
    ``rf_bandwidth_hz`` and ``carrier_hz`` feed the region rules; rules needing one that is
    not given are reported as not assessed.
    """
    spec = spec_of(spec)
    timing = tx_timing(spec, rng)
    duty = duty_cycle(timing.max_airtime_us, interval_s)
    found = {r: check_region(r, timing.max_airtime_us, interval_s, power_mw,
                             rf_bandwidth_hz=rf_bandwidth_hz, carrier_hz=carrier_hz)
             for r in regions}
    coll = collisions(timing.frame_us, spec.repeats, spec.gap_us, interval_s, n_nodes)
    en = energy(timing.mark_us, interval_s, tx_current_ma, supply_v, battery_mah)
    return AirtimeReport(timing, duty, found, coll, en, rf_bandwidth_hz)


def cautions(spec: FrameSpec | FramePlan) -> list[str]:
    """Return notes on how the airtime and bandwidth figures were estimated (shown after the
    regulatory caution, which callers print first)."""
    notes = ["Region rules are transcribed from memory and simplified: verify each clause "
             "against the current edition of the regulation."]
    if not math.isclose(max_frame_us(spec), _fixed_frame_us(spec)):
        notes.append("Frame length depends on the payload: duty-cycle and rule checks use the "
                     f"longest possible transmission ({max_airtime_us(spec) / 1000:.2f} ms, an "
                     "upper bound).")
    notes.append("Bandwidth is for ideal rectangular keying; real transmitter edges are slower "
                 "and the spectrum narrower. Measure the transmitter.")
    return notes


def _fixed_frame_us(spec: FrameSpec | FramePlan) -> float:
    """Shortest frame in µs (empty bytes field, every body bit at its shorter symbol)."""
    plan = as_plan(spec)
    lc = plan.line_code
    return min(lc.encode(np.concatenate((plan.head_bits, np.full(plan.min_body_bits, v, np.uint8)))
                         ).size for v in (0, 1)) * plan.unit_us
