"""``ookframe encode``: one transmission as bits, pulses, CSV, JSON or VCD."""

from __future__ import annotations

import argparse

from ..frame import encode, frame_bits
from . import common
from .output import out, write_atomic

NAME = "encode"
HELP = "encode one frame (all repeats) from field values"
FORMATS = ("bits", "pulses", "csv", "json", "vcd")


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    common.add_values_arguments(p)
    p.add_argument("--format", choices=FORMATS, default="pulses",
                   help="bits: on-air bits of one frame before line coding; pulses: a pulse "
                   "table (index, mark/space, start and duration in µs, symbol units); "
                   "csv/json/vcd: capture files (default: pulses)")
    common.add_output_arguments(p)


def render(spec, values, fmt: str) -> str:
    """Return the text of the encoded transmission in ``fmt``."""
    if fmt == "bits":
        return "".join(map(str, frame_bits(spec, values).tolist())) + "\n"
    train = encode(spec, values)
    if fmt == "pulses":
        return pulse_table_text(train, spec.unit_us, spec.name)
    return capture_text(train, fmt, signal=spec.name)


def pulse_table_text(train, unit_us: float, name: str) -> str:
    """A fixed-width pulse table: index, level (mark = carrier on, space = off), start and
    duration in µs, duration in symbol units; two '#' lines head it."""
    levels, durs = train.levels.tolist(), train.durations_us.tolist()
    lines = [f"# {name}: {len(durs)} pulses, {sum(durs):.3f} µs, symbol unit {unit_us:g} µs",
             f"# {'index':>7}  {'level':<5}  {'start_us':>12}  {'duration_us':>11}  {'units':>8}"]
    start = 0.0
    for i, (lv, d) in enumerate(zip(levels, durs, strict=True)):
        units = f"{round(d / unit_us, 3):g}"
        lines.append(f"  {i:>7}  {'mark' if lv else 'space':<5}  {start:>12.3f}  {d:>11.3f}  "
                     f"{units:>8}")
        start += d
    return "\n".join(lines) + "\n"


def capture_text(train, fmt: str, signal: str) -> str:
    """Text of a capture file in ``fmt`` (written through the captures writers)."""
    import tempfile
    from pathlib import Path

    from ..captures import write_capture

    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / f"capture.{fmt}"
        opts = {"signal": signal} if fmt == "vcd" else {}
        write_capture(p, train, fmt, **opts)
        return p.read_text(encoding="utf-8")


def run(args: argparse.Namespace) -> int:
    spec, defaults = common.load(args)
    values = common.values_from_args(spec, defaults, args)
    text = render(spec, values, args.format)
    if args.output:
        p = write_atomic(args.output, text, force=args.force)
        from .output import err

        err.print(f"wrote {p}")
    else:
        out.file.write(text)
    return 0
