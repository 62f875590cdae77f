"""Options of the physical link model (``--channel physical``), shared by stress, sweep
and range: transmitter, path, receiver and where the receiver stands."""

from __future__ import annotations

import argparse

from ..cautions import RANGE_CAUTION
from ..channel.physical import (
    MAX_CLOCK_PPM,
    RECEIVERS,
    PathModel,
    PhysicalChannel,
    Transmitter,
    get_receiver,
    mw_to_dbm,
)
from ..errors import ValueRangeError
from . import common
from .channel_options import channel_word

#: the value of ``--channel`` that selects the physical link model
PHYSICAL = "physical"

_DB = common.float_in(-300, 300)
_POSITIVE = common.float_in(0, 1e12, lo_open=True)
_PPM = common.float_in(-MAX_CLOCK_PPM, MAX_CLOCK_PPM, lo_open=True, hi_open=True)


def channel_or(args: argparse.Namespace, pulse_level):
    """Return the physical channel when ``--channel physical`` was given (the
    ``channel_options.CHANNEL_WORDS`` word), else ``pulse_level(args)`` (preset, channel
    file and impairment options)."""
    if channel_word(args) == PHYSICAL:
        return physical_from_args(args)
    return pulse_level(args)


def add_physical_arguments(p: argparse.ArgumentParser, *, position: bool = True) -> None:
    """Add the transmitter / path / receiver options (and --distance-m / --rx-power-dbm
    when ``position``)."""
    tx, rx = Transmitter(), get_receiver("cheap")
    g = p.add_argument_group(
        "physical link (with --channel physical; figures are estimates, common practice, "
        "no source unless stated)")
    if position:
        where = g.add_mutually_exclusive_group()
        where.add_argument("--distance-m", type=_POSITIVE, metavar="D",
                           help="distance between the antennas, m (default 10)")
        where.add_argument("--rx-power-dbm", type=_DB, metavar="P",
                           help="carrier power at the receiver input, dBm (path unused)")
    power = g.add_mutually_exclusive_group()
    power.add_argument("--tx-power-dbm", type=_DB, metavar="P",
                       help=f"transmitter carrier power, dBm [{tx.power_dbm:g}]")
    power.add_argument("--tx-power-mw", type=_POSITIVE, metavar="P",
                       help="transmitter carrier power, mW (instead of --tx-power-dbm)")
    g.add_argument("--tx-antenna-dbi", type=_DB, metavar="G",
                   help=f"transmit antenna gain, dBi [{tx.antenna_gain_dbi:g}]")
    g.add_argument("--rx-antenna-dbi", type=_DB, metavar="G",
                   help=f"receive antenna gain, dBi [{rx.antenna_gain_dbi:g}]")
    g.add_argument("--frequency-hz", type=_POSITIVE, metavar="F",
                   help=f"carrier frequency, Hz [{tx.frequency_hz:g}]")
    g.add_argument("--startup-tau-us", type=_POSITIVE, metavar="T",
                   help=f"transmitter start-up time constant, µs [{tx.startup_tau_us:g}]")
    g.add_argument("--ringdown-tau-us", type=_POSITIVE, metavar="T",
                   help=f"transmitter ring-down time constant, µs [{tx.ringdown_tau_us:g}]")
    g.add_argument("--clock-ppm", type=_PPM, metavar="E",
                   help="error of the transmitter's MCU clock, ppm (+: every duration "
                   f"longer) [{tx.clock_ppm:g}]")
    g.add_argument("--drift-ppm-per-s", type=_PPM, metavar="D",
                   help="drift of that clock from the start of each transmission, ppm per "
                   f"s [{tx.drift_ppm_per_s:g}]")
    g.add_argument("--path-exponent", type=common.float_in(1, 8), metavar="N",
                   help="log-distance path-loss exponent beyond --reference-m (2: free "
                   "space) [2]")
    g.add_argument("--reference-m", type=_POSITIVE, metavar="D",
                   help="reference distance of the log-distance model, m [1]")
    g.add_argument("--extra-loss-db", type=_DB, metavar="L",
                   help="walls, body or fade margin added to the path loss, dB [0]")
    g.add_argument("--receiver", choices=sorted(RECEIVERS), default="cheap",
                   help="receiver kind: cheap superregenerative (about -105 dBm) or good "
                   "superheterodyne (about -114 dBm) [cheap]")
    g.add_argument("--noise-figure-db", type=_DB, metavar="NF",
                   help=f"receiver noise figure, dB [{rx.noise_figure_db:g} for cheap]")
    g.add_argument("--bandwidth-hz", type=_POSITIVE, metavar="B",
                   help=f"receiver noise bandwidth, Hz [{rx.bandwidth_hz:g} for cheap]")
    g.add_argument("--sensitivity-dbm", type=_DB, metavar="S",
                   help="receiver sensitivity, dBm (sets the required SNR over the noise "
                   "floor) [about -105 for cheap]")
    g.add_argument("--quench-hz", type=_POSITIVE, metavar="F",
                   help=f"quench (detector sampling) rate, Hz [{rx.quench_hz:g} for cheap]")
    g.add_argument("--slicer-tau-us", type=_POSITIVE, metavar="T",
                   help=f"data slicer threshold time constant, µs [{rx.slicer_tau_us:g}]")
    g.add_argument("--data-filter-hz", type=_POSITIVE, metavar="F",
                   help=f"receiver data filter corner, Hz [{rx.data_filter_hz:g}]")


