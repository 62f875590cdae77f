"""Power spectral density of the keyed baseband and its occupied (99 %) bandwidth, in Hz.

Model: the keyed baseband is x(t) = sum_k c_k p(t - kT) with chips c_k in {0, 1} (1 =
carrier on), T = ``spec.unit_us`` and p an ideal rectangular pulse of width T (instant
edges). Frames with random payloads (``ookframe.frame.random_values``) are sent back to back;
gaps between repeats and idle time are left out (they only add low-frequency envelope
content at the report rate).

Unipolar keying has a mean of about 1/2: a spectral line at DC carrying a quarter or more
of the power. That line is the carrier after modulation, not occupied bandwidth, so the
mean is subtracted and only the AC part d_k = c_k - mean is analysed.

Method (exact for rectangular chips, free of the aliasing an oversampled waveform has):
the PSD of a chip sequence shaped by p is

    S_x(f) = (1/T) |P(f)|^2 S_d(fT) = T sinc^2(fT) S_d(fT)

where S_d is the PSD of the sequence d_k per chip, periodic in fT with period 1. S_d is
estimated with ``scipy.signal.welch`` at one sample per chip; the sinc^2 envelope is then
applied on any frequency grid. The 99 % bandwidth B is one-sided: the integral of S_x from
0 to B is 99 % of the AC power (its integral from 0 to infinity). After on-off keying of a
carrier the RF spectrum is this baseband mirrored around the carrier, so the RF occupied
bandwidth is about 2 B. Real transmitters have finite rise and fall times, which narrow the
spectrum: B is the figure for ideal keying, an upper estimate.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ..errors import ValueRangeError
from ..frame import frame_chips_many, random_values
from ..plan import FramePlan, as_plan, spec_of
from ..spec.model import FrameSpec

#: welch segment length in chips (frequency resolution 1/(NPERSEG_CHIPS T))
NPERSEG_CHIPS = 256
#: frames of random payload per estimate (tens of thousands of chips for the examples)
DEFAULT_FRAMES = 256
#: the integral for the occupied bandwidth runs to this many chip rates, tail beyond analytic
_INTEGRATE_CHIP_RATES = 256
#: seed of the deterministic estimate returned by :func:`bandwidth_hz`
BANDWIDTH_SEED = 20240433


def chip_stream(spec: FrameSpec | FramePlan, rng: np.random.Generator,
                n_frames: int = DEFAULT_FRAMES) -> np.ndarray:
    """Return the chips (uint8) of ``n_frames`` random-payload frames sent back to back."""
    if n_frames < 1:
        raise ValueRangeError(f"n_frames must be >= 1, got {n_frames}")
    plan = as_plan(spec)
    values = [random_values(plan, rng) for _ in range(n_frames)]
    return np.concatenate(frame_chips_many(plan, values))


def _chip_psd(chips: np.ndarray) -> np.ndarray:
    """Return the two-sided PSD per chip of the AC part on nu = j/N, j = 0..N-1 (period 1)."""
    from scipy.signal import welch  # slow import: only when a spectrum is computed

    d = chips.astype(np.float64) - chips.mean()
    nperseg = min(NPERSEG_CHIPS, d.size)
    _, p = welch(d, fs=1.0, window="hann", nperseg=nperseg, detrend=False,
                 return_onesided=False, scaling="density")
    return p


def _one_sided_psd(p_chip: np.ndarray, nu: np.ndarray, unit_s: float) -> np.ndarray:
    """One-sided S_x at nu = f T (grid multiples of 1/N): 2 T sinc^2(nu) S_d(nu)."""
    n = p_chip.size
    idx = np.rint(nu * n).astype(np.int64) % n
    return 2.0 * unit_s * np.sinc(nu) ** 2 * p_chip[idx]


def baseband_psd(spec: FrameSpec | FramePlan, rng: np.random.Generator, n_frames: int = DEFAULT_FRAMES,
                 max_freq_hz: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Return (freqs_hz, psd): one-sided PSD of the AC part of the keyed baseband, level²/Hz.

    Levels are normalised (carrier on = 1). The grid runs from 0 to ``max_freq_hz`` (default
    16 chip rates) in steps of 1/(256 T). See the module docstring for the method.
    """
    unit_s = spec_of(spec).unit_us * 1e-6
    chip_rate_hz = 1.0 / unit_s
    f_max = 16.0 * chip_rate_hz if max_freq_hz is None else float(max_freq_hz)
    if not f_max > 0:
        raise ValueRangeError(f"max_freq_hz must be > 0, got {max_freq_hz}")
    p = _chip_psd(chip_stream(spec, rng, n_frames))
    nu = np.arange(int(np.ceil(f_max * unit_s * p.size)) + 1) / p.size
    return nu * chip_rate_hz, _one_sided_psd(p, nu, unit_s)


def occupied_bandwidth_hz(spec: FrameSpec | FramePlan, rng: np.random.Generator, fraction: float = 0.99,
                          n_frames: int = DEFAULT_FRAMES) -> float:
    """Return the one-sided baseband bandwidth in Hz holding ``fraction`` of the AC power.

    The integral runs to 256 chip rates; beyond, S_x decays as 1/f^2 and its tail is added in
    closed form (mean over one period of sin^2(pi nu) S_d(nu), divided by pi^2 nu^2).
    """
    if not 0.0 < fraction < 1.0:
        raise ValueRangeError(f"fraction must be in (0, 1), got {fraction}")
    unit_s = spec_of(spec).unit_us * 1e-6
    p = _chip_psd(chip_stream(spec, rng, n_frames))
    n = p.size
    k = _INTEGRATE_CHIP_RATES
    nu = np.arange(k * n + 1) / n
    s = _one_sided_psd(p, nu, unit_s) / unit_s  # density per unit of nu
    cum = np.concatenate(([0.0], np.cumsum((s[1:] + s[:-1]) * 0.5) / n))
    nu_period = np.arange(n) / n
    mean_num = float(np.mean(2.0 * np.sin(np.pi * nu_period) ** 2 * p))  # sin^2 * one-sided S_d
    tail = mean_num / (np.pi ** 2 * k)
    total = cum[-1] + tail
    if total <= 0:
        return 0.0  # constant chips: no AC power
    target = fraction * total
    if target <= cum[-1]:
        i = int(np.searchsorted(cum, target))
        frac = (target - cum[i - 1]) / (cum[i] - cum[i - 1])
        return float((nu[i - 1] + frac / n) / unit_s)
    # in the 1/nu^2 tail: remaining power at nu is mean_num / (pi^2 nu)
    return float(mean_num / (np.pi ** 2 * (total - target)) / unit_s)


@lru_cache(maxsize=64)
def bandwidth_hz(spec: FrameSpec) -> float:
    """Return the 99 % one-sided baseband bandwidth in Hz (fixed seed, deterministic; the
    result is kept per spec, a plan's spec is ``plan.spec``)."""
    return occupied_bandwidth_hz(spec, np.random.default_rng(BANDWIDTH_SEED))
