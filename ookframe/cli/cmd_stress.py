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
from . import common, exitcodes
from .cluster import add_scheduler_arguments, executor_from_args, workers_text
from .output import err, out, print_json, progress_enabled

NAME = "stress"
HELP = "send random frames through a cheap-link channel model; PER, false accepts, throughput"


#: meaning and unit of every impairment option (ChannelSpec's docstring says more)
IMPAIRMENT_HELP: dict[str, str] = {
    "jitter_us": "per-edge timing error, µs: Gaussian sigma or uniform half-width "
                 "(see --jitter-kind)",
    "jitter_kind": "edge jitter distribution: gauss (sigma) or uniform (±)",
    "mark_bias_us": "µs added to every mark and taken from the next space (negative: "
                    "marks shortened); transmitter start-up and ring-down",
    "clock_error_pct": "sender clock error, %% (positive: every pulse longer)",
    "drift_pct_per_s": "sender clock drift, %% per second from each transmission start",
    "quant_step_us": "receiver output edges moved to a grid of this step, µs (0: off)",
    "glitch_rate_per_ms": "spurious level flips per ms of signal (Poisson)",
    "glitch_width_us": "mean glitch width, µs (uniform in 0.5..1.5 times it)",
    "dropout_prob": "probability that a whole mark is lost (0..1)",
    "idle_noise_us": "idle-receiver noise before and after the train, µs each (0: none)",
    "idle_noise_mean_us": "mean duration of an idle-noise pulse, µs",
    "idle_quiet_us": "µs of space after which the idle receiver turns noisy again",
    "min_width_us": "narrowest pulse the model lets through, µs (narrower ones are widened)",
}


def add_channel_arguments(p: argparse.ArgumentParser, default_preset: str) -> None:
    """Add --preset and one option per ChannelSpec parameter (overriding the preset)."""
    g = p.add_argument_group(
        "channel", f"impairment options override the values of --preset (default "
        f"{default_preset}); an option not given keeps the chosen preset's value, shown in "
        f"[brackets] for {default_preset}")
    g.add_argument("--preset", default=default_preset, choices=sorted(PRESETS),
                   help=f"channel preset to start from (default: {default_preset})")
    base = get_preset(default_preset)
    for f in fields(ChannelSpec):
        flag = "--" + f.name.replace("_", "-")
        text = f"{IMPAIRMENT_HELP[f.name]} [{getattr(base, f.name):g}]" \
            if f.name != "jitter_kind" else f"{IMPAIRMENT_HELP[f.name]} [{base.jitter_kind}]"
        if f.name == "jitter_kind":
            g.add_argument(flag, choices=("gauss", "uniform"), default=None, help=text)
        else:
            g.add_argument(flag, type=float, default=None, metavar="X", help=text)


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


def channel_text(ch: ChannelSpec) -> str:
    """Return the non-default channel parameters as ``name=value`` text."""
    base = ChannelSpec()
    parts = [f"{f.name}={getattr(ch, f.name)}" for f in fields(ch)
             if getattr(ch, f.name) != getattr(base, f.name)]
    return ", ".join(parts) or "ideal"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--frames", type=common.FRAMES, default=10000,
                   help="transmissions to send (default 10000)")
    p.add_argument("--decoder", choices=("reference", "c"), default="reference",
                   help="c: also run the generated C receiver (built with the system C "
                   "compiler, cached) on the same seeds and show both (default reference)")
    add_channel_arguments(p, "budget-superregen")
    add_run_arguments(p)


def run(args: argparse.Namespace) -> int:
    from ..stress.runner import StressInterrupted

    spec, _ = common.load(args)
    ch = channel_from_args(args)
    try:
        with executor_from_args(args) as ex, progress_bar(args, args.frames, "stress") as tick:
            r = run_stress(spec, ch, args.frames, seed=args.seed, executor=ex,
                           workers=args.workers, chunk_frames=args.chunk_frames, progress=tick)
    except StressInterrupted as stop:  # Ctrl-C: report what was counted, exit 130
        _report(args, spec, ch, stop.partial, interrupted=True)
        err.print(f"ookframe stress: interrupted after {stop.partial.frames} of {args.frames} "
                  "transmissions; the result above counts those only")
        return exitcodes.INTERRUPTED
    if getattr(args, "decoder", "reference") == "c":
        from ..codegen.host_rx import decode_c, host_receiver

        host_receiver(spec)  # build (or find in the cache) before any worker needs it
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
    if args.json:
        d = r.to_dict()
        d["interrupted"] = interrupted
        print_json(d)
        return
    partial = f"; INTERRUPTED: {r.frames} of {args.frames} sent" if interrupted else ""
    t = Table(title=f"{spec.name} through {args.preset} ({channel_text(ch)}){partial}")
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
