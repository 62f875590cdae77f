"""Samples -> pulse train, streamed: ``SampleSlicer`` runs envelope, smoothing, decimation,
level trackers and the hysteresis comparator block by block and emits the pulses as they
complete; ``SliceReport`` lists every level and threshold it chose.

The input is cut into fixed blocks counted from the first sample (``BLOCK_SAMPLES``,
a multiple of the decimation factor) whatever pieces the caller feeds, so feeding a
capture in any pieces gives exactly the train of feeding it whole.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import asdict, dataclass, replace

import numpy as np

from ..pulses import PulseTrain
from ._workspace import Workspace
from .config import FrontEndConfig
from .envelope import EnvelopeStage, Smoothing
from .tracker import (
    Levels,
    Tracked,
    TrackerState,
    changes,
    compare,
    edge_positions,
    levels,
    start_state,
)

#: samples per internal block (before decimation; rounded up to a multiple of it)
BLOCK_SAMPLES = 1 << 17


@dataclass(frozen=True)
class SliceReport:
    """What the front end chose and measured over a capture.

    Settings: ``sample_rate_hz``, ``envelope``, ``invert``, ``smoothing_cutoff_hz`` (0 =
    off), ``smoothing_delay_us`` / ``smoothing_rise_us`` (step response; every edge is
    late by the delay), ``smoothing_note``, ``decimate``, ``output_rate_hz``,
    ``thresholds`` ("adaptive" or "fixed"), ``threshold_fraction``, ``hysteresis``,
    ``decay_us``, ``attack_us``, ``min_contrast``.
    Measured (envelope units, full scale 1.0): ``floor_level`` / ``floor_rms`` (mean and
    spread of the envelope in spaces), ``carrier_level`` / ``carrier_rms`` (in marks),
    both leaving out 1.5 smoothing rise times (at least a sample) around every edge,
    ``snr_db`` (20 log10((carrier - floor) / floor_rms), in the smoothed envelope's
    bandwidth, so above the input's by the low-pass's noise reduction); without a squelch
    (``min_contrast``) the slicer chatters on idle noise and those pulses count into the
    levels. ``threshold_high_mean`` /
    ``threshold_low_mean`` with their minimum and maximum (not squelched samples),
    ``squelched_fraction``, ``clipped_fraction`` (input at full scale: gain too high),
    ``n_samples``, ``duration_s``, ``pulses``, ``marks``.
    """

    sample_rate_hz: float
    envelope: str
    invert: bool
    smoothing_cutoff_hz: float
    smoothing_delay_us: float
    smoothing_rise_us: float
    smoothing_note: str
    decimate: int
    output_rate_hz: float
    thresholds: str
    threshold_fraction: float
    hysteresis: float
    decay_us: float
    attack_us: float
    min_contrast: float
    floor_level: float
    floor_rms: float
    carrier_level: float
    carrier_rms: float
    snr_db: float
    threshold_high_mean: float
    threshold_high_min: float
    threshold_high_max: float
    threshold_low_mean: float
    threshold_low_min: float
    threshold_low_max: float
    squelched_fraction: float
    clipped_fraction: float
    n_samples: int
    duration_s: float
    pulses: int
    marks: int

    def as_dict(self) -> dict[str, object]:
        """Return the report as a JSON-ready dict."""
        return asdict(self)


class _Tally:
    """Running sums behind the report's measured figures."""

    def __init__(self) -> None:
        self.n = [0, 0]             # samples in spaces, marks
        self.s = [0.0, 0.0]         # sum of envelope
        self.s2 = [0.0, 0.0]        # sum of squares
        self.hi = [0.0, np.inf, -np.inf]  # sum, min, max of the high threshold
        self.lo = [0.0, np.inf, -np.inf]
        self.n_thr = 0
        self.squelched = 0
        self.clipped = 0
        self.pulses = 0
        self.marks = 0

    def add(self, e: np.ndarray, lv: Levels, idx: np.ndarray, guard: int,
            mark_before: bool, work: Workspace) -> None:
        """Count one block whose comparator changes state at ``idx`` (from ``mark_before``);
        level figures leave out samples within ``guard`` samples of a change (the smoothed
        ramps), so floor and carrier are the plateaus. Works on the runs between changes,
        not on a per-sample mask."""
        n = e.size
        starts = np.concatenate(([0], idx + (guard + 1)))
        stops = np.concatenate((idx - guard, [n]))
        run_mark = (np.arange(starts.size) % 2 == 1) != mark_before
        keep = stops > starts
        starts, stops, run_mark = starts[keep], stops[keep], run_mark[keep]
        if starts.size:
            at = np.stack((starts, stops), axis=1).ravel()
            if at[-1] == n:
                at = at[:-1]
            sums = np.add.reduceat(e, at)[::2]
            squares = np.add.reduceat(np.multiply(e, e, out=work.get("e2", n)), at)[::2]
            counts = stops - starts
            for level, sel in ((0, ~run_mark), (1, run_mark)):
                self.n[level] += int(counts[sel].sum())
                self.s[level] += float(sums[sel].sum())
                self.s2[level] += float(squares[sel].sum())
        n_squelched = int(np.count_nonzero(lv.squelched))
        self.squelched += n_squelched
        if n_squelched < n:
            if n_squelched:
                ok = ~lv.squelched
                pairs = ((self.hi, lv.high[ok]), (self.lo, lv.low[ok]))
            else:
                pairs = ((self.hi, lv.high), (self.lo, lv.low))
            for acc, thr in pairs:
                acc[0] += float(thr.sum())
                acc[1] = min(acc[1], float(thr.min()))
                acc[2] = max(acc[2], float(thr.max()))
            self.n_thr += n - n_squelched

    def level(self, lv: int) -> tuple[float, float]:
        n = self.n[lv]
        if n == 0:
            return float("nan"), float("nan")
        mean = self.s[lv] / n
        return mean, float(np.sqrt(max(self.s2[lv] / n - mean * mean, 0.0)))


