"""``ookframe stress``: random frames through the channel model and the reference decoder.

Also holds the channel / run options shared by ``noise``, ``sweep``, ``margin`` and
``vectors``.
"""

from __future__ import annotations

import argparse
import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import fields

from rich.table import Table

from ..channel import PRESETS, ChannelSpec, get_preset
from ..stress import run_stress
from ..stress.runner import DEFAULT_CHUNK_FRAMES
from . import common
from .cluster import add_scheduler_arguments, executor_from_args, workers_text
from .output import err, out, print_json, progress_enabled

NAME = "stress"
HELP = "send random frames through a cheap-link channel model; PER, false accepts, throughput"


def add_channel_arguments(p: argparse.ArgumentParser, default_preset: str) -> None:
    """Add --preset and one option per ChannelSpec parameter (overriding the preset)."""
    g = p.add_argument_group("channel (impairment options override the preset's values)")
    g.add_argument("--preset", default=default_preset, choices=sorted(PRESETS),
                   help=f"channel preset to start from (default: {default_preset})")
    for f in fields(ChannelSpec):
        flag = "--" + f.name.replace("_", "-")
        if f.name == "jitter_kind":
            g.add_argument(flag, choices=("gauss", "uniform"), default=None,
                           help="edge jitter distribution: gauss (sigma) or uniform (±)")
        else:
            g.add_argument(flag, type=float, default=None, metavar="X",
                           help=f"{f.name.replace('_', ' ')}")


def channel_from_args(args: argparse.Namespace) -> ChannelSpec:
    """Return the preset with every impairment option given on the command line applied."""
    changes = {f.name: getattr(args, f.name) for f in fields(ChannelSpec)
               if getattr(args, f.name, None) is not None}
    return get_preset(args.preset).with_(**changes)


def add_run_arguments(p: argparse.ArgumentParser) -> None:
    """Add --seed, --workers, --scheduler, --chunk-frames, --json and --progress."""
    p.add_argument("--seed", type=common.SEED, default=0, help="random seed (default 0)")
    p.add_argument("--workers", type=common.WORKERS, default=min(os.cpu_count() or 1, 8),
                   help="worker processes (default: CPU count); results do not depend on it")
    add_scheduler_arguments(p)
    p.add_argument("--chunk-frames", type=common.int_in(1, 10_000_000), default=DEFAULT_CHUNK_FRAMES, metavar="N",
                   help=f"frames per work unit (default {DEFAULT_CHUNK_FRAMES}); part of the "
                   "seed: keep it to reproduce a run")
    common.add_json_argument(p)
    common.add_progress_argument(p)


@contextmanager
def progress_bar(args: argparse.Namespace, total: float, label: str
                 ) -> Iterator[Callable[[float], None] | None]:
    """Yield a callback advancing a rich progress bar on stderr, or None when off."""
    if not progress_enabled(args):
        yield None
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeRemainingColumn

    with Progress("[progress.description]{task.description}", BarColumn(),
                  MofNCompleteColumn(), TimeRemainingColumn(), console=err,
                  transient=True) as bar:
        task = bar.add_task(label, total=total)
        yield lambda k: bar.advance(task, k)


def channel_text(ch: ChannelSpec) -> str:
    """Return the non-default channel parameters as ``name=value`` text."""
    base = ChannelSpec()
    parts = [f"{f.name}={getattr(ch, f.name)}" for f in fields(ch)
             if getattr(ch, f.name) != getattr(base, f.name)]
    return ", ".join(parts) or "ideal"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--frames", type=common.FRAMES, default=10000, help="transmissions to send")
    add_channel_arguments(p, "budget-superregen")
    add_run_arguments(p)


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    ch = channel_from_args(args)
    with executor_from_args(args) as ex, progress_bar(args, args.frames, "stress") as tick:
        r = run_stress(spec, ch, args.frames, seed=args.seed, executor=ex, workers=args.workers,
                       chunk_frames=args.chunk_frames, progress=tick)
    if args.json:
        print_json(r.to_dict())
        return 0
    t = Table(title=f"{spec.name} through {args.preset} ({channel_text(ch)})")
    t.add_column("measure")
    t.add_column("value", justify="right")
    lo, hi = r.per_ci95
    t.add_row("transmissions sent", str(r.frames))
    t.add_row("decoded correctly", str(r.ok))
    t.add_row("packet error rate", f"{r.per:.4g}  (95 % CI {lo:.4g} .. {hi:.4g})")
    t.add_row("lost in sync search", str(r.lost_sync))
    t.add_row("failed check / wrong", str(r.bad_check))
    t.add_row("false accepts (check ok, fields wrong)", str(r.false_accepts))
    t.add_row("frames outside any transmission", f"{r.stray_frames} ({r.stray_accepts} passing)")
    t.add_row("throughput", f"{r.frames_per_s:,.0f} frames/s ({workers_text(args)})")
    out.print(t)
    return 0
