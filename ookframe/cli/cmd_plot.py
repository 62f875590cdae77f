"""``ookframe plot``: draw a frame's timing diagram, its baseband PSD, or a sampled capture
through the front end into a PNG file."""

from __future__ import annotations

import argparse

from ..errors import ValueRangeError
from . import common, sampled_options
from .output import check_writable, err, write_atomic

NAME = "plot"
HELP = ("draw the timing diagram of a frame, the PSD of its keyed baseband, or a sampled "
        "capture through the front end (PNG)")
#: seed of the random payloads behind the PSD figure (same figure on every run)
PSD_SEED = 433


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("spec", metavar="SPEC", nargs="?", default=None,
                   help="frame spec file (TOML); needed for timing and psd, optional for "
                   "capture (its unit sets the front end's defaults, as for slice --spec)")
    p.add_argument("--what", choices=("timing", "psd", "capture"), required=True,
                   help="timing: levels against µs with the sections shaded (the spec's default "
                   "values or --set/--payload); psd: spectrum in dB against kHz with the 99 %% "
                   "bandwidth marked (random payloads); capture: the samples of --capture "
                   "(magnitude for I/Q), the envelope, the slicer's thresholds and the sliced "
                   "pulses over a time window")
    common.add_values_arguments(p)
    g = p.add_argument_group("--what capture")
    g.add_argument("--capture", metavar="CAPTURE", default=None,
                   help="sampled capture: .wav, .iq (raw interleaved I/Q) or .raw (raw real)")
    g.add_argument("--format", choices=sampled_options.SAMPLED_FORMATS, default=None,
                   dest="capture_format", help="capture format, overriding the extension")
    g.add_argument("--start-ms", type=common.float_in(0, 1e12), default=None, metavar="T",
                   help="start of the window, ms from the capture start (default 0)")
    g.add_argument("--span-ms", type=common.float_in(0, 1e12, lo_open=True), default=None,
                   metavar="T", help="length of the window, ms (default: to the end; at most "
                   "4,000,000 samples)")
    sampled_options.add_reader_arguments(p)
    sampled_options.add_frontend_arguments(p)
    p.add_argument("-o", "--output", required=True, metavar="FILE.png", help="PNG file to write")
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")


def _check_combination(args: argparse.Namespace) -> None:
    capture_only = [flag for flag, given in (
        ("--capture", args.capture), ("--format", args.capture_format),
        ("--start-ms", args.start_ms), ("--span-ms", args.span_ms)) if given is not None]
    capture_only += sampled_options.given_flags(args)
    if args.what == "capture":
        if args.capture is None:
            raise ValueRangeError("--what capture needs --capture CAPTURE (a .wav, .iq or "
                                  ".raw file)")
        if args.sets or args.payload is not None:
            raise ValueRangeError("--set/--payload: not for --what capture (the frames are "
                                  "the capture's)")
        return
    if args.spec is None:
        raise ValueRangeError(f"--what {args.what} needs a SPEC")
    if capture_only:
        raise ValueRangeError(f"{', '.join(capture_only)}: only for --what capture")


def run(args: argparse.Namespace) -> int:
    if not args.output.lower().endswith(".png"):
        raise ValueRangeError(f"-o {args.output}: the output must be a .png file")
    _check_combination(args)
    check_writable(args.output, args.force)  # fail before the work
    if args.what == "capture":
        return _run_capture(args)
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


def _run_capture(args: argparse.Namespace) -> int:
    unit_us = None
    if args.spec:
        from ..spec_io import load_spec

        unit_us = load_spec(args.spec).unit_us
    config = sampled_options.frontend_config(args, unit_us)
    from .. import plots
    from ..captures.sampled import sampled_info
    from ..frontend import trace_capture

    info = sampled_info(args.capture, fmt=args.capture_format,
                        **sampled_options.reader_options(args))
    start_s = (args.start_ms or 0.0) / 1e3
    span_s = None if args.span_ms is None else args.span_ms / 1e3
    try:
        trace, report = trace_capture(info, config, start_s=start_s, span_s=span_s)
    except ValueError as exc:
        raise ValueRangeError(f"{args.capture}: {exc}") from None
    title = (f"{args.capture}: {info.format} {info.sample_type}, "
             f"{info.sample_rate_hz / 1e3:g} kHz, {trace.start_s * 1e3:.6g} to "
             f"{trace.stop_s * 1e3:.6g} ms; {report.envelope} envelope, {report.thresholds} "
             f"thresholds")
    path = write_atomic(args.output, plots.figure_png(plots.capture_figure(trace, title)),
                        force=args.force)
    err.print(f"wrote {path} (capture, {trace.start_s * 1e3:.6g} to {trace.stop_s * 1e3:.6g} "
              f"ms, {len(trace.pulses)} pulses)", markup=False)
    err.print(sampled_options.report_line(report), markup=False)
    return 0
