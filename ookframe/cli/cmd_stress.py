"""``ookframe stress``: random frames through the channel model and the reference decoder.

Also holds the run options shared by ``noise``, ``sweep`` and ``margin``; the channel
options live in ``channel_options``.
"""

from __future__ import annotations

import argparse
import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager

from rich.table import Table

from ..channel import ChannelSpec
from ..stress import run_stress
from ..stress.runner import DEFAULT_CHUNK_FRAMES
from . import common, exitcodes, physical_options
from .channel_options import add_channel_arguments, channel_from_args, channel_label, channel_text
from .cluster import add_scheduler_arguments, executor_from_args, workers_text
from .output import err, out, print_json, progress_enabled

NAME = "stress"
HELP = "send random frames through a cheap-link channel model; PER, false accepts, throughput"


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
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeRemainingColumn

    # --progress on draws the bar even when stderr is no terminal (a pipe, a CI log)
    console = err if err.is_terminal or args.progress != "on" else Console(
        stderr=True, force_terminal=True, highlight=False, emoji=False)
    with Progress("[progress.description]{task.description}", BarColumn(),
                  MofNCompleteColumn(), TimeRemainingColumn(), console=console,
                  transient=True) as bar:
        task = bar.add_task(label, total=total)
        yield lambda k: bar.advance(task, k)


def add_decoder_argument(p: argparse.ArgumentParser) -> None:
    """Add --decoder reference|c (shared by stress, sweep and margin)."""
    p.add_argument("--decoder", choices=("reference", "c"), default="reference",
                   help="c: also run the generated C receiver (built with the system C "
                   "compiler, cached) on the same seeds and show both (default reference)")


def c_decoder(specs) -> Callable:
    """Return the C receiver's decode function after building (or finding in the cache)
    the host receiver of every spec, before any worker needs it; CodegenError (a clear
    message, no traceback) without a C compiler."""
    from ..codegen.host_rx import decode_c, host_receiver

    for spec in specs:
        host_receiver(spec)
    return decode_c


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--frames", type=common.FRAMES, default=10000,
                   help="transmissions to send (default 10000)")
    add_decoder_argument(p)
    add_channel_arguments(p, "budget-superregen")
    physical_options.add_physical_arguments(p)
    add_run_arguments(p)


def run(args: argparse.Namespace) -> int:
    from ..stress.runner import StressInterrupted

    spec, _ = common.load(args)
    ch = physical_options.channel_or(args, channel_from_args)
    decode_c = c_decoder([spec]) if args.decoder == "c" else None  # no compiler: fail first
    try:
        with executor_from_args(args) as ex, progress_bar(args, args.frames, "stress") as tick:
            r = run_stress(spec, ch, args.frames, seed=args.seed, executor=ex,
                           workers=args.workers, chunk_frames=args.chunk_frames, progress=tick)
    except StressInterrupted as stop:  # Ctrl-C: report what was counted, exit 130
        _report(args, spec, ch, stop.partial, interrupted=True)
        err.print(f"ookframe stress: interrupted after {stop.partial.frames} of {args.frames} "
                  "transmissions; the result above counts those only")
        return exitcodes.INTERRUPTED
    if decode_c is not None:
        with executor_from_args(args) as ex, progress_bar(args, args.frames, "C receiver") as tick:
            rc = run_stress(spec, ch, args.frames, seed=args.seed, executor=ex,
                            workers=args.workers, chunk_frames=args.chunk_frames,
                            decoder=decode_c, progress=tick)
        if args.json:
            print_json({"reference": r.to_dict(), "c": rc.to_dict()})
            return 0
        t = Table(title=f"{spec.name} through {args.preset} ({channel_text(ch)}): reference "
                  "decoder vs generated C receiver, same seeds")
        for col in ("decoder", "decoded correctly", "PER", "95 % CI", "copies ok"):
            t.add_column(col, justify="left" if col == "decoder" else "right")
        for name, x in (("reference", r), ("C receiver", rc)):
            lo, hi = x.per_ci95
            t.add_row(name, f"{x.ok}/{x.frames}", f"{x.per:.4g}", f"{lo:.4g} .. {hi:.4g}",
                      str(x.copies_ok))
        out.print(t)
        return 0
    _report(args, spec, ch, r, interrupted=False)
    return 0


def _report(args: argparse.Namespace, spec, ch: ChannelSpec, r, *, interrupted: bool) -> None:
    """Print a stress result (JSON or table); an interrupted run is marked as partial."""
    physical = not isinstance(ch, ChannelSpec)
    if args.json:
        d = r.to_dict()
        d["interrupted"] = interrupted
        if physical:
            d["caution"] = physical_options.caution()
        print_json(d)
        return
    partial = f"; INTERRUPTED: {r.frames} of {args.frames} sent" if interrupted else ""
    what = (f"the physical link ({physical_options.physical_text(ch)})" if physical
            else f"{channel_label(args)} ({channel_text(ch)})")
    t = Table(title=f"{spec.name} through {what}{partial}")
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
    if physical:
        err.print(physical_options.caution())
