"""Benchmark: peak memory and speed of ``ookframe decode`` on a very big CSV capture.

Writes (streamed, block by block) a seeded CSV of ``--pulses`` pulses (default 10^8) to a
temporary folder: bursts of random idle-noise pulses (about ``--noise`` per transmission)
with one transmission of the beehive-scale example (3 repeats) after each. Then decodes
it with ``ookframe decode --json`` through the CLI entry point (``cli.main.main``) in a
child process and prints the child's peak RSS (``VmHWM``, Linux) and pulses per second. The baseline is the
whole-file path (``read_capture`` + ``decode``) on a 10^6-pulse file of the same kind,
also in a child process; the ratios are printed.

    python bench/capture_memory.py [--pulses N] [--noise K] [--seed S]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from ookframe.frame import encode, random_values
from ookframe.spec_io import load_spec

SPEC = Path(__file__).resolve().parent.parent / "examples" / "hive_scale.toml"
BASELINE_PULSES = 1_000_000

#: the peak RSS of this process alone: VmHWM of /proc/self/status (Linux proc(5)); the
#: rusage ru_maxrss of a child also counts the parent's pages at fork time
_PEAK = """
def _peak_mb():
    for line in open("/proc/self/status"):
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
"""
_WHOLE = _PEAK + """
import sys
from ookframe.captures import read_capture
from ookframe.decode import decode
from ookframe.spec_io import load_spec
spec = load_spec(sys.argv[1])
print(len(decode(spec, read_capture(sys.argv[2]))))
print(_peak_mb())
"""
_CLI = _PEAK + """
import contextlib, io, sys
from ookframe.cli.main import main
buf = io.StringIO()
with contextlib.redirect_stdout(buf):
    code = main(["decode", *sys.argv[1:], "--json"])
print(buf.getvalue().count('"payload_hex"') if code == 0 else -1)
print(_peak_mb())
"""


def write_capture_csv(path: Path, pulses: int, noise: int, seed: int) -> int:
    """Write a CSV of at least ``pulses`` pulses block by block; return the pulse count."""
    spec = load_spec(SPEC)
    rng = np.random.default_rng(seed)
    unit = spec.unit_us
    written = 0
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("level,duration_us\n")
        while written < pulses:
            n = 2 * int(rng.integers(noise // 4, 3 * noise // 4))
            lv = np.arange(n, dtype=np.uint8) % 2
            du = np.round(unit * np.exp(rng.uniform(np.log(0.05), np.log(40.0), n)), 1)
            tx = encode(spec, random_values(spec, rng))
            lv = np.concatenate((lv, [0], tx.levels, [0]))
            du = np.concatenate((du, [unit * 40], tx.durations_us, [unit * 40]))
            fh.write("".join(map("{},{!r}\n".format, lv.tolist(), du.tolist())))
            written += lv.size
    return written


def run_child(cmd: list[str]) -> tuple[float, float, int]:
    """Return (seconds, peak RSS in MB, frames) of a child that prints frames and its peak."""
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, capture_output=True, text=True)
    seconds = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"child: exit {proc.returncode}: {proc.stderr[-300:]}")
    frames, peak = proc.stdout.split()[-2:]
    return seconds, float(peak), int(frames)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pulses", type=int, default=100_000_000)
    ap.add_argument("--noise", type=int, default=20_000)
    ap.add_argument("--seed", type=int, default=7)
    a = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp) / "base.csv"
        n0 = write_capture_csv(base, BASELINE_PULSES, a.noise, a.seed)
        s0, m0, f0 = run_child([sys.executable, "-c", _WHOLE, str(SPEC), str(base)])
        print(f"whole-file reader, {n0:,} pulses: peak RSS {m0:.0f} MB, "
              f"{n0 / s0:,.0f} pulses/s, {f0} frames")
        big = Path(tmp) / "big.csv"
        t0 = time.perf_counter()
        n1 = write_capture_csv(big, a.pulses, a.noise, a.seed + 1)
        print(f"wrote {n1:,} pulses ({big.stat().st_size / 1e9:.2f} GB) in "
              f"{time.perf_counter() - t0:.0f} s", file=sys.stderr)
        s1, m1, frames = run_child([sys.executable, "-c", _CLI, str(SPEC), str(big)])
        print(f"ookframe decode (streamed), {n1:,} pulses: peak RSS {m1:.0f} MB, "
              f"{n1 / s1:,.0f} pulses/s, {frames} frames")
        print(f"ratio streamed / whole-file: pulses x{n1 / n0:.0f}, peak RSS x{m1 / m0:.2f}, "
              f"speed x{(n1 / s1) / (n0 / s0):.2f}")


if __name__ == "__main__":
    main()
