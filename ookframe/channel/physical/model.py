"""Frozen models of the physical link: transmitter, path, receiver and the whole channel.

Typical values below are common practice, no source, unless a source is named; measure
your own hardware. Every figure is an estimate: radio rules differ by region and change,
check local regulations and certification before transmitting.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, fields, replace

import numpy as np

from ...errors import ValueRangeError
from ...pulses import PulseTrain
from ..impairments import tx_time_map_us
from . import budget

#: largest clock error and drift of a transmitter, ppm (5 %: beyond any working oscillator)
MAX_CLOCK_PPM = 50000.0

#: most power of a licence-free 433.05-434.79 MHz non-specific short-range device in
#: Europe: 10 mW e.r.p. (ERC Recommendation 70-03, Annex 1); other regions differ
LICENCE_FREE_433_MW = 10.0


def _check(obj: object, *, signed: frozenset[str] = frozenset(),
           positive: frozenset[str] = frozenset()) -> None:
    """Raise ValueRangeError unless every numeric field of ``obj`` is finite, >= 0 (unless
    in ``signed``) and > 0 when in ``positive``."""
    kind = type(obj).__name__.lower()
    for f in fields(obj):  # type: ignore[arg-type]
        v = getattr(obj, f.name)
        if isinstance(v, str):
            continue
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise ValueRangeError(f"{kind}.{f.name}: expected a finite number, got {v!r}")
        if f.name not in signed and v < 0:
            raise ValueRangeError(f"{kind}.{f.name}: must be >= 0, got {v!r}")
        if f.name in positive and v <= 0:
            raise ValueRangeError(f"{kind}.{f.name}: must be > 0, got {v!r}")


@dataclass(frozen=True)
class Transmitter:
    """A keyed self-oscillating transmitter (no edge shaping).

    power_dbm: carrier power while keyed on (default 10 dBm = 10 mW, the European
      licence-free figure at 433 MHz, ERC Rec 70-03 Annex 1, e.r.p.).
    startup_tau_us: time constant of the exponential amplitude rise at key-on (the
      oscillator builds up over several µs; common practice, no source).
    ringdown_tau_us: time constant of the amplitude decay at key-off (resonator ring-down;
      common practice, no source).
    antenna_gain_dbi: transmit antenna gain (small loop or printed antennas are well below
      0 dBi; common practice, no source).
    frequency_hz: carrier frequency.
    clock_ppm: error of the MCU clock that times the key, ppm (every duration sent is
      ``1 + clock_ppm * 1e-6`` times its nominal length; a crystal is within tens of ppm,
      an uncalibrated RC oscillator within a few percent; common practice, no source).
    drift_ppm_per_s: linear drift of that clock from the start of each transmission, ppm
      per second (warm-up of an RC oscillator; common practice, no source).
    """

    power_dbm: float = 10.0
    startup_tau_us: float = 4.0
    ringdown_tau_us: float = 2.0
    antenna_gain_dbi: float = 0.0
    frequency_hz: float = 433.92e6
    clock_ppm: float = 0.0
    drift_ppm_per_s: float = 0.0

    def __post_init__(self) -> None:
        _check(self, signed=frozenset({"power_dbm", "antenna_gain_dbi", "clock_ppm",
                                       "drift_ppm_per_s"}),
               positive=frozenset({"startup_tau_us", "ringdown_tau_us", "frequency_hz"}))
        if abs(self.clock_ppm) >= MAX_CLOCK_PPM:
            raise ValueRangeError(f"transmitter.clock_ppm: must be in (-{MAX_CLOCK_PPM:g}, "
                                  f"{MAX_CLOCK_PPM:g}), got {self.clock_ppm!r}")
        if abs(self.drift_ppm_per_s) >= MAX_CLOCK_PPM:
            raise ValueRangeError(f"transmitter.drift_ppm_per_s: must be in "
                                  f"(-{MAX_CLOCK_PPM:g}, {MAX_CLOCK_PPM:g}), got "
                                  f"{self.drift_ppm_per_s!r}")

    def time_map_us(self, t_us: np.ndarray, burst_starts_us: np.ndarray | None = None
                    ) -> np.ndarray:
        """Return the times (µs) at which this transmitter's clock sends nominal times
        ``t_us``: scale ``(1 + clock_ppm 1e-6)(1 + drift_ppm_per_s 1e-6 u)``, u the seconds
        since the current transmission began (``burst_starts_us``, nominal; default one
        transmission from 0), integrated (the pulse-level channel's clock map)."""
        return tx_time_map_us(t_us, self.clock_ppm * 1e-4, self.drift_ppm_per_s * 1e-4,
                              burst_starts_us)

    def keyed(self, train: PulseTrain, burst_starts_us: np.ndarray | None = None
              ) -> PulseTrain:
        """Return ``train`` as this transmitter keys it: durations timed by its clock
        (``time_map_us``); the train itself when the clock is exact."""
        if not (self.clock_ppm or self.drift_ppm_per_s) or len(train) == 0:
            return train
        ends = self.time_map_us(np.cumsum(train.durations_us), burst_starts_us)
        return PulseTrain(train.levels, np.diff(ends, prepend=0.0))

    @staticmethod
    def from_mw(power_mw: float, **kw: float) -> Transmitter:
        """Return a transmitter of ``power_mw`` mW (> 0)."""
        if not power_mw > 0:
            raise ValueRangeError(f"transmitter power: must be > 0 mW, got {power_mw!r}")
        return Transmitter(power_dbm=budget.mw_to_dbm(power_mw), **kw)

    @property
    def power_mw(self) -> float:
        return float(budget.dbm_to_mw(self.power_dbm))


@dataclass(frozen=True)
class PathModel:
    """Log-distance path loss: free space (Friis) up to ``reference_m``, then
    ``10 * exponent`` dB per decade; ``exponent`` 2 is free space everywhere, 2.7..3.5 is
    typical of ground-level links with obstacles (common practice, no source).
    extra_loss_db: walls, body, fade margin added at every distance."""

    exponent: float = 2.0
    reference_m: float = 1.0
    extra_loss_db: float = 0.0

    def __post_init__(self) -> None:
        _check(self, signed=frozenset({"extra_loss_db"}),
               positive=frozenset({"exponent", "reference_m"}))

    def loss_db(self, distance_m: float, frequency_hz: float) -> float:
        """Return the path loss at ``distance_m``, dB."""
        return float(budget.path_loss_db(distance_m, frequency_hz, self.exponent,
                                         self.reference_m, self.extra_loss_db))

    def distance_m(self, loss_db: float, frequency_hz: float) -> float:
        """Return the distance whose path loss is ``loss_db``."""
        return budget.distance_for_loss_m(loss_db, frequency_hz, self.exponent,
                                          self.reference_m, self.extra_loss_db)


@dataclass(frozen=True)
class Receiver:
    """A receiver with a quench (or sampling) clock, a per-quench detector, a data filter
    and a data slicer with an adaptive threshold.

    Noise: noise_figure_db over bandwidth_hz on top of kTB at 290 K sets the noise floor;
    required_snr_db above it is the sensitivity (``sensitivity_dbm``).
    Detector (per quench period, 1 / quench_hz): the oscillation starts from the carrier
    plus complex Gaussian noise, whose power is ``quench_snr_at_sensitivity_db`` below the
    sensitivity; the quench output is the input power above the detection level, in dB,
    over ``log_range_db`` (clipped to 0..1: a logarithmic-mode superregenerative
    detector). The detection level is set so noise alone crosses it in
    ``idle_detect_prob`` of the quench periods: the noisy idle output.
    Data filter: first order, ``data_filter_hz`` corner. Slicer: compares the filtered
    output with its own average over ``slicer_tau_us`` (the threshold settles during the
    preamble), hysteresis ``slicer_hysteresis`` (units of the 0..1 quench output).
    """

    name: str = "cheap"
    noise_figure_db: float = 10.0
    bandwidth_hz: float = 500e3
    required_snr_db: float = 2.0
    antenna_gain_dbi: float = 0.0
    quench_hz: float = 400e3
    quench_snr_at_sensitivity_db: float = -0.5
    idle_detect_prob: float = 0.9
    log_range_db: float = 30.0
    data_filter_hz: float = 5000.0
    slicer_tau_us: float = 2000.0
    slicer_hysteresis: float = 0.02

    def __post_init__(self) -> None:
        _check(self, signed=frozenset({"required_snr_db", "antenna_gain_dbi",
                                       "quench_snr_at_sensitivity_db", "noise_figure_db"}),
               positive=frozenset({"bandwidth_hz", "quench_hz", "log_range_db",
                                   "data_filter_hz", "slicer_tau_us", "idle_detect_prob"}))
        if self.idle_detect_prob >= 1:
            raise ValueRangeError(
                f"receiver.idle_detect_prob: must be in (0, 1), got {self.idle_detect_prob!r}")
        if self.quench_hz > 20e6:
            raise ValueRangeError(f"receiver.quench_hz: must be <= 20 MHz, got {self.quench_hz!r}")
        if self.data_filter_hz >= self.quench_hz / 2:
            raise ValueRangeError("receiver.data_filter_hz: must be below half the quench rate")

    @property
    def noise_floor_dbm(self) -> float:
        """kTB at 290 K plus the noise figure over the bandwidth, dBm."""
        return budget.noise_floor_dbm(self.bandwidth_hz, self.noise_figure_db)

    @property
    def sensitivity_dbm(self) -> float:
        """Noise floor plus required SNR, dBm."""
        return self.noise_floor_dbm + self.required_snr_db

    @property
    def quench_us(self) -> float:
        return 1e6 / self.quench_hz

    def with_sensitivity(self, sensitivity_dbm: float) -> Receiver:
        """Return a copy whose required SNR gives ``sensitivity_dbm``."""
        return replace(self, required_snr_db=sensitivity_dbm - self.noise_floor_dbm)

    def with_(self, **changes: float | str) -> Receiver:
        """Return a copy with some parameters changed (validated)."""
        return replace(self, **changes)  # type: ignore[arg-type]


#: receiver kinds (typical figures, common practice, no source): a cheap
#: superregenerative module (about -105 dBm, 400 kHz quench) and a good superheterodyne
#: module (about -114 dBm; no quench: its detector is sampled at 1 MHz in the model)
RECEIVERS: dict[str, Receiver] = {
    "cheap": Receiver(),
    "good": Receiver(name="good", noise_figure_db=6.0, bandwidth_hz=200e3,
                     required_snr_db=1.0, quench_hz=1e6, idle_detect_prob=0.1,
                     log_range_db=40.0, slicer_tau_us=2000.0),
}


def get_receiver(name: str) -> Receiver:
    """Return the receiver kind called ``name``."""
    try:
        return RECEIVERS[name]
    except KeyError:
        raise ValueRangeError(
            f"unknown receiver {name!r}; allowed: {', '.join(sorted(RECEIVERS))}") from None


@dataclass(frozen=True)
class PhysicalChannel:
    """Transmitter, path and receiver with either a distance or a fixed received power.

    rx_power_dbm, when given, is the carrier power at the receiver input (the path is then
    unused); else the power follows from ``distance_m`` through the link budget.
    """

    tx: Transmitter = field(default_factory=Transmitter)
    path: PathModel = field(default_factory=PathModel)
    rx: Receiver = field(default_factory=Receiver)
    distance_m: float | None = 10.0
    rx_power_dbm: float | None = None

    def __post_init__(self) -> None:
        if (self.distance_m is None) == (self.rx_power_dbm is None):
            raise ValueRangeError("physical channel: give exactly one of distance_m and "
                                  "rx_power_dbm")
        for name in ("distance_m", "rx_power_dbm"):
            v = getattr(self, name)
            if v is not None and (isinstance(v, bool) or not isinstance(v, int | float)
                                  or not math.isfinite(v)):
                raise ValueRangeError(f"physical channel.{name}: expected a finite number, "
                                      f"got {v!r}")
        if self.distance_m is not None and self.distance_m <= 0:
            raise ValueRangeError(f"physical channel.distance_m: must be > 0, got "
                                  f"{self.distance_m!r}")

    @property
    def received_dbm(self) -> float:
        """Carrier power at the receiver input while keyed on, dBm."""
        if self.rx_power_dbm is not None:
            return float(self.rx_power_dbm)
        assert self.distance_m is not None
        return (self.tx.power_dbm + self.tx.antenna_gain_dbi + self.rx.antenna_gain_dbi
                - self.path.loss_db(self.distance_m, self.tx.frequency_hz))

    @property
    def snr_db(self) -> float:
        """Received power over the receiver's noise floor, dB."""
        return self.received_dbm - self.rx.noise_floor_dbm

    @property
    def margin_db(self) -> float:
        """Received power over the receiver's sensitivity, dB."""
        return self.received_dbm - self.rx.sensitivity_dbm

    def at(self, *, distance_m: float | None = None, rx_power_dbm: float | None = None
           ) -> PhysicalChannel:
        """Return a copy at another distance or received power (exactly one)."""
        return replace(self, distance_m=distance_m, rx_power_dbm=rx_power_dbm)

    def to_dict(self) -> dict[str, object]:
        """Return the channel as a JSON-ready dict (with the derived link figures)."""
        d: dict[str, object] = {"kind": "physical", **asdict(self)}
        d["received_dbm"] = self.received_dbm
        d["noise_floor_dbm"] = self.rx.noise_floor_dbm
        d["sensitivity_dbm"] = self.rx.sensitivity_dbm
        d["snr_db"] = self.snr_db
        d["margin_db"] = self.margin_db
        return d
