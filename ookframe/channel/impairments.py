"""Impairments as pure vectorised functions over pulse arrays; randomness via ``rng`` only.

Each public function takes ``(levels, durations_us, ...)`` and returns a new
``PulseTrain``. Internally a train is held as *edges*: the level of the first pulse, the
sorted times of the level changes (toggles, in µs from the train start) and the end
time. In that form every impairment is a few array operations: moving toggles, inserting
pairs of toggles (a pulse of the other level) and cancelling coincident ones (a pulse
of zero width vanishes and its neighbours merge).
"""

from __future__ import annotations

import math
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
        lv = np.asarray(levels, dtype=np.uint8)
        du = np.asarray(durations_us, dtype=np.float64)
        if not (lv.ndim == 1 and lv.shape == du.shape and lv.size
                and (lv[1:] != lv[:-1]).all()):  # equal neighbours to merge (or none)
            train = merge_runs(levels, durations_us)
            if len(train) == 0:
                return Edges(0, np.zeros(0), 0.0)
            lv, du = train.levels, train.durations_us
        ends = cumsum_us(du)  # a new array: the kernels may work on it in place
        return Edges(int(lv[0]), ends[:-1], float(ends[-1]))

    @staticmethod
    def from_ends(levels: np.ndarray, ends_us: np.ndarray) -> Edges:
        """Return the edges of a pulse train of alternating ``levels`` (at least one pulse)
        whose pulses end at ``ends_us`` (the running sum of the durations, as
        ``from_arrays`` takes it): the toggles are a copy of the ends, for the kernels to
        work on in place."""
        return Edges(int(levels[0]), ends_us[:-1].copy(), float(ends_us[-1]))

    def pulse_levels(self) -> np.ndarray:
        """Return the level (uint8) of each pulse."""
        levels = np.empty(self.t_us.size + 1, np.uint8)
        levels[0::2] = self.level0 & 1
        levels[1::2] = (self.level0 + 1) & 1
        return levels

    def to_train(self) -> PulseTrain:
        """Return the pulse train (levels, durations_us) of these edges."""
        if self.end_us <= 0:
            return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
        t = self.t_us
        durations_us = np.empty(t.size + 1)
        if t.size:
            durations_us[0] = t[0]
            np.subtract(t[1:], t[:-1], out=durations_us[1:-1])
            durations_us[-1] = self.end_us - t[-1]
        else:
            durations_us[0] = self.end_us
        return PulseTrain(self.pulse_levels(), durations_us)


#: shortest input that ``cumsum_us`` tries to sum as integers (below it the checks cost
#: more than they save)
EXACT_CUMSUM_MIN = 1024


def cumsum_us(x: np.ndarray) -> np.ndarray:
    """Return ``np.cumsum(x)`` (float64), the same floats: when every value is > 0 and a
    multiple of ``2**-k`` with the total below ``2**52 * 2**-k``, every partial sum is
    exact in floating point, so the sums are taken as integers (3-4x cheaper than the
    float accumulation, whose additions wait on one another); otherwise ``np.cumsum``.
    Trains joined from whole chips of a binary-fraction unit (250 µs, 350 µs ...) are such
    inputs."""
    x = np.asarray(x, np.float64)
    if x.size < EXACT_CUMSUM_MIN:
        return np.cumsum(x)
    total = float(x.sum())  # bounds the exact total (all terms > 0) within a few ulps
    if not (np.isfinite(total) and total > 0.0):
        return np.cumsum(x)
    k = 51 - math.frexp(total)[1]  # total * 2**k < 2**51: room for the sum's rounding
    head = x[:64] * 2.0**k  # most inputs that are not such multiples fail here already
    if not 0 <= k <= 64 or not np.array_equal(np.floor(head), head):
        return np.cumsum(x)
    if not float(x.min()) > 0.0:
        return np.cumsum(x)
    scaled = x * 2.0**k  # exact: a power of two, no overflow (below 2**51)
    units = scaled.astype(np.int64)
    if not np.array_equal(units, scaled):
        return np.cumsum(x)
    out = np.cumsum(units).astype(np.float64)  # exact below 2**53
    out *= 2.0**-k
    return out


