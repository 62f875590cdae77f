"""``ookframe range``: estimated range of a design over the physical link model."""

from __future__ import annotations

import argparse

from rich.table import Table

from ..stress.link_range import EXPONENTS, SEARCH_SPAN_DB, estimate_range
from . import common, physical_options
from .cluster import executor_from_args
from .cmd_stress import add_run_arguments, progress_bar
from .output import err, out, print_json

NAME = "range"
HELP = "estimated range for a target PER over the physical link model, with its assumptions"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--target-per", type=common.float_in(0, 1, lo_open=True, hi_open=True),
                   default=0.01, metavar="P", help="packet error rate to meet (default 0.01)")
    p.add_argument("--margin-db", type=common.float_in(-100, 200), default=10.0, metavar="M",
                   help="fade / install margin kept above the power that meets the target, "
                   "dB (default 10)")
    p.add_argument("--frames", type=common.FRAMES, default=300,
                   help="transmissions per search step (default 300)")
    physical_options.add_physical_arguments(p, position=False)
    add_run_arguments(p)


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    ch = physical_options.physical_from_args(args)
    steps = 2 + int(2 * SEARCH_SPAN_DB / 0.25).bit_length()
    with executor_from_args(args) as ex, progress_bar(args, args.frames * steps, "range") as tick:
        r = estimate_range(spec, ch, target_per=args.target_per, margin_db=args.margin_db,
                           frames=args.frames, seed=args.seed, executor=ex,
                           workers=args.workers, chunk_frames=args.chunk_frames, progress=tick)
    if args.json:
        print_json(r.to_dict())
        return 0
    t = Table(title=f"range estimate of {spec.name}: PER <= {r.target_per:g} with "
              f"{r.margin_db:g} dB margin (estimate)")
    t.add_column("figure")
    t.add_column("value", justify="right")
    t.add_row("transmitter", f"{ch.tx.power_dbm:g} dBm, antenna {ch.tx.antenna_gain_dbi:g} "
              f"dBi, {ch.tx.frequency_hz / 1e6:g} MHz")
    t.add_row("receiver", f"{ch.rx.name}: sensitivity {ch.rx.sensitivity_dbm:.1f} dBm, noise "
              f"floor {ch.rx.noise_floor_dbm:.1f} dBm, antenna {ch.rx.antenna_gain_dbi:g} dBi")
    t.add_row("path model", f"free space to {ch.path.reference_m:g} m, then exponent "
              f"{ch.path.exponent:g}; extra loss {ch.path.extra_loss_db:g} dB")
    if r.required_dbm is None:
        t.add_row("received power for the target", f"not met even at "
                  f"{ch.rx.sensitivity_dbm + SEARCH_SPAN_DB:.1f} dBm")
    else:
        t.add_row("received power for the target",
                  f"{r.required_dbm:.1f} dBm (simulated PER {r.per_at_required:.3g}, "
                  f"{r.frames} frames per step)")
        t.add_row("largest path loss", f"{r.max_path_loss_db:.1f} dB")
        t.add_row("range", f"{r.range_m:,.0f} m")
        for n, d in r.range_by_exponent_m:
            if n != ch.path.exponent and n in EXPONENTS:
                t.add_row(f"  with exponent {n:g}", f"{d:,.0f} m")
    t.add_row("range from the sensitivity figure alone", f"{r.budget_range_m:,.0f} m")
    out.print(t)
    err.print(r.caution)
    return 0
