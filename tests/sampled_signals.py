"""Synthetic sampled captures for the front-end tests, made from an ookframe-encoded train.

Keying is ideal (rectangular at the sample grid); noise is white Gaussian drawn from an
explicit numpy Generator. SNR is carrier power over noise power in the sampled bandwidth:
for I/Q ``A^2 / sigma^2`` with complex noise of total variance ``sigma^2``; for real
baseband ``A^2 / sigma^2`` with ``A`` the mark amplitude.
"""

from __future__ import annotations

import numpy as np

from ookframe.pulses import PulseTrain


def keying(train: PulseTrain, sample_rate_hz: float, lead_us: float = 5000.0,
           tail_us: float = 5000.0) -> np.ndarray:
    """Return 0/1 per sample: ``lead_us`` of space, the train, ``tail_us`` of space; each edge
    on the sample nearest to its time (from cumulative time, so no drift)."""
    edges_us = np.concatenate(([0.0], np.cumsum(train.durations_us))) + lead_us
    idx = np.rint(edges_us * sample_rate_hz / 1e6).astype(np.int64)
    n = int(np.rint((edges_us[-1] + tail_us) * sample_rate_hz / 1e6))
    out = np.zeros(n, np.float64)
    for lv, a, b in zip(train.levels, idx[:-1], idx[1:], strict=True):
        out[a:b] = lv
    return out


def iq_capture(train: PulseTrain, sample_rate_hz: float, snr_db: float,
               rng: np.random.Generator, amplitude: float = 0.3,
               offset_hz: float = 0.0) -> np.ndarray:
    """Return complex samples: a keyed carrier ``offset_hz`` off the tuned frequency with a
    random phase, plus complex white Gaussian noise at ``snr_db``."""
    k = keying(train, sample_rate_hz)
    phase = rng.uniform(0, 2 * np.pi) + 2 * np.pi * offset_hz * np.arange(k.size) / sample_rate_hz
    sigma = amplitude / 10 ** (snr_db / 20)
    noise = sigma / np.sqrt(2) * (rng.standard_normal(k.size) + 1j * rng.standard_normal(k.size))
    return amplitude * k * np.exp(1j * phase) + noise


def baseband_capture(train: PulseTrain, sample_rate_hz: float, snr_db: float,
                     rng: np.random.Generator, amplitude: float = 0.5,
                     offset: float = -0.2) -> np.ndarray:
    """Return real samples of a data pin: ``offset`` in spaces, ``offset + amplitude`` in
    marks, plus white Gaussian noise at ``snr_db``."""
    k = keying(train, sample_rate_hz)
    sigma = amplitude / 10 ** (snr_db / 20)
    return offset + amplitude * k + sigma * rng.standard_normal(k.size)


def tone_capture(train: PulseTrain, sample_rate_hz: float, tone_hz: float, snr_db: float,
                 rng: np.random.Generator, amplitude: float = 0.5) -> np.ndarray:
    """Return real audio samples: a tone keyed on in marks, plus white Gaussian noise at
    ``snr_db`` (tone power A^2/2 over noise variance)."""
    k = keying(train, sample_rate_hz)
    t = np.arange(k.size) / sample_rate_hz
    sigma = amplitude / np.sqrt(2) / 10 ** (snr_db / 20)
    return amplitude * k * np.sin(2 * np.pi * tone_hz * t) + sigma * rng.standard_normal(k.size)
