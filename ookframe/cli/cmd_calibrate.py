"""``ookframe calibrate``: measure a link's impairments from a capture of known frames."""

from __future__ import annotations

import argparse
from pathlib import Path

from rich.table import Table

from . import common
from .cmd_decode import CAPTURE_FORMATS
from .output import check_writable, err, out, print_json, write_atomic

NAME = "calibrate"
HELP = "measure a link (bias, jitter, clock, quantisation, idle noise, glitches) from a " \
    "capture of frames of SPEC; writes a channel file for --channel"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("capture", metavar="CAPTURE", help="capture file: .csv, .json or .vcd")
    p.add_argument("--format", choices=CAPTURE_FORMATS, default=None, dest="capture_format",
                   help="capture format, overriding the file extension")
    p.add_argument("--signal", metavar="NAME", help="VCD signal to read")
    p.add_argument("--seed", type=common.SEED, default=0,
                   help="seed of the bootstrap intervals (default 0)")
    common.add_output_arguments(p)
    common.add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from .. import __version__
    from ..analysis.calibrate import calibrate
    from ..captures import read_capture
    from ..channel.linkfile import link_to_toml

    spec, _ = common.load(args)
    if args.output:
        check_writable(args.output, args.force)
    train = read_capture(args.capture, signal=args.signal, fmt=args.capture_format)
    cal = calibrate(spec, train, seed=args.seed)
    source = (("spec", str(args.spec)), ("capture", str(args.capture)),
              ("tool", f"ookframe {__version__} calibrate"), ("seed", args.seed))
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
