"""Keyed carriers on a sample grid: the transmitter's envelope and several carriers added.

A keyed self-oscillating transmitter's amplitude follows the key with a first-order
lag: it rises as ``1 - exp(-t / startup_tau_us)`` at key-on and decays as
``exp(-t / ringdown_tau_us)`` at key-off, each pulse starting from where the previous one
left it. The amplitude at every pulse boundary is one affine recursion, solved for all
pulses at once by a parallel prefix scan; the grid is then filled pulse by pulse.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ...pulses import PulseTrain, merge_runs
from .budget import dbm_to_mw
from .model import Transmitter


def _affine_prefix(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (A, B) with ``A[i] y + B[i]`` the composition of the maps ``y -> a[j] y +
    b[j]`` for j = 0..i (Hillis-Steele scan, log2(n) array passes)."""
    a = a.copy()
    b = b.copy()
    step = 1
    while step < a.size:
        # compose map i with the prefix ending at i - step: a_i (A y + B) + b_i
        b[step:] = a[step:] * b[:-step] + b[step:]
        a[step:] = a[step:] * a[:-step]
        step *= 2
    return a, b


@dataclass(frozen=True, eq=False)
class KeyedEnvelope:
    """A keyed train's amplitude as pulses: pulse i spans [begin_us[i], begin_us[i+1])
    (last one to ``end_us``), heads for ``target[i]`` (0 or 1) with time constant
    ``tau_us[i]`` starting from ``start_amp[i]``. Before the train and after it the
    carrier decays from its last amplitude (off)."""

    begin_us: np.ndarray
    target: np.ndarray
    tau_us: np.ndarray
    start_amp: np.ndarray
    end_us: float

    @staticmethod
    def of(train: PulseTrain, tx: Transmitter, start_us: float = 0.0) -> KeyedEnvelope:
        """Return the envelope of ``train`` keyed by ``tx`` from ``start_us``; one space
        pulse is appended so the ring-down after the last mark continues."""
        t = merge_runs(train.levels, train.durations_us)
        levels = np.append(t.levels, 0).astype(np.float64)
        dur = np.append(t.durations_us, np.inf)
        tau = np.where(levels > 0, tx.startup_tau_us, tx.ringdown_tau_us)
        a = np.exp(-dur / tau)
        _, amp_after = _affine_prefix(a, (1.0 - a) * levels)
        start_amp = np.concatenate(([0.0], amp_after[:-1]))
        begin = start_us + np.concatenate(([0.0], np.cumsum(t.durations_us)))
        return KeyedEnvelope(begin, levels, tau, start_amp, float(begin[-1]))

    def on_grid(self, t0_us: float, step_us: float, k0: int, k1: int) -> np.ndarray:
        """Return the amplitude (0..1, float64) at times ``t0_us + k * step_us`` for
        k in [k0, k1)."""
        n = k1 - k0
        out = np.zeros(n)
        # first grid index at or after each pulse's begin, clipped to the block
        first = np.ceil((self.begin_us - t0_us) / step_us).astype(np.int64)
        first = np.clip(first, k0, k1) - k0
        counts = np.diff(np.append(first, n))
        live = np.flatnonzero(counts)
        if live.size == 0:
            return out
        seg = np.repeat(live, counts[live])
        t = t0_us + step_us * np.arange(k0 + first[live[0]], k1)
        x = self.target[seg]
        dt = t - self.begin_us[seg]
        out[first[live[0]]:] = x + (self.start_amp[seg] - x) * np.exp(-dt / self.tau_us[seg])
        return out


@dataclass(frozen=True, eq=False)
class Carrier:
    """One keyed carrier as it arrives at the receiver: ``train`` keyed from
    ``start_us`` by ``tx`` (its start-up and ring-down; the train's durations as sent,
    the clock already applied by ``Transmitter.keyed``), at ``power_dbm`` (received,
    keyed on), ``offset_hz`` from the receiver's tuning, with carrier phase ``phase_rad``
    at time 0."""

    train: PulseTrain
    power_dbm: float
    tx: Transmitter = Transmitter()
    start_us: float = 0.0
    offset_hz: float = 0.0
    phase_rad: float = 0.0

    def envelope(self) -> KeyedEnvelope:
        return KeyedEnvelope.of(self.train, self.tx, self.start_us)


def carriers_on_grid(
    carriers: Sequence[Carrier], t0_us: float, step_us: float, k0: int, k1: int,
    envelopes: Sequence[KeyedEnvelope] | None = None,
) -> np.ndarray:
    """Return the complex baseband (sqrt(mW), complex128) of the carriers added, at times
    ``t0_us + k * step_us`` for k in [k0, k1). Envelopes may be given precomputed."""
    envs = envelopes if envelopes is not None else [c.envelope() for c in carriers]
    out = np.zeros(k1 - k0, np.complex128)
    t = None
    for c, env in zip(carriers, envs, strict=True):
        if env.end_us < t0_us + k0 * step_us or env.begin_us[0] > t0_us + k1 * step_us:
            continue
        amp = env.on_grid(t0_us, step_us, k0, k1) * np.sqrt(dbm_to_mw(c.power_dbm))
        if c.offset_hz == 0.0:
            out += amp * np.exp(1j * c.phase_rad)
            continue
        if t is None:
            t = (t0_us + step_us * np.arange(k0, k1)) * 1e-6
        out += amp * np.exp(1j * (2 * np.pi * c.offset_hz * t + c.phase_rad))
    return out


def render_carriers(
    carriers: Sequence[Carrier], sample_rate_hz: float, duration_us: float,
    rng: np.random.Generator | None = None, noise_dbm_per_hz: float | None = None,
) -> np.ndarray:
    """Return the complex baseband (sqrt(mW) units, complex64) of the carriers added on
    one timeline sampled at ``sample_rate_hz`` from 0 to ``duration_us``, plus complex
    white Gaussian noise of density ``noise_dbm_per_hz`` over the sample rate (needs
    ``rng``). ``|x|**2`` is the instantaneous power in mW."""
    step_us = 1e6 / sample_rate_hz
    n = int(np.floor(duration_us / step_us)) + 1
    envs = [c.envelope() for c in carriers]
    out = np.empty(n, np.complex64)
    block = 1 << 20
    for k0 in range(0, n, block):
        k1 = min(n, k0 + block)
        out[k0:k1] = carriers_on_grid(carriers, 0.0, step_us, k0, k1, envs)
    if noise_dbm_per_hz is not None:
        if rng is None:
            raise TypeError("render_carriers: noise needs an rng (numpy.random.Generator)")
        sigma = np.sqrt(dbm_to_mw(noise_dbm_per_hz) * sample_rate_hz / 2.0)
        for k0 in range(0, n, block):
            k1 = min(n, k0 + block)
            z = rng.standard_normal((k1 - k0, 2), dtype=np.float32)
            z *= np.float32(sigma)
            out[k0:k1] += z.view(np.complex64)[:, 0]
    return out
