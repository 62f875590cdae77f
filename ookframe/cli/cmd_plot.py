"""``ookframe plot``: draw a frame's timing diagram or its baseband PSD into a PNG file."""

from __future__ import annotations

import argparse

from ..errors import ValueRangeError
from . import common
from .output import check_writable, err, write_atomic

NAME = "plot"
HELP = "draw the timing diagram of a frame or the PSD of its keyed baseband (PNG)"
#: seed of the random payloads behind the PSD figure (same figure on every run)
PSD_SEED = 433


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--what", choices=("timing", "psd"), required=True,
                   help="timing: levels against µs with the sections shaded (the spec's default "
                   "values or --set/--payload); psd: spectrum in dB against kHz with the 99 %% "
                   "bandwidth marked (random payloads)")
    common.add_values_arguments(p)
    p.add_argument("-o", "--output", required=True, metavar="FILE.png", help="PNG file to write")
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")


def run(args: argparse.Namespace) -> int:
    if not args.output.lower().endswith(".png"):
        raise ValueRangeError(f"-o {args.output}: the output must be a .png file")
    check_writable(args.output, args.force)  # fail before the work
    spec, defaults = common.load(args)
    values = common.values_from_args(spec, defaults, args)
    import numpy as np

    from .. import plots  # matplotlib: import only when run

    if args.what == "timing":
        fig = plots.timing_figure(spec, values)
    else:
        fig = plots.psd_figure(spec, np.random.default_rng(PSD_SEED))
    path = write_atomic(args.output, plots.figure_png(fig), force=args.force)
    if args.what == "psd":
        from ..analysis.spectrum import bandwidth_hz

        err.print(f"wrote {path} (psd, 99 % bandwidth {bandwidth_hz(spec) / 1e3:.1f} kHz)")
    else:
        err.print(f"wrote {path} ({args.what})")
    return 0
