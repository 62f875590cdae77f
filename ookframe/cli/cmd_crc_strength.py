"""``ookframe crc-strength``: Hamming distance of a CRC polynomial and its reach per HD."""

from __future__ import annotations

import argparse

from rich.table import Table

from ..checks.crc_strength import (
    HD_RANGE,
    SEARCH_LIMIT_BITS,
    crc_strength,
    koopman_to_normal,
)
from ..errors import ValueRangeError, excerpt
from . import common
from .output import out, print_json

NAME = "crc-strength"
HELP = ("Hamming distance of a CRC polynomial at a data length, and the longest data word "
        "for each HD from 2 to 6")
DEFAULT_DATA_BITS = 1024
#: error-pattern combinations one weight may examine here (the design report uses less)
DEFAULT_MAX_WORK = 250_000_000


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--width", type=int, required=True, metavar="W", help="CRC width in bits (1..64)")
    p.add_argument("--poly", required=True, metavar="P",
                   help="generator polynomial, normal notation without the x^W term "
                   "(e.g. 0x1021); see --koopman")
    p.add_argument("--koopman", action="store_true",
                   help="--poly is in Koopman's notation (x^W as top bit, +1 implied: 0x8810)")
    p.add_argument("--data-bits", type=int, default=DEFAULT_DATA_BITS, metavar="N",
                   help=f"data word length for the HD (default {DEFAULT_DATA_BITS})")
    p.add_argument("--max-work", type=common.int_in(1, 10**15), default=DEFAULT_MAX_WORK, metavar="K",
                   help="most error-pattern combinations examined per weight; beyond, the HD "
                   f"is given as a lower bound (default {DEFAULT_MAX_WORK:_})")
    common.add_json_argument(p)


def _int(text: str, name: str) -> int:
    t = text.replace("_", "")
    try:
        return int(t, 0)
    except ValueError:
        if t.isdigit():  # "07": C would read octal, Python refuses
            raise ValueRangeError(f"{name} {excerpt(text)} has a leading zero (C reads that as octal): "
                                  "write it in hex (0x..) or in decimal without the zero") from None
        raise ValueRangeError(f"{name} {excerpt(text)} is not an integer (decimal, 0x.. or 0b..)") from None


def run(args: argparse.Namespace) -> int:
    poly = _int(args.poly, "--poly")
    if args.koopman:
        poly = koopman_to_normal(poly, args.width)
    s = crc_strength(args.width, poly, args.data_bits, max_work=args.max_work)
    if args.json:
        print_json(s.as_dict())
        return 0
    assert s.reach is not None
    digits = (args.width + 3) // 4
    hd = f"{s.hd}" if s.hd_exact else f">= {s.hd} (weight search budget reached)"
    out.print(f"CRC-{args.width} poly 0x{poly:0{digits}X} (Koopman 0x{s.koopman:0{digits}X}): "
              f"HD {hd} at {s.data_bits} data bits"
              + (f", {s.undetected} undetected patterns of weight {s.hd}" if s.hd_exact else ""))
    out.print(f"period {s.period_bits} bits; (x+1) factor: "
              f"{'yes, every odd number of bit errors is detected' if s.odd_errors_detected else 'no'}")
    t = Table(title="longest data word per Hamming distance")
    t.add_column("HD >=", justify="right")
    t.add_column("data bits", justify="right")
    for k in HD_RANGE:
        v = s.reach.max_data_bits[k]
        if v is not None:
            text = str(v)
        elif k in s.reach.at_least_bits:
            text = f">= {s.reach.at_least_bits[k]} (search limit)"
        else:
            text = "every length"
        t.add_row(str(k), text)
    out.print(t)
    limits = ", ".join(f"weight {w}: {b}" for w, b in SEARCH_LIMIT_BITS.items())
    out.print(f"search limits (codeword bits): {limits}; weight 2 is exact at any length.")
    return 0
