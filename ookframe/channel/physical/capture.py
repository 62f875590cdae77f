"""Sampled captures of the physical link: complex baseband at the receiver's antenna, its
envelope, or the data pin, scaled for and written by the sampled-capture writers
(``ookframe.captures.sampled``: WAV, raw interleaved I/Q).

The baseband holds the keyed carrier (received power, transmitter start-up and
ring-down) plus thermal noise of density kT + noise figure over the sample rate, as a
receiver front end with that noise figure sampling at that rate would see it.
"""

from __future__ import annotations

import os
from typing import Literal

import numpy as np

from ..._require import require, require_rng, require_train
from ...errors import ValueRangeError
from ...pulses import PulseTrain
from .budget import thermal_noise_dbm_per_hz
from .carrier import Carrier, render_carriers
from .model import PhysicalChannel

WavKind = Literal["envelope", "iq", "pin"]

WAV_KINDS: tuple[str, ...] = ("envelope", "iq", "pin")
#: the largest sample magnitude of a file is this fraction of full scale
HEADROOM = 0.8


def render_baseband(
    train: PulseTrain, channel: PhysicalChannel, sample_rate_hz: float,
    rng: np.random.Generator, *, offset_hz: float = 0.0, noise: bool = True,
    burst_starts_us: np.ndarray | None = None,
) -> np.ndarray:
    """Return the complex baseband (complex64, sqrt(mW): ``|x|**2`` is the power in mW) of
    ``train`` keyed by ``channel.tx`` at ``channel.received_dbm``, sampled at
    ``sample_rate_hz`` over the train's duration, carrier ``offset_hz`` from the tuning,
    random carrier phase, with thermal noise (kT at 290 K + the receiver's noise figure,
    over the sample rate) unless ``noise`` is False. The key is timed by the transmitter's
    clock (``channel.tx.time_map_us``, drift from each of ``burst_starts_us``), so the
    capture lasts the keyed train's duration."""
    require_train(train, "train")
    require(channel, PhysicalChannel, "channel", "e.g. ookframe.PhysicalChannel()")
    require_rng(rng, "rng")
    if not 1e3 <= sample_rate_hz <= 1e9:
        raise ValueRangeError(f"sample_rate_hz: must be in 1e3..1e9, got {sample_rate_hz!r}")
    keyed = channel.tx.keyed(train, burst_starts_us)
    carrier = Carrier(keyed, channel.received_dbm, channel.tx, offset_hz=offset_hz,
                      phase_rad=float(rng.uniform(0, 2 * np.pi)))
    density = thermal_noise_dbm_per_hz() + channel.rx.noise_figure_db if noise else None
    return render_carriers([carrier], sample_rate_hz, keyed.total_us, rng, density)


def baseband_snr_db(channel: PhysicalChannel, sample_rate_hz: float) -> float:
    """Return the carrier power over the noise power of ``render_baseband`` at that rate."""
    noise_dbm = thermal_noise_dbm_per_hz() + channel.rx.noise_figure_db \
        + 10 * np.log10(sample_rate_hz)
    return float(channel.received_dbm - noise_dbm)


def pin_samples(train: PulseTrain, sample_rate_hz: float) -> np.ndarray:
    """Return the train's level (uint8 0/1) at every sample time ``k / sample_rate_hz``
    over its duration (a logic analyser's or sound card's view of the data pin)."""
    require_train(train, "train")
    n = int(np.floor(train.total_us * sample_rate_hz / 1e6)) + 1
    ends = np.cumsum(train.durations_us)
    idx = np.searchsorted(ends, np.arange(n) * (1e6 / sample_rate_hz), side="right")
    levels = np.append(train.levels, train.levels[-1:] if len(train) else [0])
    return levels[np.minimum(idx, levels.size - 1)].astype(np.uint8)


def _full_scale(x: np.ndarray) -> float:
    peak = float(np.max(np.abs(x))) if x.size else 0.0
    return peak / HEADROOM if peak > 0 else 1.0


def scaled_samples(samples: np.ndarray, kind: WavKind = "iq",
                   full_scale: float | None = None) -> np.ndarray:
    """Return samples with full scale 1.0, as the capture writers take them: "iq" the
    complex samples (complex64), "envelope" their magnitude (float32, 0..1), "pin" 0/1
    levels as 0 and ``HEADROOM``. ``full_scale`` (default: the peak magnitude /
    ``HEADROOM``) maps to 1.0."""
    if kind not in WAV_KINDS:
        raise ValueRangeError(f"capture kind {kind!r}: allowed {', '.join(WAV_KINDS)}")
    x = np.asarray(samples)
    if kind == "pin":
        return (HEADROOM * (x.real > 0)).astype(np.float32)
    c = x.astype(np.complex64)
    if kind == "envelope":
        env = np.abs(c)
        return (env / np.float32(_full_scale(env) if full_scale is None else full_scale)
                ).astype(np.float32)
    return (c / np.float32(_full_scale(c) if full_scale is None else full_scale)
            ).astype(np.complex64)


def _check_target(path: str | os.PathLike, force: bool) -> None:
    if os.path.exists(path) and not force:
        raise ValueRangeError(f"{os.fspath(path)} exists; use force=True (--force) to "
                              "overwrite it")


def write_iq(path: str | os.PathLike, samples: np.ndarray, sample_type: str = "s16", *,
             full_scale: float | None = None, force: bool = False) -> None:
    """Write complex ``samples`` as a raw interleaved I/Q file (``sample_type`` u8 offset
    binary, s8, s16 or f32, little-endian; ``ookframe.captures.sampled``'s I/Q writer),
    scaled by ``scaled_samples``; the file appears whole or not at all."""
    from ...captures.sampled import write_samples

    _check_target(path, force)
    write_samples(path, scaled_samples(samples, "iq", full_scale), 1.0, fmt="iq",
                  sample_type=sample_type)


def write_wav(path: str | os.PathLike, samples: np.ndarray, sample_rate_hz: float,
              kind: WavKind = "envelope", sample_type: str = "s16", *,
              full_scale: float | None = None, force: bool = False) -> None:
    """Write a WAV file through ``ookframe.captures.sampled`` (soundfile): "envelope"
    mono magnitude of complex samples, "iq" stereo (left I, right Q), "pin" mono 0/1
    levels; scaled by ``scaled_samples``; ``sample_type`` u8, s16, s24, s32 or f32."""
    from ...captures.sampled import write_samples

    _check_target(path, force)
    write_samples(path, scaled_samples(samples, kind, full_scale), float(round(sample_rate_hz)),
                  fmt="wav", sample_type=sample_type)
