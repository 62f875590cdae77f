"""``ookframe decode``: every frame found in a pulse capture."""

from __future__ import annotations

import argparse
import functools
import operator

from rich import box
from rich.markup import escape
from rich.table import Table

from . import common, sampled_options
from .output import err, out, print_json

NAME = "decode"
HELP = ("decode every frame in a capture: pulses (CSV, JSON, VCD) or samples (WAV, raw I/Q, "
        "raw real) through the front end of `slice`")
#: capture formats --format accepts (the names of ookframe.captures.FORMATS, which a test
#: compares with this tuple; kept here so that building the parser imports no reader)
CAPTURE_FORMATS = ("csv", "json", "vcd")


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("capture", metavar="CAPTURE", help="capture file: pulses in .csv "
                   "(level,duration_us), .json or .vcd; samples in .wav, .iq (raw I/Q) or "
                   ".raw (raw real)")
    p.add_argument("--format", choices=CAPTURE_FORMATS + sampled_options.SAMPLED_FORMATS,
                   default=None, dest="capture_format",
                   help="capture format, overriding the file extension (default: from the "
                   "extension: .csv, .json, .vcd, .wav, .iq, .raw)")
    p.add_argument("--signal", metavar="NAME", help="VCD signal to read (default: the only 1-bit signal)")
    p.add_argument("--good-only", action="store_true", help="leave out frames whose check fails")
    common.add_json_argument(p)
    sampled_options.add_reader_arguments(p)
    sampled_options.add_frontend_arguments(p)


def frame_dicts(frames) -> list[dict]:
    """JSON-ready dicts of decoded frames."""
    return [
        {
            "fields": f.fields,
            "payload_hex": f.payload_hex,
            "crc_ok": f.crc_ok,
            "start_us": f.start_us,
            "end_us": f.end_us,
            "unit_us": f.unit_us,
            "worst_deviation": f.worst_deviation,
            "sync_errors": f.sync_errors,
            "corrected": f.corrected,
        }
        for f in frames
    ]


#: pulses read and decoded at a time: memory stays bounded by this (plus one frame span),
#: whatever the capture's size
CHUNK_PULSES = 250_000


def run(args: argparse.Namespace) -> int:
    from ..decode import decode_stream
    spec, _ = common.load(args)
    chunks, reports = pulse_source(args, spec)
    frames = list(decode_stream(spec, chunks(), include_bad=not args.good_only))
    if reports:
        err.print(sampled_options.report_line(reports[-1]), markup=False)
    if args.json:
        print_json(frame_dicts(frames))
        return 0
    if not frames:
        r = _diagnose_pieces(spec, chunks())
        units = ", ".join(f"{u:g}" for u in r.head_units_us) or "-"
        err.print(f"no frames of '{spec.name}' found in {args.capture}: {r.stage}. "
                  f"{r.pulses} pulses ({r.after_glitch_filter} after the glitch filter), "
                  f"{r.bursts} burst(s), {r.heads} preamble(s) (unit measured {units} µs; "
                  f"spec {r.unit_us:g} µs), {r.synced} with a sync word, {r.check_ok} "
                  "with a passing check")
        return 0
    out.print(frames_table(spec, frames, f"{len(frames)} frame(s) of '{spec.name}' in "
                           f"{args.capture}"))
    return 0


def pulse_source(args: argparse.Namespace, spec):
    """Return (a function returning a fresh iterator over the capture's pulse pieces, the
    list the front end's report of each pass is appended to; empty for pulse captures)."""
    from ..captures.sampled import sampled_format
    from ..errors import CaptureError

    reports: list = []
    if sampled_format(args.capture, args.capture_format) is None:
        from ..captures import iter_capture

        flags = sampled_options.given_flags(args)
        if flags:
            raise CaptureError(f"{args.capture}: {', '.join(flags)} applies to sampled "
                               "captures (.wav, .iq, .raw) only, not to pulse captures")

        def pulse_chunks():
            return iter_capture(args.capture, chunk_pulses=CHUNK_PULSES, signal=args.signal,
                                fmt=args.capture_format)

        return pulse_chunks, reports
    from ..captures.sampled import sampled_info
    from ..frontend import iter_sliced, open_slicer

    if args.signal is not None:
        raise CaptureError(f"{args.capture}: --signal applies to VCD captures only")
    config = sampled_options.frontend_config(args, spec.unit_us)
    info = sampled_info(args.capture, fmt=args.capture_format,
                        **sampled_options.reader_options(args))

    def sliced_chunks():
        slicer = open_slicer(info, config)
        yield from iter_sliced(info, slicer)
        reports.append(slicer.report())

    return sliced_chunks, reports


def _diagnose_pieces(spec, chunks):
    """``diagnose`` summed over the pieces of a capture (exact for a capture of one piece;
    for longer ones a burst or preamble cut by a piece's edge may count twice)."""
    from ..decode import diagnose

    reports = [diagnose(spec, chunk) for chunk in chunks]
    if not reports:
        import numpy as np

        from ..pulses import PulseTrain

        return diagnose(spec, PulseTrain(np.zeros(0, np.uint8), np.zeros(0)))
    return functools.reduce(operator.add, reports)


def frames_table(spec, frames, title: str) -> Table:
    """A table of decoded frames, one section each: the frame's number, time and check
    result, its reception figures (clock error, worst edge deviation, sync-word bit
    errors, edges moved by the check-aided recovery) and one row per field with value and
    unit."""
    t = Table(title=title, title_justify="left", box=box.SIMPLE_HEAD, show_edge=False)
    for head in ("frame", "reception", "field", "value", "unit"):
        t.add_column(head, justify="right" if head == "value" else "left",
                     overflow="fold", no_wrap=head in ("frame", "reception"))
    for i, fr in enumerate(frames):
        left = [f"#{i}  at {fr.start_us / 1000:.3f} ms",
                "check pass" if fr.crc_ok else "check [red]FAIL[/red]"]
        clock = f"{100 * fr.clock_error:+.2f}".replace("-0.00", "+0.00")
        mid = [f"clock {clock} %", f"worst dev {100 * fr.worst_deviation:.0f} %",
               f"sync errors {fr.sync_errors}"]
        if fr.corrected:
            mid.append(f"corrected {fr.corrected} edge(s)")
        rows = [(escape(f.name), escape(_value_text(fr.fields.get(f.name))),
                 escape(f.unit or ("hex" if f.kind == "bytes" else ""))) for f in spec.fields]
        n = max(len(left), len(mid), len(rows))
        for k in range(n):
            cells = rows[k] if k < len(rows) else ("", "", "")
            t.add_row(left[k] if k < len(left) else "", mid[k] if k < len(mid) else "", *cells,
                      end_section=k == n - 1)
    return t


def _value_text(v: object) -> str:
    """A field value for the table: floats without float noise, hex strings as they are."""
    if isinstance(v, float):
        return f"{v:.10g}"
    return "-" if v is None else str(v)
