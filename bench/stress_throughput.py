"""Stress throughput: frames/s end to end (batch encode + channel + decode + matching) for
a 16-byte-payload Manchester spec through the budget-superregen preset.

Prints the figures and the ratio to the cost, measured in the same run, of drawing one
Gaussian jitter sample per pulse of the same frames with numpy (the floor of any
Monte Carlo run of this channel). End-to-end figures: "steady" runs on a process pool
started (and warmed with one small run) beforehand, as a long run or a sweep sees it;
"cold" includes starting the pool, as one short ``ookframe stress`` call sees it.

With ``--all-examples`` it then runs every example spec (``ookframe/examples/``) end to
end the same way, cold and steady, each against the 20,000 frames/s target.

    python bench/stress_throughput.py [--frames N] [--workers W] [--all-examples]
"""

from __future__ import annotations

import argparse
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

import ookframe
from ookframe.channel import apply_channel, get_preset
from ookframe.spec_io import spec_from_dict
from ookframe.stress import run_stress, worker_pool
from ookframe.stress.batch import random_batch
from ookframe.stress.runner import reference_decoder

SPEC = spec_from_dict({
    "frame": {"name": "bench16", "bit_rate_bps": 2000, "repeats": 1, "gap_us": 10000},
    "line_code": {"name": "manchester"},
    "preamble": {"pattern": 0xAA, "pattern_bits": 8, "count": 2},
    "sync": {"value": 0x2DD4, "length_bits": 16},
    "fields": [{"name": "payload_hi", "width_bits": 64}, {"name": "payload_lo", "width_bits": 64}],
    "check": {"model": "CRC-16/KERMIT"},
})


TARGET_FPS = 20_000
#: received pulses per transmission of the bench spec (set by ``main`` before the table)
BENCH_PULSES = 1.0
EXAMPLES = Path(ookframe.__file__).resolve().parent / "examples"


