"""Benchmark: reference decoder throughput on a long noisy capture.

Builds a seeded capture of >= 1,000,000 pulses: transmissions of the beehive-scale example
(Manchester, 3 repeats) with their own clock error (+-5 %) and edge jitter (+-15 % of a
unit), separated by bursts of random idle-noise pulses. Decodes it and prints pulses per
second, frames found and the time relative to one ``np.diff`` pass over the same
durations, measured in the same run.

    python bench/decode_throughput.py [--pulses N] [--seed S] [--rounds R]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np

from ookframe.decode import decode
from ookframe.frame import encode, random_values
from ookframe.pulses import PulseTrain, merge_runs
from ookframe.spec_io import load_spec

SPEC = Path(__file__).resolve().parent.parent / "examples" / "hive_scale.toml"


def _transmission(spec, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Return (levels, durations_us): idle noise, quiet, one impaired transmission, quiet."""
    unit = spec.unit_us
    noise_n = int(rng.integers(100, 600)) * 2  # even: starts with a space, ends with a mark
    noise_lv = np.arange(noise_n, dtype=np.uint8) % 2
    noise_du = unit * np.exp(rng.uniform(np.log(0.05), np.log(40.0), noise_n))
    tx = encode(spec, random_values(spec, rng))
    t = np.concatenate(([0.0], np.cumsum(tx.durations_us)))
    t[1:-1] += rng.uniform(-0.15, 0.15, t.size - 2) * unit  # edge jitter
    tx_du = np.diff(t) * (1.0 + rng.uniform(-0.05, 0.05))  # this transmitter's clock
    quiet = unit * rng.uniform(20.0, 80.0, 2)
    space = np.zeros(1, np.uint8)
    return (np.concatenate((noise_lv, space, tx.levels, space)),
            np.concatenate((noise_du, quiet[:1], tx_du, quiet[1:])))


def build_capture(n_pulses: int, rng: np.random.Generator) -> tuple[PulseTrain, int]:
    """Return (capture of at least ``n_pulses`` pulses, frames sent)."""
    spec = load_spec(SPEC)
    levels: list[np.ndarray] = []
    durations: list[np.ndarray] = []
    train = PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
    sent = raw = 0
    while len(train) < n_pulses:  # merging at the joins loses a few pulses: top up
        goal = raw + n_pulses - len(train)
        while raw < goal:
            lv, du = _transmission(spec, rng)
            levels.append(lv)
            durations.append(du)
            raw += lv.size
            sent += spec.repeats
        train = merge_runs(np.concatenate(levels), np.concatenate(durations))
    return train, sent


def best_time(fn, rounds: int) -> tuple[float, float]:
    """Return the fastest of ``rounds`` calls of ``fn``: (wall seconds, CPU seconds of it).

    CPU time is shown too because on a shared machine the wall time includes waiting for
    the core."""
    best = (float("inf"), float("inf"))
    for _ in range(rounds):
        w0, c0 = time.perf_counter(), time.process_time()
        fn()
        best = min(best, (time.perf_counter() - w0, time.process_time() - c0))
    return best


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pulses", type=int, default=1_000_000)
    ap.add_argument("--seed", type=int, default=2024)
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args()
    spec = load_spec(SPEC)
    train, sent = build_capture(args.pulses, np.random.default_rng(args.seed))
    n = len(train)
    frames = decode(spec, train)
    t_dec, cpu_dec = best_time(lambda: decode(spec, train), args.rounds)
    t_diff, _ = best_time(lambda: np.diff(train.durations_us), max(args.rounds, 20))
    good = sum(f.crc_ok for f in frames)
    print(f"capture: {n} pulses, {sent} frames sent ({spec.name}, seed {args.seed})")
    print(f"decoded: {len(frames)} frames, {good} with a good check")
    print(f"decode:  {t_dec * 1e3:.1f} ms wall ({cpu_dec * 1e3:.1f} ms CPU)  ->  "
          f"{n / t_dec / 1e6:.2f} M pulses/s")
    print(f"np.diff: {t_diff * 1e3:.2f} ms  ->  decode / np.diff = {t_dec / t_diff:.0f}x")

if __name__ == "__main__":
    main()
