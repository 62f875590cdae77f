"""Argument helpers shared by several commands."""

from __future__ import annotations

import argparse

from ..errors import ValueRangeError, excerpt
from ..frame import values_from_payload
from ..spec.model import FrameSpec
from ..spec_io import load_spec_and_defaults


def add_spec_argument(p: argparse.ArgumentParser) -> None:
    p.add_argument("spec", metavar="SPEC", help="frame spec file (TOML)")


def add_values_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--set", dest="sets", action="append", default=[], metavar="FIELD=VALUE",
                   help="field value (physical units; repeatable); unset fields take the spec default")
    p.add_argument("--payload", metavar="HEX",
                   help="raw field bytes as packed on air before whitening, instead of --set")


def add_json_argument(p: argparse.ArgumentParser) -> None:
    p.add_argument("--json", action="store_true", help="print JSON on stdout (for scripts)")


def add_output_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("-o", "--output", metavar="FILE", help="write to FILE instead of stdout")
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")


def add_progress_argument(p: argparse.ArgumentParser) -> None:
    p.add_argument("--progress", choices=("auto", "on", "off"), default="auto",
                   help="progress bar on stderr (auto: only on a terminal and without --json)")


def parse_value(text: str) -> object:
    """A --set value: int (decimal/0x/0b), float, or the string itself (hex for bytes)."""
    t = text.strip()
    try:
        return int(t.replace("_", ""), 0)
    except ValueError:
        pass
    try:
        return float(t)
    except ValueError:
        return t


def values_from_args(spec: FrameSpec, defaults: dict[str, object],
                     args: argparse.Namespace) -> dict[str, object]:
    """Field values from --set / --payload, falling back to the spec defaults."""
    if args.payload is not None:
        if args.sets:
            raise ValueRangeError("give either --payload or --set, not both")
        try:
            payload = bytes.fromhex(args.payload.replace(" ", ""))
        except ValueError:
            raise ValueRangeError(f"--payload {excerpt(args.payload)} is not hex") from None
        return values_from_payload(spec, payload)
    values = dict(defaults)
    for item in args.sets:
        if "=" not in item:
            raise ValueRangeError(f"--set {excerpt(item)}: expected FIELD=VALUE")
        k, v = item.split("=", 1)
        values[k.strip()] = parse_value(v)
    _warn_off_grid(spec, values)
    return values


def _warn_off_grid(spec: FrameSpec, values: dict[str, object]) -> None:
    """Warn (stderr) when a scaled value is not a whole number of scale steps."""
    from ..bits import from_raw, to_raw
    from .output import err

    for f in spec.fields:
        if f.kind != "int" or not f.is_scaled or f.name not in values:
            continue
        try:
            sent = from_raw(f, to_raw(f, values[f.name]))
        except ValueRangeError:
            continue  # reported by the encoder
        if float(values[f.name]) != sent:  # type: ignore[arg-type]
            err.print(f"warning: {f.name}={values[f.name]} is not a multiple of its scale "
                      f"{f.scale:g} (offset {f.offset:g}); {sent} is sent", markup=False)


def load(args: argparse.Namespace) -> tuple[FrameSpec, dict[str, object]]:
    return load_spec_and_defaults(args.spec)


def int_in(lo: int, hi: int):
    """argparse type: an integer in lo..hi (message names the allowed range)."""

    def parse(text: str) -> int:
        try:
            v = int(text, 0)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{excerpt(text)} is not an integer") from None
        if not lo <= v <= hi:
            raise argparse.ArgumentTypeError(f"{excerpt(v)} is out of range; allowed {lo}..{hi}")
        return v

    return parse


def float_in(lo: float, hi: float, *, lo_open: bool = False, hi_open: bool = False):
    """argparse type: a finite number in [lo, hi] (ends open when asked)."""
    import math

    def parse(text: str) -> float:
        try:
            v = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{excerpt(text)} is not a number") from None
        bad_lo = v < lo or (lo_open and v == lo)
        bad_hi = v > hi or (hi_open and v == hi)
        if not math.isfinite(v) or bad_lo or bad_hi:
            raise argparse.ArgumentTypeError(
                f"{excerpt(text)} is out of range; allowed {'(' if lo_open else '['}{lo:g}, {hi:g}"
                f"{')' if hi_open else ']'}")
        return v

    return parse


#: argparse types shared by the simulation commands
SEED = int_in(0, 2**63 - 1)
WORKERS = int_in(1, 64)
FRAMES = int_in(1, 100_000_000)
FINITE = float_in(-1e12, 1e12)
