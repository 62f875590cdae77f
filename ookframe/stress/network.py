"""Several sensors on one receiver: N senders' transmissions merged at the carrier, decoded.

Each node sends one *update* every ``interval_s`` (its own clock: the interval and every
pulse are scaled by ``1 + clock error``; optional uniform jitter of +-``interval_jitter``
of the interval), each update ``repeats`` copies of one frame carrying the node's own
value of the id field and random readings. All nodes start at independent uniform
phases. The receiver sees the union of every carrier that is on, with capture: during a
frame at least ``capture_db`` stronger, a weaker carrier is invisible
(:mod:`ookframe.channel.carriers`). The merged train goes through an optional channel
model and the reference decoder; a decoded frame counts for the copy it starts at when
its check passes and its payload is the one sent.

The simulated time runs in chunks cut where nobody is on air, so decoding chunk by chunk
equals decoding the whole capture; within a chunk idle stretches longer than
``compact_gap_us`` are shortened to it before the channel and the decoder (nothing is on
air there, so nothing changes; with idle noise the receiver still hears noise before every
burst), and decoded times are mapped back.

The exact pure-ALOHA figure of :func:`ookframe.analysis.airtime.collisions` (what
``ookframe airtime`` prints) is the reference: it assumes equal frames, random phases
and no capture. The run also counts the copies that no other node's frame overlapped in
time ("clear", the event that figure is about), so a difference between the decoded
delivery and the figure splits into the collision model and the decoder.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from .. import batch as _batch
from .._require import require, require_spec
from ..analysis.airtime import Collisions, collisions, max_frame_us, tx_timing
from ..channel import ChannelSpec, apply_channel, channel_time_map_us
from ..channel.carriers import marks_to_train, union_intervals, visible_marks
from ..decode import decode
from ..decode.framer import stream_span_us
from ..errors import ValueRangeError, excerpt
from ..intervals import clopper_pearson
from ..plan import FramePlan, as_plan, spec_of
from ..pulses import PulseTrain
from ..spec.model import FieldSpec, FrameSpec

#: clock error of a crystal-clocked sender, +- ppm (common practice, no source)
CRYSTAL_PPM = 100.0
#: clock error of a sender on an uncalibrated RC oscillator, +- ppm (2 %; common practice,
#: no source)
RC_PPM = 20000.0
CLOCKS: dict[str, float] = {"crystal": CRYSTAL_PPM, "rc": RC_PPM, "exact": 0.0}
#: power difference above which the stronger carrier captures the receiver, dB (common
#: practice, no source)
CAPTURE_DB = 6.0
#: received power range the nodes are drawn from by default (uniform in dBm: senders at
#: different distances), dBm
DEFAULT_POWER_RANGE_DBM = (-85.0, -55.0)
#: simulated seconds per chunk (cut at the next moment nobody is on air)
DEFAULT_CHUNK_S = 600.0
#: name parts that mark a field as a node's address / channel / id, best first
ID_WORDS: tuple[tuple[str, ...], ...] = (
    ("id", "addr", "address", "channel", "node", "serial", "sn"),
    ("sensor", "station", "device", "unit", "zone", "room", "hive", "probe", "tank", "vent",
     "gate", "house"),
)
#: seconds per day
DAY_S = 86400.0

Progress = Callable[[float], None]
#: decoder called on each chunk's merged train: (spec, train) -> frames with start_us,
#: end_us, crc_ok and payload_hex (the reference decoder, bad checks included, by default)
Decoder = Callable[[FrameSpec, PulseTrain], Sequence]


def reference_decoder(spec: FrameSpec, train: PulseTrain) -> list:
    """The reference decoder as network runs call it (frames with a bad check included)."""
    return decode(spec, train, include_bad=True)


@dataclass(frozen=True)
class NetworkConfig:
    """One network run (validated at construction).

    n_nodes senders, one update every ``interval_s`` each, for ``hours`` of simulated time.
    repeats: copies per update (None: the spec's). id_field: the field holding each node's
    own value (None: :func:`pick_id_field`; "" for none: the nodes differ only in their
    readings). id_values: raw id per node (None: 1, 2, ... or from the field's minimum).
    clock_ppm: every node's clock error drawn uniform in +-clock_ppm. interval_jitter: each
    interval scaled by 1 + U(-j, j). power_range_dbm: received power per node drawn uniform
    in [lo, hi] dBm, unless ``node_power_dbm`` gives one per node. capture_db: capture
    threshold (inf: no capture). channel: applied to the merged train (receiver and link).
    """

    n_nodes: int
    interval_s: float
    hours: float
    repeats: int | None = None
    id_field: str | None = None
    id_values: tuple[int, ...] | None = None
    clock_ppm: float = RC_PPM
    interval_jitter: float = 0.0
    power_range_dbm: tuple[float, float] = DEFAULT_POWER_RANGE_DBM
    node_power_dbm: tuple[float, ...] | None = None
    capture_db: float = CAPTURE_DB
    channel: ChannelSpec = field(default_factory=ChannelSpec)
    chunk_s: float = DEFAULT_CHUNK_S
    seed: int = 0

    def __post_init__(self) -> None:
        _int_at_least(self.n_nodes, "nodes", 1)
        _number(self.interval_s, "interval_s", lo=0.0, lo_open=True)
        _number(self.hours, "hours", lo=0.0, lo_open=True)
        if self.repeats is not None:
            _int_at_least(self.repeats, "repeats", 1)
        _number(self.clock_ppm, "clock_ppm", lo=0.0, hi=100000.0)
        _number(self.interval_jitter, "interval_jitter", lo=0.0, hi=0.5, hi_open=True)
        lo, hi = (_number(v, "power_range_dbm", lo=-200.0, hi=60.0) for v in self.power_range_dbm)
        if lo > hi:
            raise ValueRangeError(f"power_range_dbm: low end {lo:g} is above high end {hi:g}")
        if self.node_power_dbm is not None:
            if len(self.node_power_dbm) != self.n_nodes:
                raise ValueRangeError(f"node_power_dbm: {len(self.node_power_dbm)} values for "
                                      f"{self.n_nodes} nodes; give one per node")
            for v in self.node_power_dbm:
                _number(v, "node_power_dbm", lo=-200.0, hi=60.0)
        if self.id_values is not None and len(self.id_values) != self.n_nodes:
            raise ValueRangeError(f"id_values: {len(self.id_values)} values for {self.n_nodes} "
                                  "nodes; give one per node")
        if isinstance(self.capture_db, bool) or not (isinstance(self.capture_db, int | float)
                                                     and self.capture_db > 0):
            raise ValueRangeError(f"capture_db must be > 0 (inf: no capture), got "
                                  f"{excerpt(self.capture_db)}")
        require(self.channel, ChannelSpec, "channel", "e.g. ookframe.get_preset('ideal')")
        _number(self.chunk_s, "chunk_s", lo=1.0, hi=1e6)
        _int_at_least(self.seed, "seed", 0)

    def to_dict(self) -> dict[str, object]:
        d = asdict(self)
        d["channel"] = self.channel.to_dict()
        return d


def _int_at_least(v: object, name: str, lo: int) -> int:
    if isinstance(v, bool) or not isinstance(v, int | np.integer) or v < lo:
        raise ValueRangeError(f"{name} must be an integer >= {lo}, got {excerpt(v)}")
    return int(v)


def _number(v: object, name: str, *, lo: float = -math.inf, hi: float = math.inf,
            lo_open: bool = False, hi_open: bool = False) -> float:
    ok = (not isinstance(v, bool) and isinstance(v, int | float | np.floating)
          and math.isfinite(v) and (v > lo if lo_open else v >= lo)
          and (v < hi if hi_open else v <= hi))
    if not ok:
        rng = f"{'(' if lo_open else '['}{lo:g}, {hi:g}{')' if hi_open else ']'}"
        raise ValueRangeError(f"{name} must be a finite number in {rng}, got {excerpt(v)}")
    return float(v)  # type: ignore[arg-type]


@dataclass(frozen=True)
class Node:
    """One sender: its index, raw id value (None without an id field), clock error
    (fraction: +1e-4 = every pulse and interval 100 ppm longer), received power (dBm) and
    the time of its first transmission (s)."""

    index: int
    id_value: int | None
    clock_error: float
    rx_power_dbm: float
    first_s: float


@dataclass(frozen=True)
class NodeResult:
    """Delivery of one node. updates: sent; delivered: with >= 1 good copy decoded;
    delivery_ci95: Clopper-Pearson; lost_per_day: (updates - delivered) per simulated day;
    clear: updates with >= 1 copy no other frame overlapped; latency: from the start of an
    update to the end of its first good copy, ms (delivered updates only); longest_outage:
    most consecutive lost updates."""

    index: int
    id_value: int | None
    clock_error_ppm: float
    rx_power_dbm: float
    updates: int
    delivered: int
    delivery: float
    delivery_ci95: tuple[float, float]
    lost_per_day: float
    lost_per_day_ci95: tuple[float, float]
    clear: int
    latency_ms_mean: float | None
    latency_ms_p95: float | None
    latency_ms_max: float | None
    longest_outage: int


@dataclass(frozen=True)
class AlohaComparison:
    """The exact pure-ALOHA figure against the run: ``p_report_ok`` and the lost updates per
    node and day it implies; pooled simulated delivery (decoded, and "clear": the
    collision event alone) with 95 % Clopper-Pearson intervals and whether each holds the
    figure."""

    collisions: Collisions
    p_report_ok: float
    lost_per_node_day: float
    delivery: float
    delivery_ci95: tuple[float, float]
    delivery_agrees: bool
    clear: float
    clear_ci95: tuple[float, float]
    clear_agrees: bool


@dataclass(frozen=True)
class NetworkResult:
    """Outcome of :func:`run_network` (per node and pooled; see :class:`NodeResult`).

    frame_us / airtime_us: mean frame and transmission (random payloads, as ``airtime``);
    clear_with_capture: updates with >= 1 copy that every overlapping frame is at least
    ``capture_db`` weaker than (what capture should deliver); copies / copies_clear /
    copies_ok: frames sent, frames no other frame overlapped, frames decoded right; false_frames: decoded frames with a passing check whose payload
    was not sent at that time (two frames mixed, or noise); bad_check: decoded frames whose
    check failed; id_field: the field telling the nodes apart ("" for none).
    """

    spec_name: str
    config: NetworkConfig
    repeats: int
    gap_us: float
    id_field: str
    frame_us: float
    airtime_us: float
    simulated_s: float
    nodes: tuple[NodeResult, ...]
    updates: int
    delivered: int
    delivery: float
    delivery_ci95: tuple[float, float]
    lost_per_node_day: float
    latency_ms_mean: float | None
    latency_ms_p95: float | None
    clear_with_capture: int
    copies: int
    copies_clear: int
    copies_ok: int
    false_frames: int
    bad_check: int
    pulses: int
    aloha: AlohaComparison
    elapsed_s: float = field(compare=False)
    simulated_hours_per_s: float = field(compare=False)

    def to_dict(self) -> dict[str, object]:
        """Return the result as a JSON-ready dict."""
        d = {k: getattr(self, k) for k in self.__dataclass_fields__}
        d["config"] = self.config.to_dict()
        d["nodes"] = [asdict(n) for n in self.nodes]
        d["aloha"] = {**asdict(self.aloha), "collisions": asdict(self.aloha.collisions)}
        return d


def pick_id_field(spec: FrameSpec | FramePlan) -> str | None:
    """Return the name of the field that looks like a node's address / channel / id (an
    unscaled int field whose name has one of ``ID_WORDS``, the first list first), or None."""
    fields = [f for f in spec_of(spec).fields if f.kind == "int" and f.role == "value"
              and not f.is_scaled and not f.unit]
    for words in ID_WORDS:
        for f in fields:
            if set(f.name.lower().split("_")) & set(words):
                return f.name
    return None


def _id_field(spec: FrameSpec, cfg: NetworkConfig) -> FieldSpec | None:
    name = pick_id_field(spec) if cfg.id_field is None else cfg.id_field
    if not name:
        return None
    try:
        f = spec.field(name)
    except KeyError:
        raise ValueRangeError(f"id field {excerpt(name)} is not a field of '{spec.name}'; "
                              f"fields: {', '.join(f.name for f in spec.fields)}") from None
    if f.kind != "int" or f.role != "value":
        raise ValueRangeError(f"id field '{name}' must be an integer value field (it is "
                              f"{'the length field' if f.role == 'length' else 'a bytes field'})")
    return f


def _id_values(f: FieldSpec | None, cfg: NetworkConfig) -> list[int | None]:
    if f is None:
        return [None] * cfg.n_nodes
    span = f.raw_max - f.raw_min + 1
    if cfg.id_values is not None:
        bad = [v for v in cfg.id_values if not f.raw_min <= v <= f.raw_max]
        if bad:
            raise ValueRangeError(f"id value {excerpt(bad[0])} does not fit field '{f.name}' "
                                  f"(raw {f.raw_min}..{f.raw_max})")
        return list(cfg.id_values)
    if span < cfg.n_nodes:
        raise ValueRangeError(f"id field '{f.name}' holds {span} values, fewer than the "
                              f"{cfg.n_nodes} nodes; pick another --id-field or fewer nodes")
    first = 1 if f.raw_min <= 1 and f.raw_max >= cfg.n_nodes else f.raw_min
    return [first + i for i in range(cfg.n_nodes)]


def draw_nodes(cfg: NetworkConfig, id_values: Sequence[int | None], rng: np.random.Generator
               ) -> tuple[Node, ...]:
    """Return the nodes: clock error uniform in +-clock_ppm, power, first-transmission phase
    uniform over one interval."""
    n = cfg.n_nodes
    clock = rng.uniform(-cfg.clock_ppm, cfg.clock_ppm, n) * 1e-6
    if cfg.node_power_dbm is not None:
        power = np.asarray(cfg.node_power_dbm, np.float64)
    else:
        power = rng.uniform(*cfg.power_range_dbm, n)
    first = rng.uniform(0.0, cfg.interval_s, n)
    return tuple(Node(i, id_values[i], float(clock[i]), float(power[i]), float(first[i]))
                 for i in range(n))


def schedule(nodes: Sequence[Node], cfg: NetworkConfig, horizon_s: float,
             rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Return (node index, start s) of every transmission starting before ``horizon_s``,
    in time order: intervals ``interval_s (1 + clock error)(1 + U(-j, j))`` per node."""
    j = cfg.interval_jitter
    node_ix, starts = [], []
    for nd in nodes:
        mean = cfg.interval_s * (1.0 + nd.clock_error)
        k = int(math.ceil((horizon_s - nd.first_s) / (mean * (1.0 - j)))) + 1
        steps = mean * (1.0 + rng.uniform(-j, j, k)) if j else np.full(k, mean)
        t = nd.first_s + np.concatenate(([0.0], np.cumsum(steps)))
        t = t[t < horizon_s]
        starts.append(t)
        node_ix.append(np.full(t.size, nd.index, np.int64))
    s = np.concatenate(starts)
    ix = np.concatenate(node_ix)
    order = np.argsort(s, kind="stable")
    return ix[order], s[order]


def chunk_bounds(starts_s: np.ndarray, ends_s: np.ndarray, chunk_s: float) -> np.ndarray:
    """Return transmission indices where chunks begin (0 first): every cut falls after
    about ``chunk_s`` of simulated time, where no transmission is on air."""
    if starts_s.size == 0:
        return np.zeros(1, np.int64)
    reach = np.maximum.accumulate(ends_s)
    free = np.flatnonzero(starts_s[1:] > reach[:-1]) + 1  # tx k starts after all before ended
    if free.size == 0:
        return np.zeros(1, np.int64)
    targets = np.arange(chunk_s, starts_s[-1], chunk_s)
    pick = free[np.minimum(np.searchsorted(starts_s[free], targets), free.size - 1)]
    return np.unique(np.concatenate(([0], pick)))


@dataclass(frozen=True, eq=False)
class _ChunkOut:
    """Per transmission of a chunk: delivered, latency µs (nan: not delivered), >= 1 clear
    copy, >= 1 copy that every overlapping frame is ``capture_db`` weaker than; counters."""

    delivered: np.ndarray
    latency_us: np.ndarray
    clear: np.ndarray
    captured: np.ndarray
    copies_clear: int
    copies_ok: int
    false_frames: int
    bad_check: int
    pulses: int


def _frame_marks(rows: np.ndarray | list[np.ndarray]) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return (frame index, first chip, end chip of every mark; chips per frame)."""
    if isinstance(rows, np.ndarray) and rows.ndim == 2:
        m = rows.astype(np.int8)
        lens = np.full(m.shape[0], m.shape[1], np.int64)
    else:
        lens = np.array([r.size for r in rows], np.int64)
        m = np.zeros((len(rows), int(lens.max(initial=0))), np.int8)
        if lens.sum():
            m[np.arange(m.shape[1]) < lens[:, None]] = np.concatenate(rows)
    pad = np.zeros((m.shape[0], m.shape[1] + 2), np.int8)
    pad[:, 1:-1] = m
    d = np.diff(pad, axis=1)
    f_up, c_up = np.nonzero(d == 1)
    _, c_down = np.nonzero(d == -1)
    return f_up, c_up, c_down, lens


def _overlaps(cs: np.ndarray, ce: np.ndarray, cnode: np.ndarray, cpow: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray]:
    """Return per copy (sorted by start): overlapped by another node's copy; strongest
    power among those (-inf: none)."""
    n = cs.size
    hit = np.zeros(n, bool)
    strongest = np.full(n, -np.inf)
    idx = np.arange(n)
    step = 1
    while True:
        j = idx[:-step] + step if step < n else idx[:0]
        i = idx[:-step] if step < n else idx[:0]
        ov = cs[j] < ce[i]
        if not ov.any():
            break
        i, j = i[ov], j[ov]
        other = cnode[i] != cnode[j]
        i, j = i[other], j[other]
        hit[i] = True
        hit[j] = True
        np.maximum.at(strongest, i, cpow[j])
        np.maximum.at(strongest, j, cpow[i])
        step += 1
    return hit, strongest


def _run_chunk(plan: FramePlan, cfg: NetworkConfig, nodes: Sequence[Node],
               id_name: str | None, tx_node: np.ndarray, tx_start_us: np.ndarray,
               rng: np.random.Generator, decoder: Decoder) -> _ChunkOut:
    """Simulate the transmissions of one chunk (nobody on air at its ends)."""
    spec = plan.spec
    unit, gap, r = plan.unit_us, plan.gap_us, plan.repeats
    n = tx_node.size
    scale = 1.0 + np.array([nd.clock_error for nd in nodes])[tx_node]
    power = np.array([nd.rx_power_dbm for nd in nodes])[tx_node]
    raws = _batch.random_raw_batch(plan, n, rng)
    if id_name is not None:
        ids = np.array([nd.id_value for nd in nodes], np.int64)[tx_node]
        raws[id_name] = ids
    enc = _batch.encode_bits(plan, raws)
    rows = _batch.frame_chips_batch(plan, _batch.frame_bits_of(plan, enc))
    payload = enc.payload_hex()
    mf, mc0, mc1, lens = _frame_marks(rows)
    frame_us = lens * unit * scale  # per transmission
    step_us = frame_us + gap * scale
    copy_k = np.arange(r)
    cs = (tx_start_us[:, None] + copy_k[None, :] * step_us[:, None]).ravel()
    ce = cs + np.repeat(frame_us, r)
    ctx = np.repeat(np.arange(n), r)
    cnode = tx_node[ctx]
    cpow = power[ctx]
    # every mark of every copy
    base = (tx_start_us[mf][None, :] + copy_k[:, None] * step_us[mf][None, :])
    ms = (base + (mc0 * unit * scale[mf])[None, :]).ravel()
    me = (base + (mc1 * unit * scale[mf])[None, :]).ravel()
    mpow = np.tile(power[mf], r)
    vs, ve = visible_marks(ms, me, mpow, cs, ce, cpow, cfg.capture_db)
    # clear copies (time overlap alone), and what capture leaves
    order = np.argsort(cs, kind="stable")
    hit, strongest = _overlaps(cs[order], ce[order], cnode[order], cpow[order])
    clear_copy = np.empty(cs.size, bool)
    clear_copy[order] = ~hit
    clear_tx = clear_copy.reshape(n, r).any(axis=1)
    capt_copy = np.empty(cs.size, bool)
    capt_copy[order] = cpow[order] - strongest >= cfg.capture_db  # -inf: none overlapped
    capt_tx = capt_copy.reshape(n, r).any(axis=1)
    frames = _decode_merged(spec, cfg, vs, ve, rng, decoder)
    pulses = frames[1]
    # match decoded frames to copies: nearest start within a quarter frame, same payload
    cs_sorted = cs[order]
    tol = 0.25 * float(frame_us.min())
    latency = np.full(n, np.inf)
    ok_copy = np.zeros(cs.size, bool)
    false_frames = bad = 0
    for start, end, crc_ok, hexp in frames[0]:
        if not crc_ok:
            bad += 1
            continue
        lo = int(np.searchsorted(cs_sorted, start - tol))
        hi = int(np.searchsorted(cs_sorted, start + tol, side="right"))
        best = -1
        for k in range(lo, hi):
            c = int(order[k])
            if payload[ctx[c]] == hexp and (best < 0 or abs(cs[c] - start) < abs(cs[best] - start)):
                best = c
        if best < 0:
            false_frames += 1
            continue
        ok_copy[best] = True
        t = ctx[best]
        latency[t] = min(latency[t], end - tx_start_us[t])
    delivered = np.isfinite(latency)
    return _ChunkOut(delivered, np.where(delivered, latency, np.nan), clear_tx, capt_tx,
                     int(clear_copy.sum()), int(ok_copy.sum()), false_frames, bad, pulses)


def compact_gap_us(spec: FrameSpec, channel: ChannelSpec) -> float:
    """Return the longest idle stretch kept as it is in a chunk's train, µs: longer than a
    frame's decoding span, the repeat gap and the idle receiver's quiet time, so that
    shortening longer ones changes no decision."""
    return max(2.0 * stream_span_us(spec), 4.0 * spec.gap_us, 4.0 * channel.idle_quiet_us,
               50_000.0)


def _decode_merged(spec: FrameSpec, cfg: NetworkConfig, vs: np.ndarray, ve: np.ndarray,
                   rng: np.random.Generator, decoder: Decoder) -> tuple[list[tuple[float, float, bool, str]], int]:
    """Decode the receiver output of the visible marks; return ((start, end, check ok,
    payload hex) per decoded frame in real time µs, pulses decoded)."""
    s, e = union_intervals(vs, ve)
    if s.size == 0:
        return [], 0
    keep = compact_gap_us(spec, cfg.channel)
    gaps = s[1:] - e[:-1]
    cut = np.concatenate(([0.0], np.maximum(gaps - keep, 0.0)))
    shift = np.cumsum(cut) + (s[0] - keep)  # compacted = real - shift
    new_cluster = np.concatenate(([True], gaps > keep))
    first = np.flatnonzero(new_cluster)
    cs_real = s[first]
    cs_c = cs_real - shift[first]
    train = marks_to_train(s - shift, e - shift, 0.0, float(e[-1] - shift[-1]) + keep)
    ch = cfg.channel
    if not ch.is_ideal:
        train = apply_channel(train, ch, rng, burst_starts_us=cs_c)
        mapped = channel_time_map_us(cs_c, ch, cs_c)
        bounds = channel_time_map_us(cs_c - keep / 2, ch, cs_c)
        rate = 1.0 + ch.clock_error_pct / 100.0
    else:
        mapped, bounds, rate = cs_c, cs_c - keep / 2, 1.0
    out = []
    for f in decoder(spec, train):
        c = max(int(np.searchsorted(bounds, f.start_us, side="right")) - 1, 0)
        t0 = cs_real[c] + (f.start_us - mapped[c]) / rate
        t1 = cs_real[c] + (f.end_us - mapped[c]) / rate
        out.append((t0, t1, f.crc_ok, f.payload_hex))
    return out, len(train)


def _longest_run(lost: np.ndarray) -> int:
    """Return the longest run of True in a bool array."""
    if not lost.any():
        return 0
    x = np.concatenate(([0], lost.astype(np.int8), [0]))
    d = np.diff(x)
    return int((np.flatnonzero(d == -1) - np.flatnonzero(d == 1)).max())


def _latency_stats(lat_us: np.ndarray) -> tuple[float | None, float | None, float | None]:
    v = lat_us[np.isfinite(lat_us)]
    if v.size == 0:
        return None, None, None
    return (float(v.mean() / 1000), float(np.percentile(v, 95) / 1000), float(v.max() / 1000))


def _per_day_ci(lost: int, updates: int, per_day: float) -> tuple[float, float]:
    lo, hi = clopper_pearson(lost, updates)
    return lo * per_day, hi * per_day


def network_spec(spec: FrameSpec | FramePlan, repeats: int | None) -> FrameSpec:
    """Return the spec with ``repeats`` copies per transmission (None: unchanged)."""
    s = spec_of(spec)
    return s if repeats is None or repeats == s.repeats else replace(s, repeats=repeats)


def aloha_reference(spec: FrameSpec | FramePlan, interval_s: float, n_nodes: int
                    ) -> tuple[Collisions, float]:
    """Return (the exact pure-ALOHA odds ``ookframe airtime`` prints for this spec, interval
    and node count, the mean frame µs they use)."""
    from ..analysis.airtime import TIMING_SEED

    s = spec_of(spec)
    frame_us = tx_timing(s, np.random.default_rng(TIMING_SEED)).frame_us
    return collisions(frame_us, s.repeats, s.gap_us, interval_s, n_nodes), frame_us


def run_network(spec: FrameSpec | FramePlan, cfg: NetworkConfig, *,
                progress: Progress | None = None, decoder: Decoder | None = None
                ) -> NetworkResult:
    """Return the delivery of ``cfg.n_nodes`` nodes sharing one receiver (module docstring).

    ``progress(s)`` is called after each chunk with the simulated seconds it covered;
    ``decoder`` replaces the reference decoder (:data:`Decoder`). Same spec and config ->
    same result.
    """
    require_spec(spec, "spec")
    require(cfg, NetworkConfig, "cfg", "e.g. NetworkConfig(n_nodes=2, interval_s=60, hours=1)")
    t_wall = time.perf_counter()
    s = network_spec(spec, cfg.repeats)
    plan = as_plan(s)
    id_f = _id_field(s, cfg)
    ids = _id_values(id_f, cfg)
    coll, frame_us = aloha_reference(s, cfg.interval_s, cfg.n_nodes)  # validates interval
    seeds = np.random.SeedSequence(cfg.seed)
    node_seq, sched_seq, chunk_seq = seeds.spawn(3)
    nodes = draw_nodes(cfg, ids, np.random.default_rng(node_seq))
    horizon_s = cfg.hours * 3600.0
    tx_node, tx_s = schedule(nodes, cfg, horizon_s, np.random.default_rng(sched_seq))
    max_tx_s = (max_frame_us(s) * s.repeats + s.gap_us * (s.repeats - 1)) * 1e-6
    slow = 1.0 + cfg.clock_ppm * 1e-6
    bounds = chunk_bounds(tx_s, tx_s + max_tx_s * slow, cfg.chunk_s)
    edges = np.append(bounds, tx_s.size)
    n_tx = tx_s.size
    delivered = np.zeros(n_tx, bool)
    latency = np.full(n_tx, np.nan)
    clear = np.zeros(n_tx, bool)
    captured = np.zeros(n_tx, bool)
    tally = dict(copies_clear=0, copies_ok=0, false_frames=0, bad_check=0, pulses=0)
    done_s = 0.0
    for (a, b), q in zip(zip(edges[:-1], edges[1:], strict=True),
                         chunk_seq.spawn(edges.size - 1), strict=True):
        if b > a:
            o = _run_chunk(plan, cfg, nodes, None if id_f is None else id_f.name,
                           tx_node[a:b], tx_s[a:b] * 1e6, np.random.default_rng(q),
                           decoder or reference_decoder)
            delivered[a:b], latency[a:b] = o.delivered, o.latency_us
            clear[a:b], captured[a:b] = o.clear, o.captured
            for k in tally:
                tally[k] += getattr(o, k)
        if progress is not None:
            upto = horizon_s if b >= n_tx else float(tx_s[b])
            progress(upto - done_s)
            done_s = upto
    per_day = DAY_S / horizon_s
    node_results = []
    for nd in nodes:
        mine = tx_node == nd.index
        k, got = int(mine.sum()), int(delivered[mine].sum())
        lat = _latency_stats(latency[mine])
        node_results.append(NodeResult(
            index=nd.index, id_value=nd.id_value, clock_error_ppm=nd.clock_error * 1e6,
            rx_power_dbm=nd.rx_power_dbm, updates=k, delivered=got,
            delivery=got / k if k else 0.0, delivery_ci95=clopper_pearson(got, k),
            lost_per_day=(k - got) * per_day, lost_per_day_ci95=_per_day_ci(k - got, k, per_day * k),
            clear=int(clear[mine].sum()), latency_ms_mean=lat[0], latency_ms_p95=lat[1],
            latency_ms_max=lat[2], longest_outage=_longest_run(~delivered[mine])))
    got = int(delivered.sum())
    n_clear = int(clear.sum())
    ci = clopper_pearson(got, n_tx)
    ci_clear = clopper_pearson(n_clear, n_tx)
    p = coll.p_report_ok
    aloha = AlohaComparison(
        collisions=coll, p_report_ok=p, lost_per_node_day=(1.0 - p) * DAY_S / cfg.interval_s,
        delivery=got / n_tx if n_tx else 0.0, delivery_ci95=ci,
        delivery_agrees=ci[0] <= p <= ci[1], clear=n_clear / n_tx if n_tx else 0.0,
        clear_ci95=ci_clear, clear_agrees=ci_clear[0] <= p <= ci_clear[1])
    lat_all = _latency_stats(latency)
    elapsed = time.perf_counter() - t_wall
    return NetworkResult(
        spec_name=s.name, config=cfg, repeats=s.repeats, gap_us=s.gap_us,
        id_field="" if id_f is None else id_f.name, frame_us=frame_us,
        airtime_us=frame_us * s.repeats + s.gap_us * (s.repeats - 1), simulated_s=horizon_s,
        nodes=tuple(node_results), updates=n_tx, delivered=got,
        delivery=got / n_tx if n_tx else 0.0, delivery_ci95=ci,
        lost_per_node_day=(n_tx - got) * per_day / cfg.n_nodes,
        latency_ms_mean=lat_all[0], latency_ms_p95=lat_all[1],
        clear_with_capture=int(captured.sum()), copies=n_tx * s.repeats, elapsed_s=elapsed,
        simulated_hours_per_s=cfg.hours / elapsed if elapsed > 0 else math.inf,
        aloha=aloha, **tally)
