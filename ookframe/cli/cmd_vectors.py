"""``ookframe vectors``: distorted pulse trains with expected fields for firmware tests."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

from ..stress.vectors import make_vectors, render_vectors_c, vectors_to_dict
from . import common
from .channel_options import add_channel_arguments, channel_from_args
from .output import err, out, write_atomic

NAME = "vectors"
HELP = "distorted pulse trains + expected field values as a C header (.h) or JSON"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--count", type=common.int_in(1, 10_000), default=16, help="number of vectors (default 16)")
    p.add_argument("--seed", type=common.SEED, default=0, help="random seed (default 0)")
    p.add_argument("--format", choices=("c", "json"), default=None,
                   help="output format (default: from the -o extension, else json)")
    common.add_output_arguments(p)
    add_channel_arguments(p, "budget-superregen")


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    fmt = args.format or ("c" if args.output and Path(args.output).suffix == ".h" else "json")
    ch = channel_from_args(args)
    vecs = make_vectors(spec, ch, args.count, seed=args.seed)
    if fmt == "c":
        text = render_vectors_c(spec, ch, args.seed, vecs)
    else:
        text = json.dumps(vectors_to_dict(spec, ch, args.seed, vecs), indent=1) + "\n"
    if args.output:
        write_atomic(args.output, text, force=args.force)
        err.print(f"wrote {args.output} ({args.count} vectors)")
    else:
        out.file.write(text)
    return 0
