"""Options shared by the commands that read sampled captures (``slice``, ``decode``,
``plot``): how to read the file and how the front end slices it."""

from __future__ import annotations

import argparse

from . import common

#: sampled capture formats (the names of ookframe.captures.sampled.SAMPLED_FORMATS, which a
#: test compares with this tuple; kept here so that building the parser imports no reader)
SAMPLED_FORMATS = ("wav", "iq", "real")
#: raw sample types (ookframe.captures.sampled.RAW_SAMPLE_TYPES, compared by a test)
RAW_SAMPLE_TYPES = ("u8", "s8", "s16", "f32")
#: envelope modes (ookframe.frontend.ENVELOPES, compared by a test)
ENVELOPES = ("auto", "magnitude", "rectify", "baseband")


def _channel(text: str) -> int | str:
    if text.strip().lower() == "iq":
        return "iq"
    return common.int_in(0, 1023)(text)


def add_reader_arguments(p: argparse.ArgumentParser) -> None:
    """Add --sample-rate, --sample-type and --channel."""
    g = p.add_argument_group("sampled captures (.wav; raw .iq interleaved I/Q; raw .raw real "
                             "samples)")
    g.add_argument("--sample-rate", type=common.float_in(0, 1e10, lo_open=True),
                   metavar="HZ", dest="sample_rate_hz",
                   help="sample rate of a raw capture, Hz (a WAV states its own)")
    g.add_argument("--sample-type", choices=RAW_SAMPLE_TYPES, default=None,
                   help="raw sample type: u8 (offset 127.5), s8, s16 or f32, little-endian "
                   "(default: from a name like capture.s16.iq)")
    g.add_argument("--channel", type=_channel, default=None, metavar="N|iq",
                   help="channel of a multi-channel WAV to read, from 0 (default 0), or 'iq' "
                   "for left = I, right = Q")


def add_frontend_arguments(p: argparse.ArgumentParser) -> None:
    """Add the front-end options (envelope, smoothing, decimation, slicer)."""
    g = p.add_argument_group("front end (sampled captures): envelope -> low-pass -> "
                             "decimation -> adaptive slicer with hysteresis")
    g.add_argument("--envelope", choices=ENVELOPES, default=None,
                   help="magnitude (I/Q), rectify (|x| of real audio carrying a tone), "
                   "baseband (a receiver's data pin); default auto: magnitude for I/Q, "
                   "baseband for real samples")
    g.add_argument("--invert", action="store_true", default=None,
                   help="flip the polarity (an active-low data pin)")
    g.add_argument("--smooth-us", type=common.float_in(0, 1e9), metavar="T",
                   help="envelope low-pass (2nd-order Bessel, cutoff 1/(2T)); 0 = off "
                   "(default: a quarter of the spec's unit, else 10 µs)")
    g.add_argument("--decimate", type=common.int_in(1, 10_000), metavar="N",
                   help="keep every N-th sample after the low-pass (default 1)")
    g.add_argument("--decay-us", type=common.float_in(0, 1e12, lo_open=True), metavar="T",
                   help="decay time constant of the carrier and floor trackers (default: 50 "
                   "units of the spec, else 10000 µs)")
    g.add_argument("--attack-us", type=common.float_in(0, 1e12), metavar="T",
                   help="attack time constant of the trackers (default 0: instant)")
    g.add_argument("--threshold-fraction", type=common.float_in(0, 1, lo_open=True,
                                                                hi_open=True), metavar="F",
                   help="threshold between floor (0) and carrier (1) (default 0.5)")
    g.add_argument("--hysteresis", type=common.float_in(0, 1, hi_open=True), metavar="F",
                   help="hysteresis width as a fraction of carrier - floor (default 0.2)")
    g.add_argument("--min-contrast", type=common.float_in(0, 1e6), metavar="A",
                   help="squelch: no mark while carrier - floor is below A (full scale 1.0; "
                   "default 0 = off)")
    g.add_argument("--threshold-high", type=common.FINITE, metavar="A",
                   help="fixed high threshold (envelope units, full scale 1.0), with "
                   "--threshold-low: replaces the adaptive thresholds")
    g.add_argument("--threshold-low", type=common.FINITE, metavar="A",
                   help="fixed low threshold, with --threshold-high")


#: destinations of the options above, with their flags (for "applies to sampled only")
_FLAGS = {"sample_rate_hz": "--sample-rate", "sample_type": "--sample-type",
          "channel": "--channel", "envelope": "--envelope", "invert": "--invert",
          "smooth_us": "--smooth-us", "decimate": "--decimate", "decay_us": "--decay-us",
          "attack_us": "--attack-us", "threshold_fraction": "--threshold-fraction",
          "hysteresis": "--hysteresis", "min_contrast": "--min-contrast",
          "threshold_high": "--threshold-high", "threshold_low": "--threshold-low"}


def given_flags(args: argparse.Namespace) -> list[str]:
    """Return the sampled-capture options given on the command line."""
    return [flag for dest, flag in _FLAGS.items() if getattr(args, dest, None) is not None]


def reader_options(args: argparse.Namespace) -> dict[str, object]:
    """Return the keyword arguments of ``sampled_info`` from the command line."""
    return {"sample_rate_hz": args.sample_rate_hz, "sample_type": args.sample_type,
            "channel": args.channel}


def frontend_config(args: argparse.Namespace, unit_us: float | None = None):
    """Return the ``FrontEndConfig`` the options ask for; defaults suit ``unit_us`` (a spec's
    symbol unit) when given. ValueRangeError for a combination the config refuses."""
    from ..errors import ValueRangeError
    from ..frontend import FrontEndConfig, config_for_unit

    given = {k: getattr(args, k) for k in (
        "envelope", "invert", "smooth_us", "decimate", "decay_us", "attack_us",
        "threshold_fraction", "hysteresis", "min_contrast", "threshold_high",
        "threshold_low")}
    try:
        if unit_us is not None:
            return config_for_unit(unit_us, **given)
        return FrontEndConfig(**{k: v for k, v in given.items() if v is not None})
    except ValueError as exc:
        raise ValueRangeError(f"front end: {exc}") from None


def report_line(report) -> str:
    """One line naming the front end's chosen levels and thresholds (for stderr)."""
    r = report
    smooth = (f"low-pass {r.smoothing_cutoff_hz / 1e3:.3g} kHz" if r.smoothing_cutoff_hz
              else "no low-pass")
    return (f"front end: {r.envelope} envelope at {r.sample_rate_hz / 1e3:g} kHz, {smooth}, "
            f"decimate {r.decimate}; {r.thresholds} thresholds low {r.threshold_low_mean:.4g} / "
            f"high {r.threshold_high_mean:.4g} (mean), floor {r.floor_level:.4g} "
            f"(rms {r.floor_rms:.3g}), carrier {r.carrier_level:.4g}, SNR about "
            f"{r.snr_db:.1f} dB; {r.pulses} pulses from {r.n_samples} samples"
            + (f"; {100 * r.clipped_fraction:.2g} % of samples clipped (lower the gain)"
               if r.clipped_fraction > 1e-4 else ""))
