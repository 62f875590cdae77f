"""Impairments as pure vectorised functions over pulse arrays; randomness via ``rng`` only.

Each public function takes ``(levels, durations_us, ...)`` and returns a new
``PulseTrain``. Internally a train is held as *edges*: the level of the first pulse, the
sorted times of the level changes (toggles, in µs from the train start) and the end
time. In that form every impairment is a few array operations: moving toggles, inserting
pairs of toggles (a pulse of the other level) and cancelling coincident ones (a pulse
of zero width vanishes and its neighbours merge).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..pulses import PulseTrain, merge_runs

DEFAULT_MIN_WIDTH_US = 0.5


@dataclass(frozen=True, eq=False)
class Edges:
    """A train as ``level0`` (level of the first pulse), ``t_us`` (sorted toggle times,
    strictly inside (0, end_us)) and ``end_us`` (total duration)."""

    level0: int
    t_us: np.ndarray
    end_us: float

    @staticmethod
    def from_arrays(levels: np.ndarray, durations_us: np.ndarray) -> Edges:
        """Return the edges of a pulse train given as arrays (equal neighbours merged)."""
        train = merge_runs(levels, durations_us)
        if len(train) == 0:
            return Edges(0, np.zeros(0), 0.0)
        ends = np.cumsum(train.durations_us)
        return Edges(int(train.levels[0]), ends[:-1].copy(), float(ends[-1]))

    def pulse_levels(self) -> np.ndarray:
        """Return the level (uint8) of each pulse."""
        return ((self.level0 + np.arange(self.t_us.size + 1)) & 1).astype(np.uint8)

    def to_train(self) -> PulseTrain:
        """Return the pulse train (levels, durations_us) of these edges."""
        if self.end_us <= 0:
            return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
        bounds = np.concatenate(([0.0], self.t_us, [self.end_us]))
        return PulseTrain(self.pulse_levels(), np.diff(bounds))


def _normalise(level0: int, t_us: np.ndarray, end_us: float) -> Edges:
    """Return edges with coincident toggles cancelled in pairs and toggles outside
    (0, end_us) removed (a toggle at or before 0 flips the first level instead).
    ``t_us`` must be sorted."""
    if t_us.size > 1:
        same = t_us[1:] == t_us[:-1]
        if same.any():
            starts = np.flatnonzero(np.concatenate(([True], ~same)))
            counts = np.diff(np.append(starts, t_us.size))
            t_us = t_us[starts[(counts & 1) == 1]]
    if t_us.size and (t_us[0] <= 0.0 or t_us[-1] >= end_us):
        before = int(np.count_nonzero(t_us <= 0.0))
        t_us = t_us[(t_us > 0.0) & (t_us < end_us)]
        level0 = (level0 + before) & 1
    return Edges(level0, t_us, end_us)


def _insert_sorted(t_us: np.ndarray, new_us: np.ndarray) -> np.ndarray:
    """Return the sorted merge of sorted ``t_us`` and sorted ``new_us`` (O(n + k log n))."""
    if new_us.size == 0:
        return t_us
    pos = np.searchsorted(t_us, new_us) + np.arange(new_us.size)
    out = np.empty(t_us.size + new_us.size)
    keep = np.ones(out.size, bool)
    keep[pos] = False
    out[pos] = new_us
    out[keep] = t_us
    return out


def _toggle_pairs(e: Edges, new_us: np.ndarray) -> Edges:
    """Return edges with extra toggles XOR-ed in (each pair flips the level between them)."""
    merged = _insert_sorted(e.t_us, np.sort(new_us))
    return _normalise(e.level0, merged, e.end_us)


def _min_width(e: Edges, min_width_us: float) -> Edges:
    """Return edges where no pulse is narrower than ``min_width_us`` (later edges pushed)."""
    t = e.t_us
    if t.size == 0:
        return Edges(e.level0, t, max(e.end_us, min_width_us))
    if t[0] >= min_width_us and (t.size == 1 or np.diff(t).min() >= min_width_us):
        return Edges(e.level0, t, max(e.end_us, float(t[-1]) + min_width_us))
    step = np.arange(1, t.size + 1) * min_width_us
    t = np.maximum.accumulate(np.maximum(t - step, 0.0)) + step
    return Edges(e.level0, t, max(e.end_us, float(t[-1]) + min_width_us))


# --- kernels on Edges (used by apply_channel without converting in between) ----------------


def tx_time_map_us(
    t_us: np.ndarray,
    clock_error_pct: float,
    drift_pct_per_s: float,
    burst_starts_us: np.ndarray | None = None,
) -> np.ndarray:
    """Return transmitted times (µs) of nominal times ``t_us`` under clock error and drift.

    The local time scale is ``(1 + clock_error_pct/100) * (1 + drift_pct_per_s/100 * u)``
    with ``u`` the seconds since the start of the current burst (transmission); the map
    is its integral, so it is continuous and increasing.
    """
    t = np.asarray(t_us, dtype=np.float64)
    k = 1.0 + clock_error_pct / 100.0
    d = drift_pct_per_s / 100.0 / 1e6  # per µs
    if d == 0.0:
        return t * k
    starts = np.zeros(1) if burst_starts_us is None else np.asarray(burst_starts_us, float)
    if starts.size == 0 or starts[0] > 0:
        starts = np.concatenate(([0.0], starts))
    seg = np.diff(starts)
    mapped_starts = np.concatenate(([0.0], np.cumsum(k * (seg + d * seg * seg / 2))))
    b = np.clip(np.searchsorted(starts, t, side="right") - 1, 0, None)
    u = t - starts[b]
    return mapped_starts[b] + k * (u + d * u * u / 2)


def _k_clock(e: Edges, clock_pct: float, drift: float, bursts: np.ndarray | None) -> Edges:
    both = tx_time_map_us(np.append(e.t_us, e.end_us), clock_pct, drift, bursts)
    return Edges(e.level0, both[:-1], float(both[-1]))


def _k_mark_bias(e: Edges, bias_us: float, min_width_us: float) -> Edges:
    t = e.t_us.copy()
    t[1 - e.level0 :: 2] += bias_us  # toggle i ends pulse i: falling when pulse i is a mark
    last_is_mark = (e.level0 + t.size) & 1 == 1
    end = e.end_us + (bias_us if last_is_mark else 0.0)
    return _min_width(Edges(e.level0, t, end), min_width_us)


def _k_dropout(e: Edges, prob: float, rng: np.random.Generator) -> Edges:
    n_t = e.t_us.size
    marks = np.arange(1 - e.level0, n_t + 1, 2)
    lost = marks[rng.random(marks.size) < prob]
    if lost.size == 0:
        return e
    drop = np.zeros(n_t, bool)
    before = lost - 1
    drop[before[before >= 0]] = True
    drop[lost[lost < n_t]] = True
    level0 = 0 if lost[0] == 0 else e.level0
    return Edges(level0, e.t_us[~drop], e.end_us)


def _poisson_points(
    starts_us: np.ndarray, lengths_us: np.ndarray, mean_us: float, rng: np.random.Generator,
    *, even: bool,
) -> np.ndarray:
    """Return sorted points of a Poisson process (mean spacing ``mean_us``) inside the
    disjoint, ordered intervals [start, start + length); with ``even`` each interval keeps
    an even number of points (its last one dropped when odd).

    One process runs over the intervals laid end to end and is mapped back, so the
    points come out sorted without a sort.
    """
    cum = np.cumsum(lengths_us)
    total = float(cum[-1]) if cum.size else 0.0
    if total <= 0.0:
        return np.zeros(0)
    expect = total / mean_us
    pos = np.cumsum(rng.exponential(mean_us, int(expect + 6.0 * np.sqrt(expect) + 16.0)))
    while pos[-1] < total:  # rare: extend the process
        more = rng.exponential(mean_us, max(16, int(expect / 8)))
        pos = np.concatenate((pos, pos[-1] + np.cumsum(more)))
    pos = pos[: np.searchsorted(pos, total)]
    region = np.searchsorted(cum, pos, side="right")
    offset = np.concatenate(([0.0], cum[:-1]))
    pts = starts_us[region] + (pos - offset[region])
    if even and pts.size:
        counts = np.bincount(region, minlength=lengths_us.size)
        odd = np.flatnonzero(counts & 1)
        if odd.size:
            pts = np.delete(pts, np.cumsum(counts)[odd] - 1)
    return pts


def _k_idle_noise(
    e: Edges, lead_us: float, mean_us: float, quiet_us: float, rng: np.random.Generator
) -> Edges:
    t = e.t_us + lead_us
    head = [np.array([lead_us])] if e.level0 == 1 else []
    tail = [np.array([e.end_us + lead_us])] if (e.level0 + t.size) & 1 == 1 else []
    t = np.concatenate((*head, t, *tail))
    end = e.end_us + 2 * lead_us
    # the train now starts and ends with a space: spaces are the even pulses
    begin = np.concatenate(([0.0], t[1::2] + quiet_us))
    stop = np.append(t[0::2], end)
    length = stop - begin
    ok = length > 0
    noise = _poisson_points(begin[ok], length[ok], mean_us, rng, even=True)
    return _normalise(0, _insert_sorted(t, noise), end)


def _k_glitches(
    e: Edges, rate_per_ms: float, width_us: float, rng: np.random.Generator
) -> Edges:
    n = rng.poisson(rate_per_ms * e.end_us / 1000.0)
    at = rng.random(n) * e.end_us
    width = width_us * rng.uniform(0.5, 1.5, n)
    return _toggle_pairs(e, np.concatenate((at, np.minimum(at + width, e.end_us))))


def _k_jitter(
    e: Edges, sigma_us: float, kind: str, min_width_us: float, rng: np.random.Generator
) -> Edges:
    n = e.t_us.size
    if kind == "uniform":
        err = rng.uniform(-sigma_us, sigma_us, n)
    else:
        err = rng.normal(0.0, sigma_us, n)
    return _min_width(Edges(e.level0, e.t_us + err, e.end_us), min_width_us)


def _k_quantise(e: Edges, step_us: float, rng: np.random.Generator) -> Edges:
    phase = rng.random() * step_us
    k = np.ceil((e.t_us - phase) / step_us)
    end_k = np.ceil((e.end_us - phase) / step_us)
    t = phase + k * step_us
    end = max(phase + end_k * step_us, e.end_us)
    return _normalise(e.level0, t, end)


# --- public per-impairment functions ------------------------------------------------------


def scale_clock(
    levels: np.ndarray,
    durations_us: np.ndarray,
    clock_error_pct: float,
    drift_pct_per_s: float = 0.0,
    *,
    burst_starts_us: np.ndarray | None = None,
) -> PulseTrain:
    """Return the train as sent by a transmitter whose clock is off by ``clock_error_pct``
    and drifts by ``drift_pct_per_s`` from each burst start (default: one burst at 0)."""
    e = Edges.from_arrays(levels, durations_us)
    return _k_clock(e, clock_error_pct, drift_pct_per_s, burst_starts_us).to_train()


def bias_marks(
    levels: np.ndarray,
    durations_us: np.ndarray,
    bias_us: float,
    *,
    min_width_us: float = DEFAULT_MIN_WIDTH_US,
) -> PulseTrain:
    """Return the train with ``bias_us`` added to every mark and taken from the next space."""
    e = Edges.from_arrays(levels, durations_us)
    return _k_mark_bias(e, bias_us, min_width_us).to_train()


def drop_marks(
    levels: np.ndarray, durations_us: np.ndarray, prob: float, rng: np.random.Generator
) -> PulseTrain:
    """Return the train with each mark lost (turned into space) with probability ``prob``."""
    return _k_dropout(Edges.from_arrays(levels, durations_us), prob, rng).to_train()


def add_glitches(
    levels: np.ndarray,
    durations_us: np.ndarray,
    rate_per_ms: float,
    width_us: float,
    rng: np.random.Generator,
) -> PulseTrain:
    """Return the train with Poisson level flips (``rate_per_ms``) of width uniform in
    [0.5, 1.5] * ``width_us``."""
    e = Edges.from_arrays(levels, durations_us)
    return _k_glitches(e, rate_per_ms, width_us, rng).to_train()


def add_idle_noise(
    levels: np.ndarray,
    durations_us: np.ndarray,
    lead_us: float,
    mean_us: float,
    quiet_us: float,
    rng: np.random.Generator,
) -> PulseTrain:
    """Return the train with ``lead_us`` of idle noise before and after it, and noise in
    every space after ``quiet_us``; noise pulses exponential with mean ``mean_us``."""
    e = Edges.from_arrays(levels, durations_us)
    return _k_idle_noise(e, lead_us, mean_us, quiet_us, rng).to_train()


def jitter_edges(
    levels: np.ndarray,
    durations_us: np.ndarray,
    sigma_us: float,
    rng: np.random.Generator,
    *,
    kind: str = "gauss",
    min_width_us: float = DEFAULT_MIN_WIDTH_US,
) -> PulseTrain:
    """Return the train with every edge moved independently (Gaussian sigma ``sigma_us``
    or uniform in ±``sigma_us``); pulses never narrower than ``min_width_us``."""
    e = Edges.from_arrays(levels, durations_us)
    return _k_jitter(e, sigma_us, kind, min_width_us, rng).to_train()


def quantise_edges(
    levels: np.ndarray, durations_us: np.ndarray, step_us: float, rng: np.random.Generator
) -> PulseTrain:
    """Return the train with every edge moved to the next multiple of ``step_us`` (random
    phase); pulses that shrink to zero vanish and their neighbours merge."""
    return _k_quantise(Edges.from_arrays(levels, durations_us), step_us, rng).to_train()


def idle_noise_train(duration_us: float, mean_us: float, rng: np.random.Generator) -> PulseTrain:
    """Return ``duration_us`` of pure idle-receiver noise (exponential pulses, mean
    ``mean_us``, starting with a space)."""
    t = _poisson_points(np.zeros(1), np.array([float(duration_us)]), mean_us, rng, even=False)
    return _normalise(0, t, float(duration_us)).to_train()