def _normalise(level0: int, t_us: np.ndarray, end_us: float) -> Edges:
    """Return edges with coincident toggles cancelled in pairs and toggles outside
    (0, end_us) removed (a toggle at or before 0 flips the first level instead).
    ``t_us`` must be sorted."""
    if t_us.size > 1:
        same = np.flatnonzero(t_us[1:] == t_us[:-1])
        if same.size:
            keep = np.ones(t_us.size, bool)
            keep[_cancelled(same)] = False
            t_us = t_us[keep]
    if t_us.size and (t_us[0] <= 0.0 or t_us[-1] >= end_us):
        before = int(np.count_nonzero(t_us <= 0.0))
        t_us = t_us[(t_us > 0.0) & (t_us < end_us)]
        level0 = (level0 + before) & 1
    return Edges(level0, t_us, end_us)


def _cancelled(same: np.ndarray) -> np.ndarray:
    """Return the indices of the toggles that cancel, given ``same`` (sorted indices ``i``
    with ``t[i + 1] == t[i]``): of a run of equal toggles all go when the run is even,
    all but the first when odd."""
    first = np.flatnonzero(np.diff(same, prepend=-2) != 1)  # runs of ``same`` (by position)
    entries = np.diff(first, append=same.size)  # run length - 1
    return np.concatenate((same + 1, same[first[(entries & 1) == 1]]))


def _insert_at(t_us: np.ndarray, new_us: np.ndarray, before: np.ndarray) -> np.ndarray:
    """Return ``t_us`` with ``new_us[j]`` inserted before ``t_us[before[j]]`` (``before``
    non-decreasing; equal ones keep the order of ``new_us``)."""
    if new_us.size == 0:
        return t_us
    pos = before + np.arange(new_us.size)
    out = np.empty(t_us.size + new_us.size)
    keep = np.ones(out.size, bool)
    keep[pos] = False
    out[pos] = new_us
    out[keep] = t_us
    return out


def _insert_sorted(t_us: np.ndarray, new_us: np.ndarray) -> np.ndarray:
    """Return the sorted merge of sorted ``t_us`` and sorted ``new_us`` (O(n + k log n))."""
    if new_us.size == 0:
        return t_us
    return _insert_at(t_us, new_us, np.searchsorted(t_us, new_us))


def _toggle_pairs(e: Edges, new_us: np.ndarray) -> Edges:
    """Return edges with extra toggles XOR-ed in (each pair flips the level between them)."""
    merged = _insert_sorted(e.t_us, np.sort(new_us))
    return _normalise(e.level0, merged, e.end_us)


_STEPS_US: dict[float, np.ndarray] = {}


def _steps_us(n: int, min_width_us: float) -> np.ndarray:
    """Return ``np.arange(1, n + 1) * min_width_us`` (read-only; cached per width, grown to
    the next power of two so trains of slightly different lengths do not rebuild it: an
    elementwise product, so a longer table's first ``n`` values are the same floats)."""
    steps = _STEPS_US.get(min_width_us)
    if steps is None or steps.size < n:
        if len(_STEPS_US) >= 8:
            _STEPS_US.clear()
        size = 1 << max(n - 1, 1023).bit_length()  # the next power of two >= max(n, 1024)
        steps = np.arange(1, size + 1) * min_width_us
        steps.flags.writeable = False
        _STEPS_US[min_width_us] = steps
    return steps[:n]


def _running_max_inplace(x: np.ndarray) -> np.ndarray:
    """Set ``x[i] = x[: i + 1].max()`` in place and return ``x`` (as
    ``np.maximum.accumulate``; cheaper when ``x`` seldom falls: only the falls are fixed,
    a chain of them one round per link, and past 8 rounds the accumulate finishes it)."""
    fall = np.flatnonzero(x[1:] < x[:-1])
    if fall.size > x.size // 64:
        return np.maximum.accumulate(x, out=x)
    for _ in range(8):
        if fall.size == 0:
            return x
        raised = fall + 1
        x[raised] = x[fall]  # x[i] = max(x[i - 1], x[i]) where it fell (all at once)
        raised = raised[raised < x.size - 1]
        fall = raised[x[raised + 1] < x[raised]]  # only a raised value can fall next
    return np.maximum.accumulate(x, out=x)


