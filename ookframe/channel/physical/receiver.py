"""The receiver at quench level: detector, data filter and adaptive slicer -> data pin.

Per quench period k (time ``phase_us + k / quench_hz``) the detector sees the carriers'
complex amplitude plus complex Gaussian noise; its output is the input power above the
detection level in dB over ``log_range_db``, clipped to 0..1 (a logarithmic-mode
superregenerative detector: zero when nothing crosses the detection level). A first-order
data filter smooths it; the slicer compares the filtered output with its own slow
average (the adaptive threshold), with hysteresis. The timeline is processed in blocks
with the filter states carried over, so memory does not grow with its length; every
block is whole-array numpy (no per-sample Python loop).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from functools import lru_cache

import numpy as np

from ...pulses import PulseTrain
from .budget import dbm_to_mw
from .carrier import Carrier, carriers_on_grid
from .model import Receiver

#: quench periods per processing block (memory per block about 50 MB)
BLOCK_QUENCHES = 1 << 19


def detector_noise_dbm(rx: Receiver) -> float:
    """Return the noise power the detector sees per quench, dBm (sensitivity less the
    per-quench SNR at sensitivity)."""
    return rx.sensitivity_dbm - rx.quench_snr_at_sensitivity_db


def detection_level(rx: Receiver) -> float:
    """Return the detection level in units of the detector noise power: noise alone
    (exponential power, mean 1) crosses it with probability ``idle_detect_prob``."""
    return -math.log(rx.idle_detect_prob)


def detect_probability(rx: Receiver, rx_power_dbm: float | np.ndarray) -> np.ndarray:
    """Return the probability that one quench period detects a steady carrier of
    ``rx_power_dbm`` (Rician: power of carrier + noise above the detection level; the
    non-central chi-square of 2 degrees of freedom)."""
    from scipy import stats  # here: the CLI's --help must not load scipy

    snr = np.asarray(dbm_to_mw(np.asarray(rx_power_dbm) - detector_noise_dbm(rx)))
    # |s + n|^2 with n ~ CN(0, 1): half of a non-central chi2(2, 2 snr)
    return stats.ncx2.sf(2.0 * detection_level(rx), 2, 2.0 * snr)


@lru_cache(maxsize=16)
def idle_output_mean(rx: Receiver) -> float:
    """Return the mean quench output with no carrier (noise power exponential, mean 1)."""
    from scipy import integrate

    eta = detection_level(rx)
    top = eta * 10.0 ** (rx.log_range_db / 10.0)

    def v(x: float) -> float:
        return 10.0 * math.log10(x / eta) / rx.log_range_db * math.exp(-x)

    part, _ = integrate.quad(v, eta, top, limit=200)
    return part + math.exp(-top)


def quench_output(amplitude: np.ndarray, rx: Receiver, rng: np.random.Generator) -> np.ndarray:
    """Return the detector output (0..1, float32) for complex amplitudes in units of
    sqrt(detector noise power), one per quench period; noise drawn from ``rng``."""
    z = rng.standard_normal((amplitude.size, 2), dtype=np.float32)
    z *= np.float32(math.sqrt(0.5))
    z[:, 0] += amplitude.real.astype(np.float32)
    z[:, 1] += amplitude.imag.astype(np.float32)
    p = np.einsum("ij,ij->i", z, z)  # |s + n|^2
    p *= np.float32(1.0 / detection_level(rx))
    np.maximum(p, np.float32(1.0), out=p)
    np.log10(p, out=p)
    p *= np.float32(10.0 / rx.log_range_db)
    np.minimum(p, np.float32(1.0), out=p)
    return p


class _Slicer:
    """Data filter + adaptive threshold + hysteresis comparator, state carried between
    blocks (a private helper of ``receive``; every block is array code)."""

    def __init__(self, rx: Receiver) -> None:
        a = 1.0 - math.exp(-2.0 * math.pi * rx.data_filter_hz / rx.quench_hz)
        b = 1.0 - math.exp(-rx.quench_us / rx.slicer_tau_us)
        self.filt = ([a], [1.0, a - 1.0])
        self.avg = ([b], [1.0, b - 1.0])
        idle = idle_output_mean(rx)
        self.zf = np.array([idle * (1.0 - a)])  # steady state at the idle mean
        self.za = np.array([idle * (1.0 - b)])
        self.h = rx.slicer_hysteresis
        self.state = False

    def block(self, v: np.ndarray) -> np.ndarray:
        """Return the data pin (bool) for the quench outputs ``v`` of one block."""
        from scipy import signal

        y, self.zf = signal.lfilter(*self.filt, v, zi=self.zf)
        thr, self.za = signal.lfilter(*self.avg, y, zi=self.za)
        up = y > thr + self.h
        down = y < thr - self.h
        decided = np.flatnonzero(up | down)
        last = np.full(v.size, -1, np.int64)
        last[decided] = decided
        np.maximum.accumulate(last, out=last)
        pin = np.where(last >= 0, up[np.maximum(last, 0)], self.state)
        if pin.size:
            self.state = bool(pin[-1])
        return pin


def receive_carriers(
    carriers: Sequence[Carrier], rx: Receiver, duration_us: float, rng: np.random.Generator,
    *, phase_us: float | None = None,
) -> PulseTrain:
    """Return the receiver's data pin from 0 to ``duration_us`` for the carriers added at
    its input (received powers in each ``Carrier``): a train whose edges lie on the quench
    grid ``phase_us + k * quench_us`` (phase random from ``rng`` when not given)."""
    step = rx.quench_us
    phase = float(rng.random() * step) if phase_us is None else float(phase_us)
    n = max(0, int(np.ceil((duration_us - phase) / step)))
    scale = 1.0 / math.sqrt(dbm_to_mw(detector_noise_dbm(rx)))
    envs = [c.envelope() for c in carriers]
    slicer = _Slicer(rx)
    toggles: list[np.ndarray] = []
    prev = False
    first_level = None
    for k0 in range(0, n, BLOCK_QUENCHES):
        k1 = min(n, k0 + BLOCK_QUENCHES)
        amp = carriers_on_grid(carriers, phase, step, k0, k1, envs)
        amp *= scale
        pin = slicer.block(quench_output(amp, rx, rng))
        if first_level is None:
            first_level = prev = bool(pin[0]) if pin.size else False
        change = np.flatnonzero(np.diff(pin, prepend=prev))
        toggles.append(phase + step * (k0 + change))
        prev = bool(pin[-1])
    return _pin_train(first_level or False, toggles, duration_us)


def _pin_train(first_level: bool, toggles: list[np.ndarray], duration_us: float) -> PulseTrain:
    """Return the train from the first level and toggle times (sorted, in (0, end))."""
    t = np.concatenate(toggles) if toggles else np.zeros(0)
    t = t[(t > 0) & (t < duration_us)]
    bounds = np.concatenate(([0.0], t, [duration_us]))
    levels = (np.arange(t.size + 1) + int(first_level)) & 1
    return PulseTrain(levels.astype(np.uint8), np.diff(bounds))
