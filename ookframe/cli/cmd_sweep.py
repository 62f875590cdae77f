"""``ookframe sweep``: PER against one impairment, several designs side by side."""

from __future__ import annotations

import argparse

from rich.table import Table

from ..channel.physical import PhysicalChannel
from ..errors import ValueRangeError
from ..spec_io import load_spec
from ..stress.sweep import SweepResult, parameter_names, parse_vary, plot_sweep, run_sweep
from . import common, physical_options
from .channel_options import add_channel_arguments, channel_from_args
from .cluster import executor_from_args
from .cmd_stress import add_decoder_argument, add_run_arguments, c_decoder, progress_bar
from .output import check_writable, err, out, print_json

NAME = "sweep"
PLOT_SUFFIXES = (".png", ".svg", ".pdf")
HELP = "PER (with 95 % CI) against one impairment for one or more specs; table and plot"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("specs", nargs="+", metavar="SPEC", help="frame spec files (TOML)")
    p.add_argument("--vary", required=True, metavar="NAME=START:STOP:COUNT",
                   help="impairment and grid, e.g. jitter_us=0:40:21 or mark_bias_us=-8,0,8")
    p.add_argument("--frames", type=common.FRAMES, default=2000,
                   help="transmissions per point and spec (default 2000)")
    p.add_argument("--plot", metavar="FILE", help="write a plot (.png, .svg, .pdf)")
    p.add_argument("--force", action="store_true", help="overwrite an existing plot file")
    add_decoder_argument(p)
    add_channel_arguments(p, "ideal")
    physical_options.add_physical_arguments(p, position=False)
    add_run_arguments(p)


def run(args: argparse.Namespace) -> int:
    ch = physical_options.channel_or(args, channel_from_args)
    name, values = parse_vary(args.vary, parameter_names(ch))
    specs = [load_spec(s) for s in args.specs]
    if args.plot:
        from pathlib import Path

        if Path(args.plot).suffix.lower() not in PLOT_SUFFIXES:
            raise ValueRangeError(f"--plot {args.plot}: the file name must end in one of "
                                  f"{', '.join(PLOT_SUFFIXES)}")
        check_writable(args.plot, args.force)
        if not Path(args.plot).resolve().parent.is_dir():
            raise ValueRangeError(f"--plot {args.plot}: folder does not exist")
    decode_c = c_decoder(specs) if args.decoder == "c" else None  # no compiler: fail first
    total = args.frames * len(values) * len(specs) * (1 if decode_c is None else 2)
    with executor_from_args(args) as ex, progress_bar(args, total, "sweep") as tick:
        res = run_sweep(specs, ch, name, values, args.frames, seed=args.seed, executor=ex,
                        workers=args.workers, chunk_frames=args.chunk_frames, progress=tick)
        res_c = None if decode_c is None else run_sweep(
            specs, ch, name, values, args.frames, seed=args.seed, executor=ex,
            workers=args.workers, chunk_frames=args.chunk_frames, progress=tick,
            decoder=decode_c)
    if args.json and res_c is not None:
        print_json({"reference": _with_caution(res.to_dict(), ch),
                    "c": _with_caution(res_c.to_dict(), ch)})
        if args.plot:
            plot_sweep(_side_by_side(res, res_c), args.plot)
            err.print(f"wrote {args.plot}")
        return 0
    if res_c is not None:
        res = _side_by_side(res, res_c)
    if args.plot:
        plot_sweep(res, args.plot)
        err.print(f"wrote {args.plot}")
    if args.json:
        print_json(_with_caution(res.to_dict(), ch))
        return 0
    t = Table(title=f"PER vs {name} ({args.frames} frames per point)")
    physical = isinstance(ch, PhysicalChannel)
    t.add_column(name, justify="right")
    if physical:
        t.add_column("received dBm", justify="right")
    for s in res.specs:
        t.add_column(f"{s} PER [95 % CI]", justify="right")
    for k, v in enumerate(res.values):
        link = [f"{res.results[0][k].channel.received_dbm:.1f}"] if physical else []
        t.add_row(f"{v:g}", *link, *(f"{rows[k].per:.3g} [{rows[k].per_ci95[0]:.3g}, "
                                     f"{rows[k].per_ci95[1]:.3g}]" for rows in res.results))
    out.print(t)
    if physical:
        err.print(physical_options.receiver_text(ch))
        err.print(physical_options.caution())
    return 0


def _with_caution(d: dict, ch) -> dict:
    """``d`` with the physical link's caution added (nothing for the pulse-level model)."""
    if isinstance(ch, PhysicalChannel):
        d["caution"] = physical_options.caution()
    return d


def _side_by_side(res: SweepResult, res_c: SweepResult) -> SweepResult:
    """One result holding the reference's curves and the C receiver's, for table and plot."""
    return SweepResult(res.parameter, res.values,
                       res.specs + tuple(f"{s} (C receiver)" for s in res_c.specs),
                       res.channel, res.results + res_c.results)