#: option destination -> (part of the channel, field): the options that set one field
#: each (--tx-power-mw and --sensitivity-dbm are converted first, below)
FIELDS: dict[str, tuple[str, str]] = {
    "tx_power_dbm": ("tx", "power_dbm"),
    "tx_antenna_dbi": ("tx", "antenna_gain_dbi"),
    "frequency_hz": ("tx", "frequency_hz"),
    "startup_tau_us": ("tx", "startup_tau_us"),
    "ringdown_tau_us": ("tx", "ringdown_tau_us"),
    "clock_ppm": ("tx", "clock_ppm"),
    "drift_ppm_per_s": ("tx", "drift_ppm_per_s"),
    "path_exponent": ("path", "exponent"),
    "reference_m": ("path", "reference_m"),
    "extra_loss_db": ("path", "extra_loss_db"),
    "rx_antenna_dbi": ("rx", "antenna_gain_dbi"),
    "noise_figure_db": ("rx", "noise_figure_db"),
    "bandwidth_hz": ("rx", "bandwidth_hz"),
    "quench_hz": ("rx", "quench_hz"),
    "slicer_tau_us": ("rx", "slicer_tau_us"),
    "data_filter_hz": ("rx", "data_filter_hz"),
}


def physical_from_args(args: argparse.Namespace, *, distance_m: float | None = None
                       ) -> PhysicalChannel:
    """Return the physical channel the options describe (at ``--distance-m`` or
    ``--rx-power-dbm``; default ``distance_m`` or 10 m)."""
    changes: dict[str, dict[str, float]] = {"tx": {}, "path": {}, "rx": {}}
    if getattr(args, "tx_power_mw", None) is not None:
        changes["tx"]["power_dbm"] = mw_to_dbm(args.tx_power_mw)
    for opt, (part, name) in FIELDS.items():
        if getattr(args, opt, None) is not None:
            changes[part][name] = getattr(args, opt)
    sensitivity = getattr(args, "sensitivity_dbm", None)
    try:
        rx = get_receiver(args.receiver).with_(**changes["rx"])
        if sensitivity is not None:
            rx = rx.with_sensitivity(sensitivity)
        tx = Transmitter(**changes["tx"])
        path = PathModel(**changes["path"])
    except TypeError as e:  # pragma: no cover - field names are fixed above
        raise ValueRangeError(str(e)) from None
    rx_power = getattr(args, "rx_power_dbm", None)
    if rx_power is not None:
        return PhysicalChannel(tx, path, rx, distance_m=None, rx_power_dbm=rx_power)
    d = getattr(args, "distance_m", None)
    return PhysicalChannel(tx, path, rx, distance_m=d if d is not None else (distance_m or 10.0))


def physical_text(ch: PhysicalChannel) -> str:
    """Return a one-line description of the physical link (received power and margin)."""
    where = (f"{ch.distance_m:g} m, exponent {ch.path.exponent:g}" if ch.rx_power_dbm is None
             else "fixed received power")
    return (f"{ch.rx.name} receiver, {where}: received {ch.received_dbm:.1f} dBm, "
            f"sensitivity {ch.rx.sensitivity_dbm:.1f} dBm, margin {ch.margin_db:+.1f} dB")


def receiver_text(ch: PhysicalChannel) -> str:
    """Return a one-line description of the transmitter and receiver (no position)."""
    return (f"{ch.tx.power_dbm:g} dBm transmitter at {ch.tx.frequency_hz / 1e6:g} MHz, "
            f"{ch.rx.name} receiver: noise floor {ch.rx.noise_floor_dbm:.1f} dBm, "
            f"sensitivity {ch.rx.sensitivity_dbm:.1f} dBm")


def caution() -> str:
    """Return the caution shown with power and range figures."""
    return RANGE_CAUTION
