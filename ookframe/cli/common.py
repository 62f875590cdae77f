"""Argument helpers shared by several commands."""

from __future__ import annotations

import argparse

from ..errors import ValueRangeError
from ..frame import values_from_payload
from ..spec.load import load_spec_and_defaults
from ..spec.model import FrameSpec


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
            raise ValueRangeError(f"--payload {args.payload!r} is not hex") from None
        return values_from_payload(spec, payload)
    values = dict(defaults)
    for item in args.sets:
        if "=" not in item:
            raise ValueRangeError(f"--set {item!r}: expected FIELD=VALUE")
        k, v = item.split("=", 1)
        values[k.strip()] = parse_value(v)
    return values


def load(args: argparse.Namespace) -> tuple[FrameSpec, dict[str, object]]:
    return load_spec_and_defaults(args.spec)
