"""``ookframe emit``: write the C header for a spec and print the timing report."""

from __future__ import annotations

import argparse
from pathlib import Path

from rich.table import Table

from ..codegen import CRC_IMPLS, DEFAULT_PRESCALERS, TimerTarget, emit_header
from ..codegen.timing import DEFAULT_CLOCK_HZ, DEFAULT_TIMER_BITS, DEFAULT_TOLERANCE, TX_MODES
from ..errors import excerpt
from . import common
from .output import check_writable, err, out, print_json, write_atomic

NAME = "emit"
HELP = "generate the C99 header <name>.h: transmitter, receiver or both (timer-tick timing, report)"


def _prescalers(text: str) -> tuple[int, ...]:
    items = [t.strip() for t in text.split(",") if t.strip()]
    try:
        return tuple(int(t, 0) for t in items)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{excerpt(text)} is not a comma-separated list of integers, e.g. 1,8,64,256,1024") from None


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("-o", "--output-dir", dest="output_dir", metavar="DIR", required=True,
                   help="folder for <name>.h (created if missing)")
    p.add_argument("--mcu-clock-hz", type=int, default=DEFAULT_CLOCK_HZ, metavar="HZ",
                   help=f"timer input clock before the prescaler (default {DEFAULT_CLOCK_HZ})")
    p.add_argument("--timer-bits", type=int, default=DEFAULT_TIMER_BITS, metavar="N",
                   help=f"compare-timer width: 8, 16, 24 or 32 (default {DEFAULT_TIMER_BITS})")
    p.add_argument("--prescalers", type=_prescalers, default=DEFAULT_PRESCALERS,
                   metavar="LIST", help="allowed prescalers, comma-separated (default "
                   + ",".join(map(str, DEFAULT_PRESCALERS)) + ")")
    p.add_argument("--crc-impl", choices=CRC_IMPLS, default="table256",
                   help="CRC code: 256-entry table (fastest), 16-entry nibble table, or "
                   "bitwise (smallest); default table256")
    p.add_argument("--tolerance-pct", type=float, default=100 * DEFAULT_TOLERANCE, metavar="PCT",
                   help="refuse when any duration is off by more than PCT %% after "
                   f"quantisation (default {100 * DEFAULT_TOLERANCE:g})")
    p.add_argument("--tx-mode", choices=TX_MODES, default="auto",
                   help="buffer: also the run buffer transmitter (<prefix>_tx_start fills timer "
                   "reload values, the compare ISR loads the next; refused when the timer cannot "
                   "hold it); stream: the streaming tx_next only (least RAM, for long frames); "
                   "auto (default): buffer when possible, else stream")
    p.add_argument("--side", choices=("tx", "rx", "both"), default="tx",
                   help="tx: the transmitter (default); both: the transmitter plus the "
                   "receiver (<PREFIX>_rx_*), each behind a guard (<PREFIX>_WANT_TX, "
                   "<PREFIX>_WANT_RX, default 1); rx: the same header with <PREFIX>_WANT_TX "
                   "defaulting to 0 (a receive-only build)")
    p.add_argument("--force", action="store_true", help="overwrite an existing header")
    common.add_json_argument(p)


def report_table(report: dict) -> Table:
    """Return the timing table of an emit report."""
    t = Table(title=f"{report['header']}: {report['clock_hz']} Hz / prescaler "
              f"{report['prescaler']} = tick {report['tick_us']:g} µs, {report['timer_bits']}-bit "
              f"timer, worst error {report['worst_error_pct']:.3f} % (limit "
              f"{report['tolerance_pct']:g} %)")
    for col in ("duration", "nominal µs", "ticks", "quantised µs", "error %"):
        t.add_column(col, justify="left" if col == "duration" else "right")
    for d in report["durations"]:
        t.add_row(str(d["name"]), f"{d['nominal_us']:.3f}", str(d["ticks"]),
                  f"{d['quantised_us']:.3f}", f"{d['error_pct']:+.3f}")
    return t


def _rx_ram_line(report: dict) -> str:
    """Return the receiver's RAM as one line of the text report."""
    rx = report["receiver"]
    return (f"receiver RAM at most {rx['ram_bytes']} B ({rx['ram_bytes_without_recovery']} B "
            "with <PREFIX>_RX_RECOVERY 0); 32-bit targets may pad a few bytes")


def _ram_line(report: dict) -> str:
    """Return the RAM of both transmitters as one line of the text report."""
    if not report["transmitter_default_on"]:
        return ("receive-only header: transmitter left out (<PREFIX>_WANT_TX defaults to 0; "
                "--side both for both)")
    stream = report["streaming"]["ram_bytes"]
    text = (f"streaming transmitter RAM {stream['avr']} B (8-bit AVR) / {stream['arm32']} B "
            "(32-bit MCU); ")
    buf = report["run_buffer"]
    if buf is None:
        return text + f"run buffer not generated ({report['run_buffer_refusal'] or '--tx-mode stream'})"
    text += (f"run buffer RAM {buf['ram_bytes']['avr']} B / {buf['ram_bytes']['arm32']} B "
             f"({buf['entries']} entries)")
    if buf["avr_isr_cycles"]:
        text += f", AVR assembly ISR at most {buf['avr_isr_cycles']['worst']} cycles"
    return text


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    target = TimerTarget(clock_hz=args.mcu_clock_hz, timer_bits=args.timer_bits,
                         prescalers=tuple(args.prescalers), tolerance=args.tolerance_pct / 100,
                         crc_impl=args.crc_impl, tx_mode=args.tx_mode)
    emitted = emit_header(spec, target, side=args.side)  # everything is computed before anything is written
    path = Path(args.output_dir) / emitted.filename
    check_writable(path, args.force)
    write_atomic(path, emitted.text, force=args.force, make_parents=True)  # -o DIR is created
    report = {**emitted.report(), "path": str(path)}
    if args.json:
        print_json(report)
    else:
        out.print(report_table(report))
        out.print(f"pulse type {report['ticks_type']}, longest pulse {report['max_pulse_ticks']} "
                  f"ticks; frame up to {report['max_frame_bits']} bits"
                  + (f"; CRC code {report['crc_impl']}" if report["crc_impl"] else ""))
        out.print(_ram_line(report))
        if report["receiver"] is not None:
            out.print(_rx_ram_line(report))
        periods = report["gap_timer_periods"]
        if len(periods) > 1:
            out.print(f"repeat gap longer than one {report['timer_bits']}-bit timer period: sent "
                      f"as {len(periods)} periods of {min(periods)}..{max(periods)} ticks "
                      f"({sum(periods)} ticks in all)")
    err.print(f"wrote {path}")
    return 0
