"""``ookframe syncword``: search for the best sync words of N bits (or score one word)."""

from __future__ import annotations

import argparse

import numpy as np
from rich import box
from rich.table import Table

from ..analysis.syncword import (
    EXHAUSTIVE_MAX_BITS,
    search_sync_words,
    sync_quality,
)
from ..errors import ValueRangeError, excerpt
from . import common
from .output import out, print_json

NAME = "syncword"
HELP = ("search sync words of N bits: largest distance to the preamble, then smallest "
        "autocorrelation sidelobe")
#: 16 alternating bits, the usual OOK training preamble (common practice, no source)
DEFAULT_PREAMBLE = "1010101010101010"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--bits", type=int, required=True, metavar="N",
                   help=f"sync word length (2..64; exhaustive up to {EXHAUSTIVE_MAX_BITS} bits, "
                   "hill climbing beyond)")
    p.add_argument("--preamble", default=DEFAULT_PREAMBLE, metavar="PATTERN",
                   help="preamble sent before the sync word: 0/1 digits (MSB first), 0x-hex "
                   f"(4 bits a digit), or 'none' (default {DEFAULT_PREAMBLE})")
    p.add_argument("--max-errors", type=int, default=0, metavar="E",
                   help="bit errors the decoder accepts in the sync word (default 0)")
    p.add_argument("--bit-rate-bps", type=float, default=None, metavar="R",
                   help="data bit rate, for expected false syncs per hour on noise")
    p.add_argument("--top", type=int, default=10, metavar="K", help="words to list (default 10)")
    p.add_argument("--word", default=None, metavar="HEX",
                   help="score this word instead of searching")
    p.add_argument("--seed", type=common.SEED, default=0,
                   help="seed of the hill-climbing search above the exhaustive limit")
    common.add_json_argument(p)


def parse_pattern(text: str) -> list[int]:
    """Bits of a --preamble value: '0'/'1' digits, 0x-hex (4 bits a digit) or 'none'."""
    t = text.strip().lower().replace("_", "")
    if t in ("none", ""):
        return []
    if t.startswith("0x"):
        digits = t[2:]
        try:
            value = int(digits, 16)
        except ValueError:
            raise ValueRangeError(f"--preamble {excerpt(text)}: bad hex digits") from None
        n = 4 * len(digits)
        return [(value >> (n - 1 - i)) & 1 for i in range(n)]
    if set(t) <= {"0", "1"}:
        return [int(c) for c in t]
    raise ValueRangeError(f"--preamble {excerpt(text)}: give 0/1 digits, 0x-hex or 'none'")


def bit_groups(word: int, n_bits: int, group: int = 8) -> str:
    """``word`` as ``n_bits`` binary digits, MSB first, in space-separated groups."""
    digits = format(word, f"0{n_bits}b")
    return " ".join(digits[i:i + group] for i in range(0, n_bits, group))


def run(args: argparse.Namespace) -> int:
    pre = parse_pattern(args.preamble)
    if args.word is not None:
        try:
            word = int(args.word, 16)
        except ValueError:
            raise ValueRangeError(f"--word {excerpt(args.word)} is not hex") from None
        found = [sync_quality(word, args.bits, pre, max_errors=args.max_errors,
                              bit_rate_bps=args.bit_rate_bps)]
    else:
        found = search_sync_words(args.bits, pre, max_errors=args.max_errors, top=args.top,
                                  bit_rate_bps=args.bit_rate_bps,
                                  rng=np.random.default_rng(args.seed))
    if args.json:
        print_json([q.as_dict() for q in found])
        return 0
    how = "exhaustive" if args.bits <= EXHAUSTIVE_MAX_BITS else f"hill climbing, seed {args.seed}"
    title = (f"{args.bits}-bit sync word{'' if args.word else 's'} after "
             f"{len(pre)} preamble bits, {args.max_errors} error(s) allowed"
             + ("" if args.word else f" ({how})"))
    t = Table(title=title, box=box.SIMPLE_HEAD, collapse_padding=True, pad_edge=False)
    cols = ["word", "bits", "max\nsidelobe", "sidelobe\nenergy", "min\ndistance", "margin"]
    if args.bit_rate_bps is not None:
        cols.append("false\nsyncs / h")
    for c in cols:  # only the bits wrap (at byte groups), nothing is cut at 80 columns
        t.add_column(c, justify="left" if c in ("word", "bits") else "right",
                     no_wrap=c != "bits", min_width=8 if c == "bits" else None)
    for q in found:
        row = [q.hex, bit_groups(q.word, q.n_bits), str(q.max_sidelobe),
               str(q.sidelobe_energy), "-" if q.min_distance_to_preamble is None
               else str(q.min_distance_to_preamble),
               "-" if q.margin_bits is None else str(q.margin_bits)]
        if q.false_syncs_per_hour is not None:
            row.append(f"{q.false_syncs_per_hour:.3g}")
        t.add_row(*row)
    out.print(t)
    out.print("min distance: to every window starting inside the preamble (straddling into "
              "the sync word, or inside the preamble repeated); margin = min distance - "
              "max errors - 1 (bit errors a preamble window can take before it passes for "
              "the sync word).")
    return 0
