"""Sampled captures of the physical link: complex baseband at the receiver's antenna, its
envelope, or the data pin, written as WAV or raw interleaved I/Q files.

The baseband holds the keyed carrier (received power, transmitter start-up and
ring-down) plus thermal noise of density kT + noise figure over the sample rate, as a
receiver front end with that noise figure sampling at that rate would see it.
"""

from __future__ import annotations

import os
from typing import Literal

import numpy as np
from scipy.io import wavfile

from ..._require import require, require_rng, require_train
from ...errors import ValueRangeError
from ...pulses import PulseTrain
from .budget import thermal_noise_dbm_per_hz
from .carrier import Carrier, render_carriers
from .model import PhysicalChannel

IqFormat = Literal["u8", "s16", "f32"]
WavKind = Literal["envelope", "iq", "pin"]
WavDtype = Literal["u8", "s16", "s32", "f32"]

IQ_FORMATS: tuple[str, ...] = ("u8", "s16", "f32")
WAV_KINDS: tuple[str, ...] = ("envelope", "iq", "pin")
WAV_DTYPES: tuple[str, ...] = ("u8", "s16", "s32", "f32")
#: the largest sample magnitude of a file is this fraction of full scale
HEADROOM = 0.8


def render_baseband(
    train: PulseTrain, channel: PhysicalChannel, sample_rate_hz: float,
    rng: np.random.Generator, *, offset_hz: float = 0.0, noise: bool = True,
) -> np.ndarray:
    """Return the complex baseband (complex64, sqrt(mW): ``|x|**2`` is the power in mW) of
    ``train`` keyed by ``channel.tx`` at ``channel.received_dbm``, sampled at
    ``sample_rate_hz`` over the train's duration, carrier ``offset_hz`` from the tuning,
    random carrier phase, with thermal noise (kT at 290 K + the receiver's noise figure,
    over the sample rate) unless ``noise`` is False."""
    require_train(train, "train")
    require(channel, PhysicalChannel, "channel", "e.g. ookframe.PhysicalChannel()")
    require_rng(rng, "rng")
    if not 1e3 <= sample_rate_hz <= 1e9:
        raise ValueRangeError(f"sample_rate_hz: must be in 1e3..1e9, got {sample_rate_hz!r}")
    carrier = Carrier(train, channel.received_dbm, channel.tx, offset_hz=offset_hz,
                      phase_rad=float(rng.uniform(0, 2 * np.pi)))
    density = thermal_noise_dbm_per_hz() + channel.rx.noise_figure_db if noise else None
    return render_carriers([carrier], sample_rate_hz, train.total_us, rng, density)


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


def _quantise(x: np.ndarray, dtype: str) -> np.ndarray:
    """Return real samples ``x`` in [-1, 1] as ``dtype`` ("u8" offset binary, "s16",
    "s32" two's complement, "f32")."""
    if dtype == "f32":
        return x.astype(np.float32)
    if dtype == "u8":
        return np.clip(np.round(x * 127.5 + 127.5), 0, 255).astype(np.uint8)
    bits = {"s16": 16, "s32": 32}[dtype]
    top = 2 ** (bits - 1) - 1
    return np.clip(np.round(x * top), -top - 1, top).astype(f"<i{bits // 8}")


def iq_bytes(samples: np.ndarray, fmt: IqFormat = "s16", full_scale: float | None = None
             ) -> bytes:
    """Return complex ``samples`` as interleaved I/Q bytes: "u8" (offset binary, 127.5 =
    zero), "s16" little-endian or "f32" little-endian; scaled so ``full_scale`` (default:
    the peak magnitude / ``HEADROOM``) is the largest code."""
    if fmt not in IQ_FORMATS:
        raise ValueRangeError(f"I/Q format {fmt!r}: allowed {', '.join(IQ_FORMATS)}")
    x = np.asarray(samples, dtype=np.complex64)
    fs = _full_scale(x) if full_scale is None else float(full_scale)
    inter = np.empty(2 * x.size, np.float64)
    inter[0::2] = x.real / fs
    inter[1::2] = x.imag / fs
    return _quantise(inter, fmt).astype(_quantise(np.zeros(1), fmt).dtype.newbyteorder("<")
                                         ).tobytes()


def _check_target(path: str | os.PathLike, force: bool) -> None:
    if os.path.exists(path) and not force:
        raise ValueRangeError(f"{os.fspath(path)} exists; use force=True (--force) to "
                              "overwrite it")


def write_iq(path: str | os.PathLike, samples: np.ndarray, fmt: IqFormat = "s16", *,
             full_scale: float | None = None, force: bool = False) -> None:
    """Write complex ``samples`` as a raw interleaved I/Q file (see ``iq_bytes``); the
    file is written whole through a temporary name, never half."""
    _check_target(path, force)
    data = iq_bytes(samples, fmt, full_scale)
    _atomic_write(path, lambda f: f.write(data))


def write_wav(path: str | os.PathLike, samples: np.ndarray, sample_rate_hz: float,
              kind: WavKind = "envelope", dtype: WavDtype = "s16", *,
              full_scale: float | None = None, force: bool = False) -> None:
    """Write a WAV file (scipy.io.wavfile): "envelope" mono ``|x|`` of complex samples
    (0 .. full scale, centred for u8 as 8-bit WAV is unsigned), "iq" stereo (left I, right
    Q), "pin" mono 0/1 levels (0 and 0.8 of full scale)."""
    if kind not in WAV_KINDS:
        raise ValueRangeError(f"WAV kind {kind!r}: allowed {', '.join(WAV_KINDS)}")
    if dtype not in WAV_DTYPES:
        raise ValueRangeError(f"WAV sample type {dtype!r}: allowed {', '.join(WAV_DTYPES)}")
    rate = int(round(sample_rate_hz))
    if not 1 <= rate <= 2**31 - 1:
        raise ValueRangeError(f"sample_rate_hz: must be 1..2**31-1 for WAV, got {rate}")
    _check_target(path, force)
    x = np.asarray(samples)
    if kind == "pin":
        data = _quantise(HEADROOM * (x.astype(np.float64) > 0), dtype)
    elif kind == "envelope":
        env = np.abs(x.astype(np.complex64)).astype(np.float64)
        fs = _full_scale(env) if full_scale is None else float(full_scale)
        data = _quantise(env / fs, dtype)
    else:
        c = x.astype(np.complex64)
        fs = _full_scale(c) if full_scale is None else float(full_scale)
        data = _quantise(np.stack((c.real / fs, c.imag / fs), axis=1).astype(np.float64),
                         dtype)
    _atomic_write(path, lambda f: wavfile.write(f, rate, data))


def _atomic_write(path: str | os.PathLike, write) -> None:
    """Write through ``path`` + ".part" and rename, so no half-written file is left."""
    tmp = os.fspath(path) + ".part"
    try:
        with open(tmp, "wb") as f:
            write(f)
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