class SampleSlicer:
    """Streams samples into pulses: ``feed(samples)`` returns the pulses completed so far,
    ``finish()`` the last one; ``report()`` the levels and thresholds (any time).

    ``sample_rate_hz`` is the input rate; ``is_complex`` says whether samples are I/Q. With
    ``trace_window = (start, stop)`` (input sample indices) the slicer also keeps, for those
    samples only, the per-sample view a plot needs (``trace_pieces``: input samples or
    their magnitude, envelope, thresholds, levels, comparator output); blocks outside the
    window take the fast path as always.
    """

    def __init__(self, config: FrontEndConfig, sample_rate_hz: float, is_complex: bool,
                 *, trace_window: tuple[int, int] | None = None) -> None:
        if not isinstance(config, FrontEndConfig):
            raise TypeError(f"config must be a FrontEndConfig, got {type(config).__name__}")
        if not np.isfinite(sample_rate_hz) or sample_rate_hz <= 0:
            raise ValueError(f"sample_rate_hz must be > 0, got {sample_rate_hz!r}")
        self.config = config
        self.sample_rate_hz = float(sample_rate_hz)
        self.is_complex = bool(is_complex)
        self._env = EnvelopeStage(config, self.sample_rate_hz, self.is_complex)
        q = config.decimate
        self._block = -(-BLOCK_SAMPLES // q) * q
        self._pending: list[np.ndarray] = []
        self._pending_n = 0
        self._state: TrackerState | None = None
        self._out_index = 0          # decimated samples processed
        self._n_in = 0               # input samples processed
        self._edge = 0.0             # position of the last edge (decimated samples)
        self._level = 0              # level of the pulse running since that edge
        self._tally = _Tally()
        self._work = Workspace()
        self._finished = False
        self.trace_window = trace_window
        #: (first input index, samples or |samples|, first output index, envelope, Tracked)
        self.trace_pieces: list[tuple[int, np.ndarray, int, np.ndarray, Tracked]] = []
        self._us_per_out = 1e6 * q / self.sample_rate_hz
        #: samples next to an edge left out of the level figures: 1.5 rise times, >= 1
        self._guard = max(1, int(np.ceil(1.5 * self._env.smoothing.rise_us / self._us_per_out)))

    @property
    def smoothing(self) -> Smoothing:
        """The smoothing filter as designed for this rate."""
        return self._env.smoothing

    def feed(self, samples: np.ndarray) -> PulseTrain:
        """Return the pulses completed by ``samples`` (possibly none)."""
        if self._finished:
            raise RuntimeError("the slicer is finished; make a new one")
        x = np.asarray(samples)
        if x.ndim != 1:
            raise ValueError(f"samples must be 1-D, got shape {x.shape}")
        if np.iscomplexobj(x) and not self.is_complex:
            raise ValueError("complex samples fed to a slicer made for real ones")
        self._pending.append(x)
        self._pending_n += x.size
        pieces = []
        if self._pending_n >= self._block:
            buf = x if len(self._pending) == 1 else np.concatenate(self._pending)
            n_full = buf.size // self._block * self._block
            for i in range(0, n_full, self._block):
                pieces.append(self._run(buf[i:i + self._block]))
            rest = buf[n_full:].copy() if buf is x else buf[n_full:]  # not the caller's
            self._pending, self._pending_n = ([rest] if rest.size else []), rest.size
        return _join(pieces)

    def finish(self) -> PulseTrain:
        """Return the remaining pulses: what the last partial block completes, then the pulse
        running at the end of the capture (it lasts to the last sample)."""
        if self._finished:
            return _join([])
        pieces = []
        if self._pending_n:
            pieces.append(self._run(np.concatenate(self._pending)))
            self._pending, self._pending_n = [], 0
        self._finished = True
        end = self._n_in / self.config.decimate  # the capture's end, in output samples
        if end > self._edge:
            pieces.append(PulseTrain(np.array([self._level], np.uint8),
                                     np.array([(end - self._edge) * self._us_per_out])))
            self._count(pieces[-1])
        return _join(pieces)

    def slice(self, chunks: Iterable[np.ndarray]) -> Iterator[PulseTrain]:
        """Yield the pulses of ``chunks`` (pieces of one capture, in order) as they complete,
        the last pulse included; empty pieces are left out."""
        for chunk in chunks:
            t = self.feed(chunk)
            if len(t):
                yield t
        t = self.finish()
        if len(t):
            yield t

    def _run(self, x: np.ndarray) -> PulseTrain:
        first_in = self._n_in
        self._n_in += x.size
        e, n_clipped = self._env.process(x)
        self._tally.clipped += n_clipped
        if e.size == 0:
            return _join([])
        rate = self.sample_rate_hz / self.config.decimate
        if self._state is None:
            self._state = start_state(float(e[0]), self.config, rate)
        before = self._state
        lv, after = levels(e, before, self.config, rate, self._work)
        idx = changes(e, lv.high, lv.low, before.mark)
        # every change flips the state: the first leaves before.mark
        marks_at = (np.arange(idx.size) % 2 == 0) != before.mark
        self._state = replace(after, mark=bool(marks_at[-1]) if idx.size else before.mark,
                              last_e=float(e[-1]))
        pos = edge_positions(e, idx, marks_at, lv.high, lv.low, before.last_e)
        pos = pos + self._out_index
        self._out_index += e.size
        self._tally.add(e, lv, idx, self._guard, before.mark, self._work)
        if self.trace_window is not None:
            self._keep_trace(first_in, x, e, lv, before.mark)
        if pos.size == 0:
            return _join([])
        if self._edge == 0.0 and self._tally.pulses == 0 and pos[0] <= 0.0:
            # the capture starts in a mark: no zero-length space before it
            self._level = int(marks_at[0])
            pos, marks_at = pos[1:], marks_at[1:]
            if pos.size == 0:
                return _join([])
        bounds = np.concatenate(([self._edge], pos))
        levels_out = np.empty(pos.size, np.uint8)
        levels_out[0] = self._level
        levels_out[1:] = marks_at[:-1]
        train = PulseTrain(levels_out, np.diff(bounds) * self._us_per_out)
        self._edge = float(pos[-1])
        self._level = int(marks_at[-1])
        self._count(train)
        return train

    def _keep_trace(self, first_in: int, x: np.ndarray, e: np.ndarray, lv: Levels,
                    mark_before: bool) -> None:
        """Keep the per-sample view of the part of this block inside the trace window."""
        start, stop = self.trace_window  # type: ignore[misc]
        lo, hi = max(start - first_in, 0), min(stop - first_in, x.size)
        if lo >= hi:
            return
        q = self.config.decimate
        j0, j1 = -(-lo // q), -(-hi // q)  # output samples j (input first_in + j q) inside
        marks = compare(e, lv.high, lv.low, mark_before)
        view = Tracked(*(a[j0:j1].copy() for a in (lv.high, lv.low, lv.carrier, lv.floor)),
                       marks[j0:j1], lv.squelched[j0:j1].copy())
        raw = np.abs(x[lo:hi]) if np.iscomplexobj(x) else np.array(x[lo:hi])
        self.trace_pieces.append((first_in + lo, raw.astype(np.float64), first_in // q + j0,
                                  e[j0:j1].copy(), view))

    def _count(self, train: PulseTrain) -> None:
        self._tally.pulses += len(train)
        self._tally.marks += int(train.levels.sum())

    def report(self) -> SliceReport:
        """Return the settings and the levels and thresholds measured so far."""
        c, t, sm = self.config, self._tally, self._env.smoothing
        floor, floor_rms = t.level(0)
        carrier, carrier_rms = t.level(1)
        with np.errstate(divide="ignore", invalid="ignore"):
            snr = 20 * np.log10((carrier - floor) / floor_rms) if floor_rms > 0 else np.inf
        n_thr = max(t.n_thr, 1)
        nan = float("nan")
        n_out = max(self._out_index, 1)  # every output sample (not only the steady ones)
        return SliceReport(
            sample_rate_hz=self.sample_rate_hz, envelope=self._env.mode, invert=c.invert,
            smoothing_cutoff_hz=sm.cutoff_hz, smoothing_delay_us=sm.delay_us,
            smoothing_rise_us=sm.rise_us, smoothing_note=sm.note, decimate=c.decimate,
            output_rate_hz=self.sample_rate_hz / c.decimate,
            thresholds="fixed" if c.fixed else "adaptive",
            threshold_fraction=c.threshold_fraction, hysteresis=c.hysteresis,
            decay_us=c.decay_us, attack_us=c.attack_us, min_contrast=c.min_contrast,
            floor_level=floor, floor_rms=floor_rms, carrier_level=carrier,
            carrier_rms=carrier_rms, snr_db=float(snr) if np.isfinite(snr) else nan,
            threshold_high_mean=t.hi[0] / n_thr if t.n_thr else nan,
            threshold_high_min=t.hi[1] if t.n_thr else nan,
            threshold_high_max=t.hi[2] if t.n_thr else nan,
            threshold_low_mean=t.lo[0] / n_thr if t.n_thr else nan,
            threshold_low_min=t.lo[1] if t.n_thr else nan,
            threshold_low_max=t.lo[2] if t.n_thr else nan,
            squelched_fraction=t.squelched / n_out, clipped_fraction=t.clipped /
            max(self._n_in, 1), n_samples=self._n_in,
            duration_s=self._n_in / self.sample_rate_hz, pulses=t.pulses, marks=t.marks)


def _join(trains: list[PulseTrain]) -> PulseTrain:
    if not trains:
        return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
    if len(trains) == 1:
        return trains[0]
    return PulseTrain(np.concatenate([t.levels for t in trains]),
                      np.concatenate([t.durations_us for t in trains]))


def slice_samples(samples: np.ndarray | Iterable[np.ndarray], sample_rate_hz: float,
                  config: FrontEndConfig | None = None) -> tuple[PulseTrain, SliceReport]:
    """Return the pulse train of ``samples`` (one array, or pieces of one capture; real or
    complex, full scale 1.0) and the front end's report."""
    cfg = config or FrontEndConfig()
    chunks = [samples] if isinstance(samples, np.ndarray) else samples
    it = iter(chunks)
    first = next(it, None)
    if first is None:
        raise ValueError("no samples")
    first = np.asarray(first)
    slicer = SampleSlicer(cfg, sample_rate_hz, np.iscomplexobj(first))

    def all_chunks():
        yield first
        yield from it

    train = _join(list(slicer.slice(all_chunks())))
    return train, slicer.report()
