"""``ookframe noise``: false frames per hour from an idle receiver's noise."""

from __future__ import annotations

import argparse

from rich.table import Table

from ..stress import run_noise
from . import common
from .channel_options import add_channel_source_arguments, base_channel
from .cluster import executor_from_args
from .cmd_stress import add_run_arguments, progress_bar
from .output import out, print_json

NAME = "noise"
HELP = "feed idle-receiver noise only; false frames per hour, measured and expected"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--hours", type=common.float_in(0, 10_000, lo_open=True), required=True, help="hours of noise to simulate")
    g = p.add_argument_group("channel", "the noise pulse mean comes from --preset (default "
                             "budget-superregen) or --channel FILE; --mean-us overrides both")
    add_channel_source_arguments(g, "budget-superregen")
    g.add_argument("--mean-us", type=common.float_in(1, 1e7), default=None,
                   help="mean noise pulse duration in µs (overrides the preset or file)")
    add_run_arguments(p)


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    mean = args.mean_us if args.mean_us is not None else base_channel(args).idle_noise_mean_us
    with executor_from_args(args) as ex, progress_bar(args, args.hours * 3600.0,
                                                      "noise (s)") as tick:
        r = run_noise(spec, args.hours, mean_us=mean, seed=args.seed, executor=ex,
                      workers=args.workers, progress=tick)
    if args.json:
        print_json(r.to_dict())
        return 0
    t = Table(title=f"{spec.name}: {args.hours:g} h of idle noise (mean pulse {mean:g} µs)")
    for col in ("per hour", "measured", "95 % CI", "expected (random bits)"):
        t.add_column(col, justify="left" if col == "per hour" else "right")
    lo, hi = r.sync_hits_per_hour_ci95
    t.add_row("frames found (sync hits)", f"{r.sync_hits_per_hour:.4g}", f"{lo:.3g} .. {hi:.3g}",
              f"{r.expected_sync_hits_per_hour:.4g}")
    lo, hi = r.passing_per_hour_ci95
    t.add_row("passing the check", f"{r.passing_per_hour:.4g}", f"{lo:.3g} .. {hi:.3g}",
              f"{r.expected_passing_per_hour:.4g}")
    out.print(t)
    out.print("expected: one sync-word test per bit of random data at the spec's bit rate "
              "(a decoder that hunts for the sync word alone); the reference decoder also "
              "needs the preamble, so it finds far fewer.")
    return 0
