"""Stress throughput: frames/s end to end (batch encode + channel + decode + matching) for
a 16-byte-payload Manchester spec through the budget-superregen preset.

Prints the figures and the ratio to the cost, measured in the same run, of drawing one
Gaussian jitter sample per pulse of the same frames with numpy (the floor of any
Monte Carlo run of this channel). End-to-end figures: "steady" runs on a process pool
started (and warmed with one small run) beforehand, as a long run or a sweep sees it;
"cold" includes starting the pool, as one short ``ookframe stress`` call sees it.

    python bench/stress_throughput.py [--frames N] [--workers W]
"""

from __future__ import annotations

import argparse
import time
from concurrent.futures import ProcessPoolExecutor

import numpy as np

from ookframe.channel import apply_channel, get_preset
from ookframe.spec_io import spec_from_dict
from ookframe.stress import run_stress
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


def best_of(fn, repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=20000)
    ap.add_argument("--workers", type=int, default=2)
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
    with ProcessPoolExecutor(max_workers=args.workers) as pool:
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


if __name__ == "__main__":
    main()
