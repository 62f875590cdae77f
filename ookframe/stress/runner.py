"""Monte Carlo stress runs: random frames through a channel and the reference decoder.

Work is split into fixed chunks of ``chunk_frames`` transmissions; chunk ``i`` draws all
its randomness from ``SeedSequence(seed).spawn(n_chunks)[i]``, so a run gives the same
counts with any number of workers and any ``concurrent.futures.Executor``: a process
pool (``workers > 1``), or for very large runs a Dask distributed cluster through
``distributed.Client(...).get_executor()``. A chunk is one batch: encode all its frames,
join them into one train with idle gaps, apply the channel once, decode once, and match
decoded frames to sent ones by time (each transmission owns the window from half a gap
before it to half a gap after it).
"""

from __future__ import annotations

import signal
import threading
import time
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import FIRST_COMPLETED, Executor, ProcessPoolExecutor, wait
from contextlib import contextmanager
from dataclasses import dataclass, field, fields
from typing import TypeVar

import numpy as np

from .._require import require, require_int, require_spec
from ..channel import ChannelSpec, apply_channel, channel_time_map_us
from ..channel.physical import PhysicalChannel, apply_physical, physical_time_map_us
from ..intervals import clopper_pearson
from ..plan import FramePlan, as_plan
from ..pulses import PulseTrain
from ..spec.model import FrameSpec
from .allocator import keep_freed_memory
from .batch import Batch, random_batch

DEFAULT_CHUNK_FRAMES = 500
#: most chips (symbol units, ``max_frame_bits * units_per_bit`` per copy) of transmissions
#: in one chunk: longer transmissions get fewer per chunk, so a chunk's arrays stay small
#: (the decoder's temporaries of a few MB each are then reused by the allocator, not
#: returned to the operating system and page-faulted back in: 1.2-1.8x faster per
#: transmission than 500 transmissions of the example specs on the build machine)
CHUNK_CHIPS = 100_000

T = TypeVar("T")
Decoder = Callable[[FrameSpec, PulseTrain], list]
Progress = Callable[[int], None]
#: what a stress run sends frames through: the pulse-level model or the physical link
Channel = ChannelSpec | PhysicalChannel


@dataclass(frozen=True)
class Counts:
    """Integer tallies of one chunk (they add up across chunks)."""

    frames: int = 0
    ok: int = 0
    lost_sync: int = 0
    bad_check: int = 0
    false_accepts: int = 0
    copies_ok: int = 0
    decoded: int = 0
    stray_frames: int = 0
    stray_accepts: int = 0
    pulses: int = 0

    def __add__(self, other: Counts) -> Counts:
        return Counts(*(getattr(self, f.name) + getattr(other, f.name) for f in fields(self)))


@dataclass(frozen=True)
class StressResult:
    """Outcome of a stress run.

    frames: transmissions sent (each ``spec.repeats`` copies); ok: transmissions with at
    least one copy decoded with the check passing and every field right; per: 1 - ok /
    frames, with ``per_ci95`` its 95 % Clopper-Pearson interval. Failed transmissions are
    ``lost_sync`` (nothing decoded in their time window) or ``bad_check`` (something
    decoded, nothing right). false_accepts: decoded frames whose check passed but whose
    fields are wrong (each one counted, also in transmissions that were ok).
    stray_frames / stray_accepts: frames decoded outside every window (in lead-in noise).
    copies_ok: correct decoded frames (up to frames * repeats). frames_per_s: end-to-end
    throughput (wall clock, not part of equality).
    """

    spec_name: str
    channel: Channel
    seed: int
    frames: int
    ok: int
    per: float
    per_ci95: tuple[float, float]
    lost_sync: int
    bad_check: int
    false_accepts: int
    false_accept_ci95: tuple[float, float]
    copies_ok: int
    decoded: int
    stray_frames: int
    stray_accepts: int
    pulses: int
    chunk_frames: int
    elapsed_s: float = field(compare=False)
    frames_per_s: float = field(compare=False)
    workers: int = field(compare=False)

    def to_dict(self) -> dict[str, object]:
        """Return the result as a JSON-ready dict."""
        d = {f.name: getattr(self, f.name) for f in fields(self)}
        d["channel"] = self.channel.to_dict()
        d["per_ci95"] = list(self.per_ci95)
        d["false_accept_ci95"] = list(self.false_accept_ci95)
        return d


