"""``ookframe render``: transmissions of a spec through the physical link model, written as
a sampled capture (WAV or raw I/Q of the antenna signal) or the receiver's data pin."""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np

from ..captures import FORMATS as PULSE_FORMATS
from ..captures import write_capture
from ..captures.sampled import sampled_format, write_samples
from ..channel.physical import (
    apply_physical,
    baseband_snr_db,
    pin_samples,
    render_baseband,
    scaled_samples,
)
from ..errors import ValueRangeError
from ..frame import encode
from ..pulses import PulseTrain, concat
from . import common, physical_options
from .output import check_writable, err, out, print_json

NAME = "render"
HELP = ("write transmissions of a spec through the physical link model as a WAV / raw I/Q "
        "capture of the received signal, or the receiver's data pin")


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    common.add_values_arguments(p)
    p.add_argument("-o", "--output", required=True, metavar="FILE",
                   help="capture to write: .wav (see --wav), .iq (raw interleaved I/Q, "
                   "e.g. cap.u8.iq), .raw (raw real samples of the envelope), or a pulse "
                   "capture (.csv, .json, .vcd) of the receiver's data pin")
    p.add_argument("--force", action="store_true", help="overwrite an existing file")
    p.add_argument("--transmissions", type=common.int_in(1, 10_000), default=1, metavar="N",
                   help="transmissions (all repeats each) to write, a spec gap apart (default 1)")
    p.add_argument("--idle-ms", type=common.float_in(0, 1e6), default=20.0, metavar="T",
                   help="idle time before the first and after the last transmission, ms "
                   "(default 20)")
    p.add_argument("--sample-rate", type=common.float_in(1e3, 1e9), default=250e3,
                   metavar="HZ", help="sample rate of a WAV / I/Q capture (default 250000)")
    p.add_argument("--wav", choices=("envelope", "iq", "pin"), default="envelope",
                   help="what a .wav holds: the signal's envelope (mono), I/Q (stereo) or "
                   "the receiver's data pin (mono 0/1) (default envelope)")
    p.add_argument("--sample-type", metavar="TYPE",
                   help="sample type: WAV u8, s16, s24, s32, f32; raw u8, s8, s16, f32 "
                   "(default s16, or a raw file's second suffix as in cap.u8.iq)")
    p.add_argument("--offset-hz", type=common.FINITE, default=0.0, metavar="F",
                   help="carrier offset from the receiver's tuning, Hz (default 0)")
    p.add_argument("--seed", type=common.SEED, default=0, help="random seed (default 0)")
    physical_options.add_physical_arguments(p)
    common.add_json_argument(p)


def _train(args: argparse.Namespace, spec, defaults) -> tuple[PulseTrain, np.ndarray]:
    """Return the train to send and the start (µs) of each transmission in it."""
    values = common.values_from_args(spec, defaults, args)
    one = encode(spec, values)
    idle_us = args.idle_ms * 1000.0
    starts = idle_us + np.arange(args.transmissions) * (one.total_us + spec.gap_us)
    body = concat([one] * args.transmissions, spec.gap_us)
    if args.idle_ms <= 0:
        return body, starts
    idle = PulseTrain(np.zeros(1, np.uint8), np.array([idle_us]))
    return concat([idle, body, idle]), starts


def run(args: argparse.Namespace) -> int:
    spec, defaults = common.load(args)
    path = Path(args.output)
    sampled = sampled_format(path)
    pulse_file = path.suffix.lower().lstrip(".") in PULSE_FORMATS
    if sampled is None and not pulse_file:
        raise ValueRangeError(f"--output {args.output}: the file name must end in .wav, .iq, "
                              f".raw or a pulse capture format "
                              f"({', '.join('.' + f for f in PULSE_FORMATS)})")
    check_writable(path, args.force)
    if not path.resolve().parent.is_dir():
        raise ValueRangeError(f"--output {args.output}: folder does not exist")
    ch = physical_options.physical_from_args(args)
    train, starts = _train(args, spec, defaults)
    rng = np.random.default_rng(args.seed)
    sample_type = args.sample_type or ("s16" if sampled == "wav" or len(path.suffixes) < 2
                                       else None)
    if pulse_file or (sampled == "wav" and args.wav == "pin"):
        pin = apply_physical(train, ch, rng, burst_starts_us=starts)
        if pulse_file:
            write_capture(path, pin)
        else:
            write_samples(path, scaled_samples(pin_samples(pin, args.sample_rate), "pin"),
                          args.sample_rate, sample_type=sample_type)
        what = "the receiver's data pin"
    else:
        x = render_baseband(train, ch, args.sample_rate, rng, offset_hz=args.offset_hz,
                            burst_starts_us=starts)
        kind = "iq" if sampled == "iq" else "envelope" if sampled == "raw" else args.wav
        write_samples(path, scaled_samples(x, kind), args.sample_rate,
                      sample_type=sample_type)
        what = "the received signal" + (" (envelope)" if kind == "envelope" else " (I/Q)")
    info = {"output": str(path), "content": what, "duration_us": train.total_us,
            "sample_rate_hz": args.sample_rate, "transmissions": args.transmissions,
            "received_dbm": ch.received_dbm, "noise_floor_dbm": ch.rx.noise_floor_dbm,
            "sensitivity_dbm": ch.rx.sensitivity_dbm,
            "sample_snr_db": baseband_snr_db(ch, args.sample_rate),
            "caution": physical_options.caution()}
    if args.json:
        print_json(info)
        return 0
    out.print(f"wrote {path}: {what}, {train.total_us / 1000:.1f} ms, "
              f"{physical_options.physical_text(ch)}; SNR over the sample rate "
              f"{info['sample_snr_db']:.1f} dB", markup=False)
    err.print(physical_options.caution())
    return 0
