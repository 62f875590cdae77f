"""Benchmark: samples per second through the sampled-capture front end, on one core.

Makes a seeded complex baseband capture (the hive-scale example's transmissions keyed onto a
carrier, Gaussian noise at ``--snr-db``, ``--rate`` samples per second) and feeds it in
blocks of ``--block`` samples to ``SampleSlicer`` (envelope, low-pass, trackers, hysteresis
slicer) at decimation 1 and ``--decimate``. The baseline, measured in the same run on the same
samples, is the least a front end can do: magnitude and one fixed threshold with numpy
(``np.abs(x) > t`` and the positions where it changes). Prints samples/s and the ratio.

    python bench/frontend_throughput.py [--seconds S] [--rate HZ] [--decimate Q]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np

from ookframe.frame import encode, random_values
from ookframe.frontend.config import FrontEndConfig
from ookframe.frontend.slicer import SampleSlicer
from ookframe.spec_io import load_spec

SPEC = Path(__file__).resolve().parent.parent / "examples" / "hive_scale.toml"


def make_capture(seconds: float, rate_hz: float, snr_db: float, seed: int) -> np.ndarray:
    """Complex64 samples: transmissions of the example with idle gaps, plus noise."""
    spec = load_spec(SPEC)
    rng = np.random.default_rng(seed)
    n = int(seconds * rate_hz)
    key = np.zeros(n, np.float32)
    at = 0
    while at < n:
        train = encode(spec, random_values(spec, rng))
        edges = np.concatenate(([0.0], np.cumsum(train.durations_us))) * rate_hz / 1e6
        for lv, a, b in zip(train.levels, edges[:-1], edges[1:], strict=True):
            if lv:
                key[min(n, at + int(a)):min(n, at + int(b))] = 1.0
        at += int(edges[-1]) + int(0.05 * rate_hz)
    sigma = 10 ** (-snr_db / 20) / np.sqrt(2)
    noise = rng.normal(0, sigma, (n, 2)).astype(np.float32).view(np.complex64)[:, 0]
    return (key * 0.5 + noise * 0.5).astype(np.complex64)


def run_front_end(x: np.ndarray, rate_hz: float, block: int, decimate: int) -> tuple[float, int]:
    sl = SampleSlicer(FrontEndConfig(decimate=decimate), rate_hz, True)
    t0 = time.process_time()
    pulses = 0
    for i in range(0, x.size, block):
        pulses += len(sl.feed(x[i:i + block]))
    pulses += len(sl.finish())
    return time.process_time() - t0, pulses


def run_baseline(x: np.ndarray, block: int) -> float:
    t0 = time.process_time()
    for i in range(0, x.size, block):
        m = np.abs(x[i:i + block]) > 0.25
        np.flatnonzero(m[1:] != m[:-1])
    return time.process_time() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seconds", type=float, default=10.0, help="capture length (default 10 s)")
    ap.add_argument("--rate", type=float, default=2.0e6, help="sample rate (default 2 MHz)")
    ap.add_argument("--snr-db", type=float, default=15.0)
    ap.add_argument("--block", type=int, default=1 << 18, help="samples per feed")
    ap.add_argument("--decimate", type=int, default=8)
    ap.add_argument("--seed", type=int, default=0)
    a = ap.parse_args()
    x = make_capture(a.seconds, a.rate, a.snr_db, a.seed)
    base_s = run_baseline(x, a.block)
    print(f"capture: {x.size:,} complex64 samples at {a.rate:g} Hz, SNR {a.snr_db:g} dB")
    print(f"baseline (np.abs + fixed threshold): {x.size / base_s / 1e6:8.1f} M samples/s")
    for q in (1, a.decimate):
        s, pulses = run_front_end(x, a.rate, a.block, q)
        print(f"front end, decimate {q:>2}:          {x.size / s / 1e6:8.1f} M samples/s "
              f"({pulses:,} pulses; {base_s / s:.2f} x baseline speed)")


if __name__ == "__main__":
    main()
