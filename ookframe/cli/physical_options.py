"""Options of the physical link model (``--channel physical``), shared by stress, sweep
and range: transmitter, path, receiver and where the receiver stands."""

from __future__ import annotations

import argparse

from ..cautions import RANGE_CAUTION
from ..channel.physical import (
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


def physical_from_args(args: argparse.Namespace, *, distance_m: float | None = None
                       ) -> PhysicalChannel:
    """Return the physical channel the options describe (at ``--distance-m`` or
    ``--rx-power-dbm``; default ``distance_m`` or 10 m)."""
    tx_changes: dict[str, float] = {}
    if getattr(args, "tx_power_mw", None) is not None:
        tx_changes["power_dbm"] = mw_to_dbm(args.tx_power_mw)
    for opt, name in (("tx_power_dbm", "power_dbm"), ("tx_antenna_dbi", "antenna_gain_dbi"),
                      ("frequency_hz", "frequency_hz"), ("startup_tau_us", "startup_tau_us"),
                      ("ringdown_tau_us", "ringdown_tau_us")):
        if getattr(args, opt, None) is not None:
            tx_changes[name] = getattr(args, opt)
    path_changes = {name: getattr(args, opt) for opt, name in (
        ("path_exponent", "exponent"), ("reference_m", "reference_m"),
        ("extra_loss_db", "extra_loss_db")) if getattr(args, opt, None) is not None}
    rx = get_receiver(args.receiver)
    rx_changes = {name: getattr(args, opt) for opt, name in (
        ("rx_antenna_dbi", "antenna_gain_dbi"), ("noise_figure_db", "noise_figure_db"),
        ("bandwidth_hz", "bandwidth_hz"), ("quench_hz", "quench_hz"),
        ("slicer_tau_us", "slicer_tau_us"), ("data_filter_hz", "data_filter_hz"))
        if getattr(args, opt, None) is not None}
    sensitivity = getattr(args, "sensitivity_dbm", None)
    try:
        rx = rx.with_(**rx_changes)
        if sensitivity is not None:
            rx = rx.with_sensitivity(sensitivity)
        tx = Transmitter(**tx_changes)
        path = PathModel(**path_changes)
    except TypeError as e:  # pragma: no cover - option names are fixed above
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