def copy_loss(r: StressResult, repeats: int) -> tuple[float, tuple[float, float]]:
    """Return the fraction of copies (``r.frames * repeats``) not decoded right and its
    95 % Clopper-Pearson interval."""
    n = r.frames * repeats
    lost = max(n - r.copies_ok, 0)
    return (lost / n if n else 0.0), clopper_pearson(lost, n)


def match_frames(batch: Batch, decoded: Sequence, time_map_us: np.ndarray) -> Counts:
    """Return the tallies of ``decoded`` frames (objects with ``start_us``, ``crc_ok`` and
    ``payload_hex``, such as ``DecodedFrame``) against the sent ``batch``.

    ``time_map_us`` holds the window bounds (n + 1 values, output times) of the
    transmissions: transmission i owns [time_map_us[i], time_map_us[i + 1]).
    """
    if not isinstance(decoded, list | tuple):
        decoded = list(decoded)
    n = batch.n
    m = len(decoded)
    # list comprehensions, then one conversion each (cheaper than generators; a bool
    # array takes each value's truth as bool() does)
    start_us = np.fromiter([fr.start_us for fr in decoded], np.float64, m)
    crc_ok = np.fromiter([fr.crc_ok for fr in decoded], bool, m)
    window = np.searchsorted(time_map_us, start_us, side="right") - 1
    inside = (window >= 0) & (window < n)
    got_any = np.zeros(n, bool)
    got_any[window[inside]] = True
    accepted = np.flatnonzero(inside & crc_ok)
    right = _payload_right(batch, decoded, accepted, window[accepted])
    got_ok = np.zeros(n, bool)
    got_ok[window[accepted[right]]] = True
    copies_ok = int(np.count_nonzero(right))
    stray = m - int(np.count_nonzero(inside))
    return Counts(
        frames=n,
        ok=int(got_ok.sum()),
        lost_sync=int((~got_any).sum()),
        bad_check=int((got_any & ~got_ok).sum()),
        false_accepts=accepted.size - copies_ok,
        copies_ok=copies_ok,
        decoded=m,
        stray_frames=stray,
        stray_accepts=int(np.count_nonzero(crc_ok & ~inside)),
    )


def _payload_right(
    batch: Batch, decoded: Sequence, frames: np.ndarray, windows: np.ndarray
) -> np.ndarray:
    """Return, for decoded frame ``frames[j]`` (in window ``windows[j]``), whether its
    payload is the one sent in that window (bool array)."""
    sent = batch.payload_hex
    pairs = zip(frames.tolist(), windows.tolist(), strict=True)
    return np.fromiter([decoded[k].payload_hex == sent[i] for k, i in pairs], bool, frames.size)


def reference_decoder(spec: object, train: PulseTrain) -> list:
    """The reference decoder as stress runs call it (frames with a bad check included);
    ``spec``: a FrameSpec, FramePlan or the decoder's compiled constants
    (``decode.compile_decoder``)."""
    from ..decode import decode

    return decode(spec, train, include_bad=True)  # type: ignore[arg-type]


def compile_receiver(spec: object) -> object:
    """Return the reference decoder's constants of ``spec`` (``decode.compile_decoder``:
    a FrameSpec or FramePlan is compiled, compiled constants are returned as they are),
    built once per run and sent with every chunk (a few kB), so no chunk compiles them."""
    from ..decode import compile_decoder

    return compile_decoder(spec)


def run_chunk(
    spec: object,
    channel: Channel,
    n: int,
    seed_seq: np.random.SeedSequence,
    gap_us: float | None = None,
    decoder: Decoder | None = None,
) -> Counts:
    """Return the tallies of one chunk: ``n`` random transmissions, one batch.

    ``spec``: a FrameSpec, a FramePlan or the decoder constants of
    :func:`compile_receiver` (then nothing is compiled here)."""
    if decoder is None:
        receiver = compile_receiver(spec)  # type: ignore[arg-type]
        plan: FramePlan = receiver.plan  # type: ignore[attr-defined]
    else:
        plan = spec if isinstance(spec, FramePlan) else (
            as_plan(spec) if isinstance(spec, FrameSpec) else spec.plan)  # type: ignore[attr-defined]
    rng = np.random.default_rng(seed_seq)
    batch = random_batch(plan, n, rng, gap_us=gap_us)
    half = batch.gap_us / 2
    bounds = np.append(batch.starts_us - half, batch.ends_us[-1] + half)
    if isinstance(channel, PhysicalChannel):
        rx = apply_physical(batch.train, channel, rng, burst_starts_us=batch.starts_us)
        bounds = physical_time_map_us(bounds, channel, batch.starts_us)
    else:
        rx = apply_channel(batch.train, channel, rng, burst_starts_us=batch.starts_us,
                           pulse_ends_us=batch.pulse_ends_us)
        bounds = channel_time_map_us(bounds, channel, batch.starts_us)
    decoded = (reference_decoder(receiver, rx) if decoder is None
               else decoder(plan.spec, rx))
    counts = match_frames(batch, decoded, bounds)
    return counts + Counts(pulses=len(rx))


