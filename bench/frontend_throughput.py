"""Benchmark: samples per second through the sampled-capture front end, on one core.

Makes a seeded complex baseband capture (the hive-scale example's transmissions keyed onto a
carrier, Gaussian noise at ``--snr-db``, ``--rate`` samples per second), writes it as
unsigned 8-bit and signed 16-bit I/Q files and as 16-bit WAV (mono: the carrier's magnitude,
as a receiver's envelope output; stereo: left I, right Q), and times each file read and
sliced through the public API (``sampled_info``, ``open_slicer``, ``iter_sliced``: reader,
envelope, low-pass, trackers, hysteresis slicer) at decimation 1 and ``--decimate``; also
the complex64 samples already in memory fed in ``--block`` pieces.

The baseline, measured in the same run on the same in-memory samples, is the least a front
end can do: magnitude and one fixed threshold with numpy (``np.abs(x) > t`` and the places
where it changes). Threads are pinned to one (OMP / OpenBLAS / MKL variables set before
numpy loads); every figure is the best of ``--repeat`` runs of this process's CPU time, so
other load on a shared machine counts less. Prints samples/s, the ratio to the baseline and
the target (>= 20 M samples/s on one core), and the peak memory traced while slicing the
u8 file (bounded by the block, not the file).

    python bench/frontend_throughput.py [--seconds S] [--rate HZ] [--decimate Q] [--repeat N]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import argparse  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

from ookframe.captures.sampled import sampled_info, write_samples  # noqa: E402
from ookframe.frame import encode, random_values  # noqa: E402
from ookframe.frontend import FrontEndConfig, SampleSlicer, iter_sliced, open_slicer  # noqa: E402
from ookframe.spec_io import load_spec  # noqa: E402

SPEC = Path(__file__).resolve().parent.parent / "examples" / "hive_scale.toml"
#: samples per second on one core the front end is meant to reach (issue target)
TARGET_SAMPLES_PER_S = 20e6


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


def write_files(x: np.ndarray, rate_hz: float, folder: Path) -> dict[str, dict[str, object]]:
    """Write the capture in the benchmarked formats; return label -> sampled_info options."""
    files = {
        "u8 I/Q": (folder / "cap.u8.iq", x, None, {"sample_rate_hz": rate_hz}),
        "s16 I/Q": (folder / "cap.s16.iq", x, None, {"sample_rate_hz": rate_hz}),
        "16-bit WAV, mono envelope": (folder / "env.wav", np.abs(x), "s16", {}),
        "16-bit WAV, stereo I/Q": (folder / "iq.wav", x, "s16", {"channel": "iq"}),
    }
    out = {}
    for label, (path, samples, sample_type, options) in files.items():
        write_samples(path, samples, rate_hz, sample_type=sample_type)
        out[label] = {"path": path, **options}
    return out


def best_of(repeat: int, run) -> tuple[float, int]:
    """Return (least CPU seconds, pulses) over ``repeat`` calls of ``run() -> pulses``."""
    best, pulses = np.inf, 0
    for _ in range(repeat):
        t0 = time.process_time()
        pulses = run()
        best = min(best, time.process_time() - t0)
    return best, pulses


def in_memory(x: np.ndarray, rate_hz: float, block: int, decimate: int) -> int:
    sl = SampleSlicer(FrontEndConfig(decimate=decimate), rate_hz, True)
    pulses = 0
    for i in range(0, x.size, block):
        pulses += len(sl.feed(x[i:i + block]))
    return pulses + len(sl.finish())


def from_file(options: dict[str, object], decimate: int) -> int:
    info = sampled_info(**options)  # type: ignore[arg-type]
    slicer = open_slicer(info, FrontEndConfig(decimate=decimate))
    return sum(len(t) for t in iter_sliced(info, slicer))


def baseline(x: np.ndarray, block: int) -> int:
    changes = 0
    for i in range(0, x.size, block):
        m = np.abs(x[i:i + block]) > 0.25
        changes += np.flatnonzero(m[1:] != m[:-1]).size
    return changes


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seconds", type=float, default=5.0, help="capture length (default 5 s)")
    ap.add_argument("--rate", type=float, default=2.0e6, help="sample rate (default 2 MHz)")
    ap.add_argument("--snr-db", type=float, default=15.0)
    ap.add_argument("--block", type=int, default=1 << 18, help="samples per in-memory feed")
    ap.add_argument("--decimate", type=int, default=8)
    ap.add_argument("--repeat", type=int, default=3, help="runs per figure, best kept")
    ap.add_argument("--seed", type=int, default=0)
    a = ap.parse_args()
    x = make_capture(a.seconds, a.rate, a.snr_db, a.seed)
    n = x.size
    print(f"capture: {n:,} samples at {a.rate:g} Hz, SNR {a.snr_db:g} dB; one thread; best of "
          f"{a.repeat} runs (CPU time)")
    base_s, _ = best_of(a.repeat, lambda: baseline(x, a.block))
    print(f"baseline, np.abs + one fixed threshold (in memory): {n / base_s / 1e6:8.1f} M samples/s")
    with tempfile.TemporaryDirectory() as tmp:
        files = write_files(x, a.rate, Path(tmp))
        runs = [("complex64 in memory", lambda q: in_memory(x, a.rate, a.block, q))]
        runs += [(label, lambda q, o=opts: from_file(o, q)) for label, opts in files.items()]
        worst = np.inf
        for label, run in runs:
            for q in (1, a.decimate):
                s, pulses = best_of(a.repeat, lambda run=run, q=q: run(q))
                rate = n / s
                if q == 1:
                    worst = min(worst, rate)
                print(f"front end, {label:<27} decimate {q:>2}: {rate / 1e6:8.1f} M samples/s "
                      f"({pulses:,} pulses; {base_s / s:.3f} x baseline, "
                      f"{rate / TARGET_SAMPLES_PER_S:.2f} x target)")
        tracemalloc.start()
        from_file(files["u8 I/Q"], 1)
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
    print(f"slowest at decimation 1: {worst / 1e6:.1f} M samples/s, target "
          f"{TARGET_SAMPLES_PER_S / 1e6:g} M: {'met' if worst >= TARGET_SAMPLES_PER_S else 'NOT met'}")
    print(f"peak memory traced while slicing the u8 file ({n * 2 / 1e6:.0f} MB): "
          f"{peak / 1e6:.1f} MB")


if __name__ == "__main__":
    main()
