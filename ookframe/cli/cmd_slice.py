"""``ookframe slice``: a sampled capture (WAV, raw I/Q, raw real) -> pulse capture."""

from __future__ import annotations

import argparse

from rich import box
from rich.table import Table

from . import common, sampled_options
from .output import check_writable, err, out, print_json

NAME = "slice"
HELP = ("turn a sampled capture (WAV, raw I/Q, raw real samples) into pulses through an "
        "envelope detector and an adaptive data slicer; reports every threshold chosen")
#: pulse formats -o writes (from its extension)
OUTPUT_EXTENSIONS = (".csv", ".json", ".vcd")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("capture", metavar="CAPTURE",
                   help="sampled capture: .wav, .iq (raw interleaved I/Q) or .raw (raw real)")
    p.add_argument("--format", choices=sampled_options.SAMPLED_FORMATS, default=None,
                   dest="capture_format", help="capture format, overriding the extension")
    p.add_argument("--spec", metavar="SPEC", default=None,
                   help="frame spec whose symbol unit sets the default smoothing and tracker "
                   "decay")
    sampled_options.add_reader_arguments(p)
    sampled_options.add_frontend_arguments(p)
    p.add_argument("-o", "--output", metavar="FILE",
                   help="pulse capture to write: .csv (level,duration_us), .json or .vcd")
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")
    common.add_json_argument(p)


def run(args: argparse.Namespace) -> int:
    from ..errors import ValueRangeError

    if args.output:
        if not args.output.lower().endswith(OUTPUT_EXTENSIONS):
            raise ValueRangeError(f"-o {args.output}: the output must be a pulse capture "
                                  f"({', '.join(OUTPUT_EXTENSIONS)})")
        check_writable(args.output, args.force)  # fail before the work
    unit_us = None
    if args.spec:
        from ..spec_io import load_spec

        unit_us = load_spec(args.spec).unit_us
    config = sampled_options.frontend_config(args, unit_us)
    from ..captures import write_capture
    from ..captures.sampled import sampled_info
    from ..frontend import iter_sliced, open_slicer
    from ..pulses import concat

    info = sampled_info(args.capture, fmt=args.capture_format,
                        **sampled_options.reader_options(args))
    slicer = open_slicer(info, config)
    train = concat(list(iter_sliced(info, slicer)))
    report = slicer.report()
    if args.output:
        check_writable(args.output, args.force)
        write_capture(args.output, train)
        err.print(f"wrote {args.output} ({len(train)} pulses)", markup=False)
    if args.json:
        print_json({"capture": info.path, "format": info.format,
                    "sample_type": info.sample_type, "channel": info.channel,
                    "output": args.output, **report.as_dict()})
        return 0
    out.print(report_table(report, f"{args.capture}: {info.format}, {info.sample_type}, "
                                   f"{info.n_samples} samples, {info.duration_s:.6g} s"))
    return 0


def report_table(report, title: str) -> Table:
    """A table of the front end's settings and the levels and thresholds it found."""
    r = report
    t = Table(title=title, title_justify="left", box=box.SIMPLE_HEAD, show_edge=False)
    t.add_column("stage")
    t.add_column("figure")
    t.add_column("value", justify="right")
    smooth = "off" if not r.smoothing_cutoff_hz else f"{r.smoothing_cutoff_hz:.6g} Hz"
    rows = [
        ("input", "sample rate", f"{r.sample_rate_hz:.6g} Hz"),
        ("input", "clipped samples", f"{100 * r.clipped_fraction:.3g} %"),
        ("envelope", "mode", r.envelope + (" (inverted)" if r.invert else "")),
        ("low-pass", "cutoff (2nd-order Bessel)", smooth),
        ("low-pass", "step delay / 10-90 % rise",
         f"{r.smoothing_delay_us:.3g} / {r.smoothing_rise_us:.3g} µs"),
        ("decimation", "factor, output rate", f"{r.decimate}, {r.output_rate_hz:.6g} Hz"),
        ("slicer", "thresholds", r.thresholds),
        ("slicer", "fraction, hysteresis", f"{r.threshold_fraction:g}, {r.hysteresis:g}"),
        ("slicer", "tracker decay / attack", f"{r.decay_us:g} / {r.attack_us:g} µs"),
        ("slicer", "squelch (min contrast)", f"{r.min_contrast:g}"),
        ("levels", "noise floor (mean, rms)", f"{r.floor_level:.4g}, {r.floor_rms:.3g}"),
        ("levels", "carrier (mean, rms)", f"{r.carrier_level:.4g}, {r.carrier_rms:.3g}"),
        ("levels", "SNR estimate", f"{r.snr_db:.1f} dB"),
        ("thresholds", "high: mean (min..max)", f"{r.threshold_high_mean:.4g} "
         f"({r.threshold_high_min:.4g}..{r.threshold_high_max:.4g})"),
        ("thresholds", "low: mean (min..max)", f"{r.threshold_low_mean:.4g} "
         f"({r.threshold_low_min:.4g}..{r.threshold_low_max:.4g})"),
        ("thresholds", "squelched samples", f"{100 * r.squelched_fraction:.3g} %"),
        ("output", "pulses (marks)", f"{r.pulses} ({r.marks})"),
    ]
    if r.smoothing_note:
        rows.insert(4, ("low-pass", "note", r.smoothing_note))
    for row in rows:
        t.add_row(*row)
    return t
