"""``ookframe check``: validate a spec and print its layout, timing and airtime."""

from __future__ import annotations

import argparse

from rich.table import Table

from ..layout import frame_layout
from ..linecodes import get_line_code
from . import common
from .output import REGULATORY_CAUTION, err, out, print_json

NAME = "check"
HELP = "validate a spec; print the frame layout, timing, airtime and design report"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    common.add_json_argument(p)


def layout_dict(spec, lay) -> dict:
    lc = get_line_code(spec.line_code)
    return {
        "name": spec.name,
        "unit_us": spec.unit_us,
        "bit_rate_bps": 1e6 / (spec.unit_us * lc.units_per_bit),
        "line_code_name": spec.line_code.name,
        "sections": [
            {"section": r.section, "bits": r.bits, "chips": r.chips, "duration_us": r.duration_us,
             "detail": r.detail}
            for r in lay.rows
        ],
        "frame_us": lay.frame_us,
        "repeats": lay.repeats,
        "gap_us": lay.gap_us,
        "airtime_us": lay.airtime_us,
        "mark_us": lay.mark_us,
        "data_dependent": lay.data_dependent,
    }


def run(args: argparse.Namespace) -> int:
    spec, defaults = common.load(args)
    lay = frame_layout(spec)
    info = layout_dict(spec, lay)
    if args.json:
        info["cautions"] = [REGULATORY_CAUTION]
        print_json(info)
        return 0
    err.print(f"spec '{spec.name}' is valid")
    t = Table(title=f"{spec.name}: {spec.line_code.name}, unit {spec.unit_us:g} µs, "
              f"{info['bit_rate_bps']:g} bit/s")
    for col in ("section", "bits", "symbol units", "duration µs", "detail"):
        t.add_column(col, justify="left" if col in ("section", "detail") else "right")
    for r in lay.rows:
        t.add_row(r.section, str(r.bits), str(r.chips), f"{r.duration_us:.1f}", r.detail)
    t.add_row("frame", str(sum(r.bits for r in lay.rows)), str(round(lay.frame_us / spec.unit_us)),
              f"{lay.frame_us:.1f}", "")
    out.print(t)
    note = " (for all-zero field values; length depends on the data)" if lay.data_dependent else ""
    out.print(f"airtime of one transmission: {lay.airtime_us / 1000:.2f} ms = {lay.repeats} x "
              f"{lay.frame_us / 1000:.2f} ms + {lay.repeats - 1} gap(s) of {lay.gap_us / 1000:.2f} ms{note}")
    out.print(f"[yellow]caution:[/yellow] {REGULATORY_CAUTION}")
    return 0
