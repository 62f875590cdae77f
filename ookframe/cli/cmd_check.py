"""``ookframe check``: validate a spec and print its layout, timing and airtime."""

from __future__ import annotations

import argparse

from rich.table import Table

from ..layout import field_offsets, frame_layout
from ..linecodes import get_line_code
from . import common, exitcodes
from .output import err, out, print_json

NAME = "check"
HELP = "validate a spec; print the frame layout, timing, airtime and design report"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--ber", type=float, default=1e-4,
                   help="bit-error rate for the undetected-error figure (default 1e-4)")
    p.add_argument("--strict", action="store_true",
                   help="treat warnings (design defects such as a sync word that a preamble "
                   "window imitates, or a spec emit would refuse) as errors: exit "
                   f"{exitcodes.BAD_SPEC}")
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
    from ..analysis.report import design_report

    spec, defaults = common.load(args)
    emit_refusal = _warn_emit(spec)
    lay = frame_layout(spec)
    info = layout_dict(spec, lay)
    report = design_report(spec, ber=args.ber)
    info["airtime_for_zero_values_us"] = info.pop("airtime_us")
    offsets = field_offsets(spec)
    info["field_offsets"] = [_offset_dict(o) for o in offsets]
    info.update(report)
    info["emit_refusal"] = emit_refusal
    # --strict fails on every warning printed: design defects and emit's refusal
    strict = [*info["warnings"], *([f"emit would refuse it: {emit_refusal}"] if emit_refusal
                                   else [])]
    if args.json:
        print_json(info)
        return _verdict(args, strict)
    n_warn = len(strict)
    err.print(f"spec '{spec.name}' is valid" + (f", with {n_warn} warning(s)" if n_warn else ""))
    for w in info["warnings"]:
        err.print(f"warning: {w}", markup=False)
    t = Table(title=f"{spec.name}: {spec.line_code.name}, unit {spec.unit_us:g} µs, "
              f"{info['bit_rate_bps']:g} bit/s")
    for col in ("section", "bits", "symbol units", "duration µs", "detail"):
        t.add_column(col, justify="left" if col in ("section", "detail") else "right")
    for r in lay.rows:
        t.add_row(r.section, str(r.bits), str(r.chips), f"{r.duration_us:.1f}", r.detail)
    t.add_row("frame", str(sum(r.bits for r in lay.rows)), str(round(lay.frame_us / spec.unit_us)),
              f"{lay.frame_us:.1f}", "")
    out.print(t)
    out.print(_offsets_table(spec, offsets))
    note = " (for all-zero field values)" if lay.data_dependent else ""
    out.print(f"airtime of one transmission: {lay.airtime_us / 1000:.2f} ms = {lay.repeats} x "
              f"{lay.frame_us / 1000:.2f} ms + {lay.repeats - 1} gap(s) of {lay.gap_us / 1000:.2f} ms{note}; "
              f"longest over all payloads {report['airtime_us'] / 1000:.2f} ms")
    out.print(_report_table(report))
    for c in report["cautions"]:
        err.print(f"caution: {c}", markup=False)
    return _verdict(args, strict)


def _verdict(args: argparse.Namespace, warnings: list[str]) -> int:
    """Exit code: BAD_SPEC when --strict and there are warnings (one error line), else 0."""
    if not (args.strict and warnings):
        return 0
    err.print(f"ookframe check: error: --strict: {len(warnings)} warning(s), first: "
              f"{warnings[0]}", markup=False)
    return exitcodes.BAD_SPEC


def _warn_emit(spec) -> str | None:
    """Warn on stderr when ``emit`` with its default timer would refuse ``spec``; return why."""
    from ..codegen import TimerTarget, emit_problem

    problem = emit_problem(spec)
    if problem:
        t = TimerTarget()
        err.print(f"warning: 'ookframe emit' with its default timer ({t.clock_hz} Hz, "
                  f"{t.timer_bits}-bit, prescalers {','.join(map(str, t.prescalers))}) will "
                  f"refuse this spec: {problem}", markup=False)
    return problem


def _report_table(r: dict) -> Table:
    lc, sy, ck = r["line_code"], r["sync"], r["check"]
    t = Table(title="design report", show_header=True)
    t.add_column("figure")
    t.add_column("value", justify="right")
    t.add_column("note")
    exact = "exact" if lc["exact"] else "bound: " + "; ".join(lc["bounded"])
    t.add_row("line code efficiency", f"{lc['efficiency']:.3f}", "data bits per symbol unit")
    t.add_row("longest run", f"{lc['max_run_units']} units", exact)
    t.add_row("mark fraction", f"{lc['mark_fraction'][0]:.3f} .. {lc['mark_fraction'][1]:.3f}", exact)
    t.add_row("transitions per bit (min)", f"{lc['min_transitions_per_bit']:.3f}", exact)
    t.add_row("sync max sidelobe", str(sy["max_sidelobe"]), f"word {sy['word']}, {sy['n_bits']} bits")
    t.add_row("sync distance to preamble", str(sy["min_distance_to_preamble"]),
              f"{sy['max_errors']} bit error(s) allowed")
    t.add_row("false syncs per hour on noise", f"{sy['false_syncs_per_hour_on_noise']:.3g}",
              "random bits at the spec's bit rate")
    hd = f"{ck['hd']}" if ck["hd_exact"] else f">= {ck['hd']}"
    t.add_row("check", f"{ck['name'] or ck['kind']}", f"{ck['data_bits']} covered bits")
    t.add_row("Hamming distance", hd, "at this frame's covered length")
    t.add_row("P(undetected) per frame", f"{ck['undetected_per_frame_at_ber']:.3g}", f"at BER {ck['ber']:g}")
    if r["bandwidth_hz"] is not None:
        t.add_row("99 % bandwidth", f"{r['bandwidth_hz'] / 1000:.2f} kHz", "one-sided baseband, ideal keying")
    return t


def _offset_dict(o) -> dict:
    return {"name": o.name, "section": o.section, "offset_bits": o.offset_bits,
            "frame_offset_bits": o.frame_offset_bits, "width_bits": o.width_bits,
            "max_offset_bits": o.max_offset_bits,
            "max_frame_offset_bits": o.max_frame_offset_bits,
            "max_width_bits": o.max_width_bits, "varies": o.varies}


def _offsets_table(spec, offsets) -> Table:
    """Each field's bit offset from the fields section and from the frame start, and width
    (ranges after a bytes field; bits before line coding and stuffing)."""
    def span(a: int, b: int) -> str:
        return str(a) if a == b else f"{a}..{b}"

    t = Table(title=f"field offsets (bits before line coding, {spec.bit_order.upper()} first)")
    for col in ("field", "from fields start", "from frame start", "width bits", "unit"):
        t.add_column(col, justify="left" if col in ("field", "unit") else "right")
    for o in offsets:
        t.add_row(o.name if o.section == "fields" else f"({o.section})",
                  span(o.offset_bits, o.max_offset_bits),
                  span(o.frame_offset_bits, o.max_frame_offset_bits),
                  span(o.width_bits, o.max_width_bits), o.unit)
    return t
