"""Envelope, smoothing and decimation of sample blocks, with the filter state carried from
block to block (scipy.signal ``sosfilt`` with ``zi``), so blocks give the samples one long
call would."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import signal

from ._workspace import Workspace
from .config import FrontEndConfig

#: the smoothing low-pass never goes above this fraction of the (decimated) Nyquist rate
ANTI_ALIAS_FRACTION = 0.4
#: filter order of the smoothing low-pass (Bessel: no ringing on pulse edges)
SMOOTH_ORDER = 2
#: a sample at or beyond this fraction of full scale counts as clipped
CLIP_LEVEL = 0.999
#: |I + jQ| below this cannot hold a clipped part (margin for hypot's last-bit rounding)
_CLIP_SCREEN = CLIP_LEVEL * (1.0 - 1e-6)


@dataclass(frozen=True)
class Smoothing:
    """The smoothing low-pass as designed for a sample rate: ``cutoff_hz`` (0 = off),
    ``sos`` sections, the measured step response's ``delay_us`` (50 % point) and
    ``rise_us`` (10-90 %), and ``note`` when the cutoff was changed (above Nyquist,
    raised or lowered for decimation)."""

    cutoff_hz: float
    sos: np.ndarray | None
    delay_us: float
    rise_us: float
    note: str


def envelope_mode(config: FrontEndConfig, is_complex: bool) -> str:
    """Return the envelope used: ``config.envelope``, or for auto magnitude (complex) /
    baseband (real); complex samples always take the magnitude."""
    if is_complex:
        return "magnitude"
    if config.envelope == "auto":
        return "baseband"
    if config.envelope == "magnitude":
        return "rectify"  # |x| of a real sample
    return config.envelope


def design_smoothing(config: FrontEndConfig, sample_rate_hz: float) -> Smoothing:
    """Return the smoothing filter for ``sample_rate_hz``: cutoff 1 / (2 smooth_us), capped
    at ``ANTI_ALIAS_FRACTION`` of the Nyquist rate after decimation (when decimating, a
    cutoff is always set)."""
    nyquist_out = sample_rate_hz / 2.0 / config.decimate
    wanted = 1e6 / (2.0 * config.smooth_us) if config.smooth_us > 0 else None
    cap = ANTI_ALIAS_FRACTION * nyquist_out
    note = ""
    if wanted is None:
        if config.decimate == 1:
            return Smoothing(0.0, None, 0.0, 0.0, "off")
        cutoff, note = cap, f"set to {cap:g} Hz as the anti-alias filter for decimation"
    elif wanted > cap:
        cutoff = cap
        note = (f"{wanted:g} Hz asked, lowered to {ANTI_ALIAS_FRACTION:g} x the Nyquist rate "
                f"{nyquist_out:g} Hz" + (" after decimation" if config.decimate > 1 else ""))
    else:
        cutoff = wanted
    sos = signal.bessel(SMOOTH_ORDER, cutoff, btype="low", output="sos", fs=sample_rate_hz)
    delay_us, rise_us = _step_figures(sos, sample_rate_hz, cutoff)
    return Smoothing(float(cutoff), sos, delay_us, rise_us, note)


def _step_figures(sos: np.ndarray, sample_rate_hz: float, cutoff_hz: float) -> tuple[float, float]:
    """Return (50 % delay, 10-90 % rise) of the filter's step response in µs."""
    n = int(min(max(20 * sample_rate_hz / cutoff_hz, 64), 1_000_000))
    step = signal.sosfilt(sos, np.ones(n))
    final = step[-1]
    t10, t50, t90 = (np.argmax(step >= f * final) for f in (0.1, 0.5, 0.9))
    to_us = 1e6 / sample_rate_hz
    return float(t50 * to_us), float((t90 - t10) * to_us)


class EnvelopeStage:
    """Samples -> decimated, smoothed envelope (float64), block by block; the filter state
    and the decimation phase carry over, so any split of the input gives the same output.
    Blocks must be whole multiples of ``decimate`` samples except the last."""

    def __init__(self, config: FrontEndConfig, sample_rate_hz: float, is_complex: bool) -> None:
        self.mode = envelope_mode(config, is_complex)
        self.invert = config.invert
        self.decimate = config.decimate
        self.smoothing = design_smoothing(config, sample_rate_hz)
        self._zi: np.ndarray | None = None
        self._work = Workspace()

    def process(self, block: np.ndarray) -> tuple[np.ndarray, int]:
        """Return the envelope of ``block`` after smoothing and decimation (float64), and how
        many samples of ``block`` reach full scale (``clipped``)."""
        if self.mode == "baseband":
            e = block
        else:
            # float32 for float32 / complex64 samples: the filter widens to float64
            e = np.abs(block, out=self._work.get("abs", block.size, block.real.dtype))
        n_clipped = clipped(block, None if e is block else e)
        if self.invert:
            e = np.negative(e)
        sos = self.smoothing.sos
        if sos is not None and e.size:
            if self._zi is None:  # start settled on the first sample: no start-up transient
                self._zi = signal.sosfilt_zi(sos) * float(e[0])
            e, self._zi = signal.sosfilt(sos, e, zi=self._zi)  # float64 out, as float64 in
        else:
            e = e.astype(np.float64)
        if self.decimate > 1:
            e = e[::self.decimate]
        return e, n_clipped


def clipped(x: np.ndarray, magnitude: np.ndarray | None = None) -> int:
    """Return how many samples of ``x`` reach full scale (either part of an I/Q sample);
    ``magnitude`` (|x|, if already made) screens out blocks with no sample near it."""
    if x.size == 0:
        return 0
    if np.iscomplexobj(x):
        mag = np.abs(x) if magnitude is None else magnitude
        near = np.flatnonzero(mag >= _CLIP_SCREEN) if mag.max() >= _CLIP_SCREEN else None
        if near is None or near.size == 0:
            return 0
        v = x[near]
        return int(np.count_nonzero((np.abs(v.real) >= CLIP_LEVEL) |
                                    (np.abs(v.imag) >= CLIP_LEVEL)))
    if x.max() < CLIP_LEVEL and x.min() > -CLIP_LEVEL:
        return 0
    return int(np.count_nonzero(np.abs(x) >= CLIP_LEVEL))