def chunk_limit(spec: object) -> int:
    """Return the most transmissions of ``spec`` (a FrameSpec, FramePlan or decoder
    constants) one chunk holds: ``CHUNK_CHIPS`` over the chips of one transmission."""
    plan = spec if isinstance(spec, FramePlan) else (
        as_plan(spec) if isinstance(spec, FrameSpec) else spec.plan)  # type: ignore[attr-defined]
    chips = plan.spec.max_frame_bits * plan.line_code.units_per_bit * plan.repeats
    return max(1, int(CHUNK_CHIPS // chips))


def chunk_plan(n_frames: int, chunk_frames: int) -> list[int]:
    """Return the number of transmissions in each chunk (all ``chunk_frames`` but the last)."""
    if n_frames < 0 or chunk_frames < 1:
        raise ValueError("n_frames must be >= 0 and chunk_frames >= 1")
    full, rest = divmod(n_frames, chunk_frames)
    return [chunk_frames] * full + ([rest] if rest else [])


def _ignore_interrupt() -> None:
    """Pool workers leave Ctrl-C to the parent, which stops the run and reports."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _start_worker() -> None:
    """Initialise a stress worker process: Ctrl-C left to the parent, freed memory kept."""
    _ignore_interrupt()
    keep_freed_memory()


def worker_pool(workers: int) -> ProcessPoolExecutor:
    """Return a process pool of ``workers`` stress workers (as ``run_stress`` starts one):
    for callers that keep one pool across runs; pass it as ``executor``."""
    require_int(workers, "workers", 1)
    return ProcessPoolExecutor(max_workers=workers, initializer=_start_worker)


@contextmanager
def pool_for(executor: Executor | None, workers: int) -> Iterator[Executor | None]:
    """Yield ``executor``, else a process pool of ``workers`` (shut down afterwards) when
    ``workers > 1``, else None (run in this process)."""
    if executor is not None or workers <= 1:
        yield executor
        return
    pool = worker_pool(workers)
    try:
        yield pool
    finally:
        pool.shutdown(cancel_futures=True)


def map_unordered(
    fn: Callable[..., T], arg_tuples: Sequence[tuple], pool: Executor | None
) -> Iterator[tuple[int, T]]:
    """Yield (index, fn(*args)) for every argument tuple, in completion order.

    With a pool, Ctrl-C is held back while futures are submitted and waited on and raised
    as KeyboardInterrupt between completions: raised inside ``concurrent.futures`` it can
    leave a future's lock held, and the pool's shutdown then waits forever.
    """
    if pool is None:
        for k, a in enumerate(arg_tuples):
            yield k, fn(*a)
        return
    with _interrupt_as_flag() as stop:
        futures = {}
        for k, a in enumerate(arg_tuples):
            if stop.is_set():
                break
            futures[pool.submit(fn, *a)] = k
        pending = set(futures)
        while pending and not stop.is_set():
            done, pending = wait(pending, timeout=0.2, return_when=FIRST_COMPLETED)
            for fut in done:
                yield futures[fut], fut.result()
    if stop.is_set():
        raise KeyboardInterrupt


@contextmanager
def _interrupt_as_flag() -> Iterator[threading.Event]:
    """Yield an Event that SIGINT sets instead of raising (main thread only; elsewhere
    signals are not delivered to the thread anyway)."""
    stop = threading.Event()
    if threading.current_thread() is not threading.main_thread():
        yield stop
        return
    previous = signal.signal(signal.SIGINT, lambda *_: stop.set())
    try:
        yield stop
    finally:
        signal.signal(signal.SIGINT, previous)


def run_stress(
    spec: FrameSpec | FramePlan,
    channel: Channel,
    n_frames: int,
    *,
    seed: int = 0,
    executor: Executor | None = None,
    workers: int = 1,
    chunk_frames: int = DEFAULT_CHUNK_FRAMES,
    gap_us: float | None = None,
    decoder: Decoder | None = None,
    progress: Progress | None = None,
) -> StressResult:
    """Return the outcome of sending ``n_frames`` random transmissions of ``spec`` through
    ``channel`` and the reference decoder (or ``decoder(spec, train)``, which must be
    picklable for a process pool).

    ``executor``: any ``concurrent.futures.Executor`` (e.g. ``Client.get_executor()`` of
    Dask distributed); else a process pool of ``workers`` when ``workers > 1``, else
    in-process. ``gap_us``: idle time between transmissions (default ``spec.gap_us``).
    ``progress(k)`` is called as chunks of ``k`` transmissions finish. Same arguments ->
    same result, whatever the executor or worker count. A chunk holds at most
    ``CHUNK_CHIPS`` chips of transmissions (fewer than ``chunk_frames`` for long ones).
    """
    require_spec(spec, "spec")
    require(channel, (ChannelSpec, PhysicalChannel), "channel",
            "e.g. ookframe.get_preset('ideal') or ookframe.PhysicalChannel()")
    require_int(n_frames, "n_frames")
    t0 = time.perf_counter()
    spec_only = spec.spec if isinstance(spec, FramePlan) else spec
    c = Counts()
    try:  # Ctrl-C anywhere from here on gives the partial result (none counted yet at first)
        # compiled once per run: every chunk gets the decoder constants (plan included)
        receiver = compile_receiver(spec) if decoder is None else as_plan(spec)
        chunk_frames = min(chunk_frames, chunk_limit(receiver))
        sizes = chunk_plan(n_frames, chunk_frames)
        seqs = np.random.SeedSequence(seed).spawn(len(sizes))
        args = [(receiver, channel, n, q, gap_us, decoder)
                for n, q in zip(sizes, seqs, strict=True)]
        with pool_for(executor, workers) as pool:
            for _, counts in map_unordered(run_chunk, args, pool):
                c = c + counts  # integer sums: the order of completion does not matter
                if progress is not None:
                    progress(counts.frames)
    except KeyboardInterrupt:
        raise StressInterrupted(_result(spec_only, channel, seed, c, chunk_frames, t0,
                                        workers if executor is None else 0)) from None
    return _result(spec_only, channel, seed, c, chunk_frames, t0,
                   workers if executor is None else 0)


class StressInterrupted(KeyboardInterrupt):
    """Ctrl-C during ``run_stress``; ``partial`` holds the chunks counted until then."""

    def __init__(self, partial: StressResult) -> None:
        super().__init__("stress run interrupted")
        self.partial = partial


def _result(spec: FrameSpec, channel: Channel, seed: int, c: Counts, chunk_frames: int,
            t0: float, workers: int) -> StressResult:
    """The StressResult of the counts ``c`` (PER from integer counts: exact to the float)."""
    elapsed = time.perf_counter() - t0
    return stress_result(spec, channel, seed, c, chunk_frames, elapsed, workers)


def stress_result(spec: FrameSpec, channel: Channel, seed: int, c: Counts,
                  chunk_frames: int, elapsed_s: float, workers: int) -> StressResult:
    """Return the StressResult of a run's summed chunk tallies ``c``."""
    elapsed = elapsed_s
    n_copies = c.frames * spec.repeats
    return StressResult(
        spec_name=spec.name,
        channel=channel,
        seed=seed,
        frames=c.frames,
        ok=c.ok,
        per=(c.frames - c.ok) / c.frames if c.frames else 0.0,
        per_ci95=clopper_pearson(c.frames - c.ok, c.frames),
        lost_sync=c.lost_sync,
        bad_check=c.bad_check,
        false_accepts=c.false_accepts,
        false_accept_ci95=clopper_pearson(min(c.false_accepts, n_copies), n_copies),
        copies_ok=c.copies_ok,
        decoded=c.decoded,
        stray_frames=c.stray_frames,
        stray_accepts=c.stray_accepts,
        pulses=c.pulses,
        chunk_frames=chunk_frames,
        elapsed_s=elapsed,
        frames_per_s=c.frames / elapsed if elapsed > 0 else float("inf"),
        workers=workers,
    )
