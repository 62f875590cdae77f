"""Benchmark: peak memory and speed of ``ookframe decode`` on a very big CSV capture.

Writes (streamed, block by block) a seeded CSV of ``--pulses`` pulses (default 10^8) to a
temporary folder: bursts of random idle-noise pulses (about ``--noise`` per transmission)
with one transmission of the beehive-scale example (3 repeats) after each. Then decodes
it with ``ookframe decode --json`` through the CLI in a child process and prints the
child's peak RSS (``os.wait4``'s ru_maxrss) and pulses per second. The baseline is the
whole-file path (``read_capture`` + ``decode``) on a 10^6-pulse file of the same kind,
also in a child process; the ratios are printed.

    python bench/capture_memory.py [--pulses N] [--noise K] [--seed S]
"""

from __future__ import annotations

import argparse
import os
import shutil
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

_WHOLE = """
import sys
from ookframe.captures import read_capture
from ookframe.decode import decode
from ookframe.spec_io import load_spec
spec = load_spec(sys.argv[1])
print(len(decode(spec, read_capture(sys.argv[2]))))
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


def run_child(cmd: list[str]) -> tuple[float, float, str]:
    """Return (seconds, peak RSS in MB, stdout) of a child process."""
    t0 = time.perf_counter()
    with subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE) as proc:
        out = proc.stdout.read()
        err = proc.stderr.read()
        _, status, usage = os.wait4(proc.pid, 0)
        proc.returncode = os.waitstatus_to_exitcode(status)
    seconds = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(cmd[:3])}...: exit {proc.returncode}: {err.decode()[-300:]}")
    return seconds, usage.ru_maxrss / 1024, out.decode()


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pulses", type=int, default=100_000_000)
    ap.add_argument("--noise", type=int, default=20_000)
    ap.add_argument("--seed", type=int, default=7)
    a = ap.parse_args()
    cli = [shutil.which("ookframe") or str(Path(sys.executable).parent / "ookframe")]
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp) / "base.csv"
        n0 = write_capture_csv(base, BASELINE_PULSES, a.noise, a.seed)
        s0, m0, out0 = run_child([sys.executable, "-c", _WHOLE, str(SPEC), str(base)])
        print(f"whole-file reader, {n0:,} pulses: peak RSS {m0:.0f} MB, "
              f"{n0 / s0:,.0f} pulses/s, {int(out0)} frames")
        big = Path(tmp) / "big.csv"
        t0 = time.perf_counter()
        n1 = write_capture_csv(big, a.pulses, a.noise, a.seed + 1)
        print(f"wrote {n1:,} pulses ({big.stat().st_size / 1e9:.2f} GB) in "
              f"{time.perf_counter() - t0:.0f} s", file=sys.stderr)
        s1, m1, out1 = run_child([*cli, "decode", str(SPEC), str(big), "--json"])
        frames = out1.count('"payload_hex"')
        print(f"ookframe decode (streamed), {n1:,} pulses: peak RSS {m1:.0f} MB, "
              f"{n1 / s1:,.0f} pulses/s, {frames} frames")
        print(f"ratio streamed / whole-file: pulses x{n1 / n0:.0f}, peak RSS x{m1 / m0:.2f}, "
              f"speed x{(n1 / s1) / (n0 / s0):.2f}")


if __name__ == "__main__":
    main()