def _min_width(e: Edges, min_width_us: float, *, own: bool = False) -> Edges:
    """Return edges where no pulse is narrower than ``min_width_us`` (later edges pushed).
    ``own``: ``e.t_us`` is a scratch array that may be overwritten."""
    t = e.t_us
    if t.size == 0:
        return Edges(e.level0, t, max(e.end_us, min_width_us))
    if t[0] >= min_width_us and (t.size == 1 or _min_gap_us(t) >= min_width_us):
        return Edges(e.level0, t, max(e.end_us, float(t[-1]) + min_width_us))
    step = _steps_us(t.size, min_width_us)
    t = np.subtract(t, step, out=t if own else None)
    # the running max of max(t, 0): only the first value needs the floor (every later one
    # below 0 is below it, so raised to the running max all the same; no -0.0 arises, as
    # step > 0)
    if t[0] < 0.0:
        t[0] = 0.0
    _running_max_inplace(t)
    t += step
    return Edges(e.level0, t, max(e.end_us, float(t[-1]) + min_width_us))


def _min_gap_us(t_us: np.ndarray) -> float:
    """Return the smallest difference of neighbours of ``t_us`` (at least 2 values)."""
    return float(np.subtract(t_us[1:], t_us[:-1]).min())


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


def _k_mark_bias(e: Edges, bias_us: float, min_width_us: float, *, own: bool = False) -> Edges:
    """Marks ``bias_us`` longer (``own``: ``e.t_us`` is a scratch array, changed in place)."""
    t = e.t_us if own else e.t_us.copy()
    t[1 - e.level0 :: 2] += bias_us  # toggle i ends pulse i: falling when pulse i is a mark
    last_is_mark = (e.level0 + t.size) & 1 == 1
    end = e.end_us + (bias_us if last_is_mark else 0.0)
    return _min_width(Edges(e.level0, t, end), min_width_us, own=True)


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
    an even number of points (its last one dropped when odd)."""
    return _poisson_points_counted(starts_us, lengths_us, mean_us, rng, even=even)[0]


def _poisson_points_counted(
    starts_us: np.ndarray, lengths_us: np.ndarray, mean_us: float, rng: np.random.Generator,
    *, even: bool,
) -> tuple[np.ndarray, np.ndarray]:
    """Return (points, number of points in each interval) of ``_poisson_points``.

    One process runs over the intervals laid end to end and is mapped back, so the
    points come out sorted without a sort.
    """
    cum = np.cumsum(lengths_us)
    total = float(cum[-1]) if cum.size else 0.0
    if total <= 0.0:
        return np.zeros(0), np.zeros(lengths_us.size, np.int64)
    expect = total / mean_us
    # rng.exponential(mean_us, k) is mean_us * rng.standard_exponential(k): the same values
    pos = rng.standard_exponential(int(expect + 6.0 * np.sqrt(expect) + 16.0))
    pos *= mean_us
    np.cumsum(pos, out=pos)
    while pos[-1] < total:  # rare: extend the process
        more = rng.exponential(mean_us, max(16, int(expect / 8)))
        pos = np.concatenate((pos, pos[-1] + np.cumsum(more)))
    pos = pos[: np.searchsorted(pos, total)]
    # interval r holds the points in [cum[r - 1], cum[r]) (all points lie below cum[-1])
    counts = np.diff(np.searchsorted(pos, cum), prepend=0)
    offset = np.concatenate(([0.0], cum[:-1]))
    pts = np.subtract(pos, np.repeat(offset, counts), out=pos)  # pos: this call's own array
    pts += np.repeat(starts_us, counts)
    if even and pts.size:
        odd = np.flatnonzero(counts & 1)
        if odd.size:  # each odd interval's last point dropped (np.delete's mask, at hand)
            keep = np.ones(pts.size, bool)
            keep[np.cumsum(counts)[odd] - 1] = False
            pts = pts[keep]
            counts = counts - (counts & 1)
    return pts, counts


def _k_idle_noise(
    e: Edges, lead_us: float, mean_us: float, quiet_us: float, rng: np.random.Generator
) -> Edges:
    t = _shifted_between_spaces(e, lead_us)
    end = e.end_us + 2 * lead_us
    # the train now starts and ends with a space: spaces are the even pulses, space s from
    # toggle 2s - 1 (plus the quiet time) to toggle 2s
    begin = np.empty(t.size // 2 + 1)
    begin[0] = 0.0
    np.add(t[1::2], quiet_us, out=begin[1:])
    length = np.empty(begin.size)
    length[:-1] = t[0::2]
    length[-1] = end
    length -= begin
    ok = np.flatnonzero(length > 0)
    noise, counts = _poisson_points_counted(begin[ok], length[ok], mean_us, rng, even=True)
    return _normalise(0, _insert_in_spaces(t, noise, 2 * ok, counts), end)


def _insert_in_spaces(
    t_us: np.ndarray, new_us: np.ndarray, first_toggle: np.ndarray, counts: np.ndarray
) -> np.ndarray:
    """Return ``_insert_at(t_us, new_us, _space_positions(t_us, new_us, first_toggle,
    counts))``, the same array: ``counts[r]`` of the sorted ``new_us`` (non-decreasing
    within each ``r``) belong before toggle ``first_toggle[r]`` (strictly increasing).

    When every point lies inside its space (a point off it, by rounding, is searched for
    instead), each space's points are one block between two blocks of toggles, so the
    result is laid out by a mask of alternating blocks; that every point lies inside is
    seen from the first and last point of each space, as the points of a space are sorted.
    """
    n_t = t_us.size
    some = counts > 0
    first = first_toggle[some]
    if n_t == 0 or first.size == 0:
        return _insert_at(t_us, new_us, _space_positions(t_us, new_us, first_toggle, counts))
    k = counts[some]
    last = np.cumsum(counts)[some] - 1  # index of each space's last point
    lo = t_us[np.maximum(first - 1, 0)]
    lo[first == 0] = -np.inf
    hi = t_us[np.minimum(first, n_t - 1)]
    hi[first >= n_t] = np.inf
    if not ((new_us[last - k + 1] >= lo).all() and (new_us[last] <= hi).all()):
        return _insert_at(t_us, new_us, _space_positions(t_us, new_us, first_toggle, counts))
    blocks = np.empty(2 * first.size + 1, np.int64)  # toggles, points, toggles, ... toggles
    blocks[0] = first[0]
    blocks[1:-1:2] = k
    np.subtract(first[1:], first[:-1], out=blocks[2:-1:2])
    blocks[-1] = n_t - first[-1]
    is_toggle = np.zeros(blocks.size, bool)
    is_toggle[0::2] = True
    keep = np.repeat(is_toggle, blocks)
    out = np.empty(n_t + new_us.size)
    out[keep] = t_us
    out[~keep] = new_us
    return out


def _shifted_between_spaces(e: Edges, lead_us: float) -> np.ndarray:
    """Return the toggles of ``e`` moved by ``lead_us``, with a toggle at ``lead_us``
    first when the train starts with a mark and one at ``end_us + lead_us`` last when it
    ends with one (so the result starts and ends with a space)."""
    n = e.t_us.size
    head = 1 if e.level0 == 1 else 0
    tail = 1 if (e.level0 + n) & 1 == 1 else 0
    t = np.empty(head + n + tail)
    np.add(e.t_us, lead_us, out=t[head : head + n])
    if head:
        t[0] = lead_us
    if tail:
        t[-1] = e.end_us + lead_us
    return t


def _space_positions(
    t_us: np.ndarray, new_us: np.ndarray, first_toggle: np.ndarray, counts: np.ndarray
) -> np.ndarray:
    """Return ``np.searchsorted(t_us, new_us)`` up to ties (equal values, so the same
    merge) for sorted ``new_us`` of which ``counts[r]`` lie in the space ending at toggle
    ``first_toggle[r]`` (points off their space, by rounding, are searched)."""
    before = np.repeat(first_toggle, counts)
    if before.size == 0:
        return before
    lo = np.full(first_toggle.size, -np.inf)
    inside = first_toggle > 0
    lo[inside] = t_us[first_toggle[inside] - 1]
    hi = np.full(first_toggle.size, np.inf)
    inside = first_toggle < t_us.size
    hi[inside] = t_us[first_toggle[inside]]
    off = new_us < np.repeat(lo, counts)
    off |= new_us > np.repeat(hi, counts)
    if off.any():
        before[off] = np.searchsorted(t_us, new_us[off])
    return before


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
        t = rng.uniform(-sigma_us, sigma_us, n)
    else:  # rng.normal(0.0, sigma_us, n) is 0.0 + sigma_us * z: the same values
        t = rng.standard_normal(n)
        t *= sigma_us
    t += e.t_us
    return _min_width(Edges(e.level0, t, e.end_us), min_width_us, own=True)


def _k_quantise(
    e: Edges, step_us: float, rng: np.random.Generator, *, own: bool = False
) -> Edges:
    """Edges to the next multiple of ``step_us`` after a random phase (``own``: ``e.t_us``
    is a scratch array, changed in place)."""
    phase = rng.random() * step_us
    t = np.subtract(e.t_us, phase, out=e.t_us if own else None)
    t /= step_us
    np.ceil(t, out=t)
    t *= step_us
    t += phase
    end_k = np.ceil((e.end_us - phase) / step_us)
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
