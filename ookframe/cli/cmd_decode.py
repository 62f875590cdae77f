"""``ookframe decode``: every frame found in a pulse capture."""

from __future__ import annotations

import argparse

from rich.table import Table

from . import common
from .output import err, out, print_json

NAME = "decode"
HELP = "decode every frame in a pulse capture (CSV, JSON or VCD)"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("capture", metavar="CAPTURE", help="capture file: .csv (level,duration_us), .json or .vcd")
    p.add_argument("--signal", metavar="NAME", help="VCD signal to read (default: the only 1-bit signal)")
    p.add_argument("--good-only", action="store_true", help="leave out frames whose check fails")
    common.add_json_argument(p)


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
        }
        for f in frames
    ]


def run(args: argparse.Namespace) -> int:
    from ..captures import read_capture
    from ..decode import decode
    spec, _ = common.load(args)
    train = read_capture(args.capture, signal=args.signal)
    frames = decode(spec, train, include_bad=not args.good_only)
    if args.json:
        print_json(frame_dicts(frames))
        return 0
    if not frames:
        err.print(f"no frames of '{spec.name}' found in {args.capture} ({len(train)} pulses)")
        return 0
    t = Table(title=f"{len(frames)} frame(s) of '{spec.name}' in {args.capture}")
    for col in ("#", "start µs", "check", "unit µs", "worst dev", "fields"):
        t.add_column(col, justify="right" if col != "fields" else "left")
    for i, f in enumerate(frames):
        fields = ", ".join(f"{k}={v}" for k, v in f.fields.items())
        t.add_row(str(i), f"{f.start_us:.1f}", "ok" if f.crc_ok else "[red]BAD[/red]",
                  f"{f.unit_us:.2f}", f"{100 * f.worst_deviation:.1f} %", fields)
    out.print(t)
    return 0