def best_of(fn, repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def _cpu_fps(spec, ch, n: int) -> float:
    """Frames/s of ``n`` transmissions in this process by its CPU time (best of 2)."""
    run_stress(spec, ch, 200, seed=1, workers=1)  # warm up
    times = []
    for _ in range(2):
        t0 = time.process_time()
        run_stress(spec, ch, n, seed=0, workers=1)
        times.append(time.process_time() - t0)
    return n / min(times)


def per_worker(spec, ch, n: int, keep: bool = True) -> float:
    """Return the frames/s of one worker process (CPU time; steadier than the wall clock on
    a shared machine): a stress worker as ``run_stress`` starts it (freed memory kept), or
    with ``keep=False`` a plain process with the C allocator's defaults (the baseline)."""
    pool = worker_pool(1) if keep else ProcessPoolExecutor(max_workers=1)
    with pool:
        return pool.submit(_cpu_fps, spec, ch, n).result()


def end_to_end(spec, ch, n: int, workers: int) -> tuple[float, float, float, float]:
    """Return (cold frames/s, steady frames/s best of 3, PER, received pulses per
    transmission) of ``spec`` on ``workers``."""
    cold = run_stress(spec, ch, n, seed=0, workers=workers)
    with worker_pool(workers) as pool:
        run_stress(spec, ch, 1000 * workers, seed=1, executor=pool)  # warm up
        r = max((run_stress(spec, ch, n, seed=0, executor=pool) for _ in range(3)),
                key=lambda x: x.frames_per_s)
    assert r == cold  # same counts whatever runs the chunks
    return cold.frames_per_s, r.frames_per_s, r.per, r.pulses / r.frames


def all_examples(ch, n: int, workers: int, bench_fps: float) -> None:
    """Print end-to-end frames/s of every example spec beside the bench spec's."""
    print(f"\nevery example, end to end on {workers} workers ({n} frames a run, preset "
          f"budget-superregen; target {TARGET_FPS:,} frames/s steady):")
    print(f"  {'spec':17s} {'line code':15s} {'cold':>9s} {'steady':>9s} {'PER':>7s} "
          f"{'x bench':>7s} {'1 worker':>9s} {'default':>8s} {'pulses':>6s} {'ns/pulse':>8s}  target")
    one = per_worker(SPEC, ch, n // 4)
    print(f"  {'bench16':17s} {'manchester':15s} {'':9s} {bench_fps:9,.0f} {'':7s} "
          f"{1.0:7.2f} {one:9,.0f} "
          f"{per_worker(SPEC, ch, n // 4, keep=False):8,.0f} {BENCH_PULSES:6.0f} "
          f"{1e9 / (one * BENCH_PULSES):8.0f}  {'PASS' if bench_fps >= TARGET_FPS else 'FAIL'}")
    met = True
    for path in sorted(EXAMPLES.glob("*.toml")):
        spec, _ = ookframe.load_spec_and_defaults(path)
        cold, steady, per, pulses = end_to_end(spec, ch, n, workers)
        met &= steady >= TARGET_FPS
        one = per_worker(spec, ch, n // 4)
        print(f"  {spec.name:17s} {spec.line_code.name:15s} {cold:9,.0f} {steady:9,.0f} "
              f"{per:7.4f} {steady / bench_fps:7.2f} {one:9,.0f} "
              f"{per_worker(spec, ch, n // 4, keep=False):8,.0f} {pulses:6.0f} "
              f"{1e9 / (one * pulses):8.0f}  "
              f"{'PASS' if steady >= TARGET_FPS else 'FAIL'}", flush=True)
    print("  (1 worker: frames/s of one stress worker process by its CPU time, run_stress "
          "workers=1; default: the same in a process with the C allocator's defaults, "
          "i.e. without keep_freed_memory; pulses: received pulses per transmission, idle "
          "noise and repeats included; ns/pulse: one worker's CPU time per received pulse, "
          "end to end)")
    print(f"target every example >= {TARGET_FPS:,} frames/s steady: {'PASS' if met else 'FAIL'}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=20000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--all-examples", action="store_true",
                    help="also run every example spec end to end")
    args = ap.parse_args()
    ch = get_preset("budget-superregen")
    n = args.frames

    # stage costs on one chunk (one core)
    chunk = 500
    rng = np.random.default_rng(1)
    batch = random_batch(SPEC, chunk, rng)
    rx = apply_channel(batch.train, ch, rng, burst_starts_us=batch.starts_us)
    t_batch = best_of(lambda: random_batch(SPEC, chunk, np.random.default_rng(1)))
    t_chan = best_of(lambda: apply_channel(batch.train, ch, np.random.default_rng(2),
                                           burst_starts_us=batch.starts_us))
    t_dec = best_of(lambda: reference_decoder(SPEC, rx))
    print(f"spec: 16-byte Manchester, {len(batch.train) / chunk:.0f} pulses/frame sent, "
          f"{len(rx) / chunk:.0f} received (idle noise included)")
    for name, t in (("batch encode", t_batch), ("channel", t_chan), ("decode", t_dec)):
        print(f"  {name:13s} {t / chunk * 1e6:8.1f} µs/frame  {chunk / t:10,.0f} frames/s (1 core)")

    # end to end
    t_one = best_of(lambda: run_stress(SPEC, ch, n // 4, seed=0, workers=1), 1)
    fps_one = (n // 4) / t_one
    print(f"end to end, 1 worker      : {fps_one:10,.0f} frames/s")
    cold = run_stress(SPEC, ch, n, seed=0, workers=args.workers)
    print(f"end to end, {args.workers} workers cold: {cold.frames_per_s:10,.0f} frames/s "
          "(pool start-up included)")
    with worker_pool(args.workers) as pool:
        run_stress(SPEC, ch, 2 * chunk * args.workers, seed=1, executor=pool)  # warm up
        r = max((run_stress(SPEC, ch, n, seed=0, executor=pool) for _ in range(3)),
                key=lambda x: x.frames_per_s)
    assert r == cold  # same counts whatever runs the chunks
    print(f"end to end, {args.workers} workers steady: {r.frames_per_s:10,.0f} frames/s "
          f"({r.frames} frames, PER {r.per:.4f}, target 20,000, best of 3)")

    # baseline: the same number of jitter samples (one per received pulse) with numpy
    samples = r.pulses
    t_base = best_of(lambda: np.random.default_rng(3).normal(0.0, 4.0, samples))
    print(f"baseline: {samples:,} numpy Gaussian samples in {t_base * 1e3:.1f} ms "
          f"({n / t_base:,.0f} frames/s equivalent)")
    print(f"ratio end-to-end time / baseline time: {r.elapsed_s / t_base:.1f}")
    if args.all_examples:
        global BENCH_PULSES
        BENCH_PULSES = r.pulses / r.frames
        all_examples(ch, n, args.workers, r.frames_per_s)


if __name__ == "__main__":
    main()
