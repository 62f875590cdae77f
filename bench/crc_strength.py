"""Benchmark: CRC Hamming distance at 1024 data bits plus the longest data word for every
HD up to 5, for published CRC polys of width <= 16 (target: <= 5 s per poly).

Baseline measured in the same run: one numpy pass building and sorting every pair XOR of
the codeword's syndromes (the least work any pair-based weight-4 check needs).

Run: python bench/crc_strength.py
"""

from __future__ import annotations

import time

import numpy as np

from ookframe.checks.crc_strength import crc_strength, syndromes

DATA_BITS = 1024
POLYS = [  # (name, width, normal poly)
    ("CRC-8 0x07", 8, 0x07),
    ("CRC-8/AUTOSAR 0x2F", 8, 0x2F),
    ("CRC-12 0x80F", 12, 0x80F),
    ("CRC-16/CCITT 0x1021", 16, 0x1021),
    ("CRC-16/IBM 0x8005", 16, 0x8005),
    ("CRC-16/DNP 0x3D65", 16, 0x3D65),
    ("CRC-16/T10-DIF 0x8BB7", 16, 0x8BB7),
    ("Koopman 0xBAAD (0x755B)", 16, 0x755B),
]


def _baseline(width: int, poly: int) -> float:
    s = syndromes(width, poly, DATA_BITS + width)
    t0 = time.perf_counter()
    hi, lo = np.tril_indices(s.size, -1)
    np.sort(s[hi] ^ s[lo])
    return time.perf_counter() - t0


def main() -> None:
    print(f"CRC strength at {DATA_BITS} data bits, HD table up to HD 5")
    print(f"{'poly':26s} {'HD':>3s} {'reach HD3..5 (data bits)':>28s} {'time s':>7s} {'x base':>7s}")
    worst = 0.0
    for name, width, poly in POLYS:
        t0 = time.perf_counter()
        r = crc_strength(width, poly, DATA_BITS, max_weight=5,
                         limits={3: 1 << 17, 4: 1 << 14})
        dt = time.perf_counter() - t0
        base = _baseline(width, poly)
        worst = max(worst, dt)
        assert r.reach is not None
        reach = ", ".join(str(r.reach.max_data_bits[k]) for k in (3, 4, 5))
        hd = f"{r.hd}" if r.hd_exact else f">={r.hd}"
        print(f"{name:26s} {hd:>3s} {reach:>28s} {dt:7.3f} {dt / base:7.1f}")
    print(f"slowest: {worst:.3f} s (target <= 5 s): {'OK' if worst <= 5 else 'MISSED'}")


if __name__ == "__main__":
    main()
