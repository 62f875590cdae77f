"""``ookframe calibrate``: measure a link's impairments from a capture of known frames."""

from __future__ import annotations

import argparse
from pathlib import Path

from rich.table import Table

from . import common, sampled_options
from .cmd_decode import CAPTURE_FORMATS, pulse_source
from .output import check_writable, err, out, print_json, write_atomic

NAME = "calibrate"
HELP = "measure a link (bias, jitter, clock, quantisation, idle noise, glitches) from a " \
    "capture of frames of SPEC; writes a channel file for --channel"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("capture", metavar="CAPTURE", help="capture file: pulses in .csv, .json "
                   "or .vcd; samples in .wav, .iq (raw I/Q) or .raw (raw real), sliced by the "
                   "front end")
    p.add_argument("--format", choices=CAPTURE_FORMATS + sampled_options.SAMPLED_FORMATS,
                   default=None, dest="capture_format",
                   help="capture format, overriding the file extension")
    p.add_argument("--signal", metavar="NAME", help="VCD signal to read")
    p.add_argument("--seed", type=common.SEED, default=0,
                   help="seed of the bootstrap intervals (default 0)")
    p.add_argument("--settle-us", type=common.float_in(0, 1e9), default=None, metavar="T",
                   help="time into each frame whose edges are left out of the fits, µs (a "
                   "receiver's slicer settles there; default: the preamble's length)")
    common.add_output_arguments(p)
    common.add_json_argument(p)
    sampled_options.add_reader_arguments(p)
    sampled_options.add_frontend_arguments(p)


def run(args: argparse.Namespace) -> int:
    from .. import __version__
    from ..analysis.calibrate import calibrate
    from ..channel.linkfile import link_to_toml
    from ..pulses import concat

    spec, _ = common.load(args)
    if args.output:
        check_writable(args.output, args.force)
    chunks, reports = pulse_source(args, spec)
    train = concat(list(chunks()))
    cal = calibrate(spec, train, seed=args.seed, settle_us=args.settle_us)
    source: tuple[tuple[str, str | int | float], ...] = (
        ("spec", str(args.spec)), ("capture", str(args.capture)),
        ("tool", f"ookframe {__version__} calibrate"), ("seed", args.seed))
    if reports:
        line = sampled_options.report_line(reports[-1])
        source += (("front_end", line),)
        err.print(line, markup=False)
    link = cal.link(source)
    header = (f"ookframe channel file: {spec.name} link measured from {Path(args.capture).name}",
              "use it with: ookframe stress SPEC --channel THIS_FILE (also sweep, margin, "
              "vectors, noise)",
              "every [estimates.*] table: value, 95 % interval, method, n = what it rests on")
    text = link_to_toml(link, header + tuple(f"WARNING: {w}" for w in cal.warnings))
    if args.output:
        write_atomic(args.output, text, force=args.force)
        err.print(f"wrote {args.output}", markup=False)
    for w in cal.warnings:
        err.print(f"warning: {w}", markup=False)
    for k, why in cal.unknown:
        err.print(f"cannot tell {k}: {why}", markup=False)
    if args.json:
        print_json(cal.to_dict())
        return 0
    if not args.output:
        out.file.write(text)
        return 0
    t = Table(title=f"{spec.name}: link measured from {args.capture}")
    for col in ("figure", "value", "95 % interval", "n", "method"):
        t.add_column(col, justify="right" if col in ("value", "n") else "left")
    for e in cal.estimates:
        v = e.value if isinstance(e.value, str) else f"{e.value:.4g}"
        ci = "-" if e.ci95 is None else f"{e.ci95[0]:.4g} .. {e.ci95[1]:.4g}"
        t.add_row(e.name, f"{v} {e.unit}".strip(), ci, f"{e.n} {e.basis}", e.method)
    out.print(t)
    return 0
