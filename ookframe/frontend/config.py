"""Front-end settings (``FrontEndConfig``), checked once at construction."""

from __future__ import annotations

import math
from dataclasses import dataclass

#: envelope modes: magnitude |I + jQ| (I/Q), rectify |x| (real audio carrying a tone or an
#: IF carrier, smoothed afterwards), baseband x itself (a receiver's data pin, already
#: demodulated); auto = magnitude for complex samples, baseband for real ones
ENVELOPES = ("auto", "magnitude", "rectify", "baseband")
#: default smoothing and tracker time constants when no spec says otherwise (µs)
DEFAULT_SMOOTH_US = 10.0
DEFAULT_DECAY_US = 10_000.0


@dataclass(frozen=True)
class FrontEndConfig:
    """How samples become pulses.

    - ``envelope``: one of ``ENVELOPES``; ``invert`` flips the polarity (an active-low
      data pin).
    - ``smooth_us``: the envelope low-pass (2nd-order Bessel, cutoff 1 / (2 smooth_us));
      0 = off. ``decimate``: keep every n-th smoothed sample (the low-pass is lowered to
      0.4 of the new Nyquist rate when needed, so it is the anti-alias filter too).
    - Adaptive slicer: a peak tracker (carrier level) and a valley tracker (noise floor),
      both instant attack (or ``attack_us``) and exponential decay towards the slow mean
      with time constant ``decay_us``; thresholds at ``threshold_fraction`` of the way from
      floor to carrier, ``hysteresis`` wide (fraction of carrier - floor, split evenly
      above and below); no mark while carrier - floor < ``min_contrast`` (squelch, full
      scale 1.0).
    - ``threshold_high`` / ``threshold_low``: fixed thresholds (envelope units, both or
      neither) instead of the adaptive ones.
    """

    envelope: str = "auto"
    invert: bool = False
    smooth_us: float = DEFAULT_SMOOTH_US
    decimate: int = 1
    decay_us: float = DEFAULT_DECAY_US
    attack_us: float = 0.0
    threshold_fraction: float = 0.5
    hysteresis: float = 0.2
    min_contrast: float = 0.0
    threshold_high: float | None = None
    threshold_low: float | None = None

    def __post_init__(self) -> None:
        if self.envelope not in ENVELOPES:
            raise ValueError(f"envelope {self.envelope!r} unknown; allowed: {', '.join(ENVELOPES)}")
        _finite(self.smooth_us, "smooth_us", 0.0, 1e9)
        _finite(self.decay_us, "decay_us", 0.0, 1e12, lo_open=True)
        _finite(self.attack_us, "attack_us", 0.0, 1e12)
        _finite(self.threshold_fraction, "threshold_fraction", 0.0, 1.0, lo_open=True,
                hi_open=True)
        _finite(self.hysteresis, "hysteresis", 0.0, 1.0, hi_open=True)
        _finite(self.min_contrast, "min_contrast", 0.0, 1e6)
        if isinstance(self.decimate, bool) or not isinstance(self.decimate, int) or \
                not 1 <= self.decimate <= 10_000:
            raise ValueError(f"decimate must be an int in 1..10000, got {self.decimate!r}")
        if (self.threshold_high is None) != (self.threshold_low is None):
            raise ValueError("give both threshold_high and threshold_low, or neither")
        if self.threshold_high is not None:
            _finite(self.threshold_high, "threshold_high", -1e6, 1e6)
            _finite(self.threshold_low, "threshold_low", -1e6, 1e6)
            if self.threshold_low > self.threshold_high:  # type: ignore[operator]
                raise ValueError(f"threshold_low {self.threshold_low:g} is above "
                                 f"threshold_high {self.threshold_high:g}")
        lo = self.threshold_fraction - self.hysteresis / 2
        if self.threshold_high is None and not (0.0 < lo and lo + self.hysteresis < 1.0):
            raise ValueError(f"threshold_fraction {self.threshold_fraction:g} +- hysteresis/2 "
                             f"({self.hysteresis:g}/2) must lie inside (0, 1)")

    @property
    def fixed(self) -> bool:
        """True when fixed thresholds replace the adaptive ones."""
        return self.threshold_high is not None


def _finite(v: object, name: str, lo: float, hi: float, *, lo_open: bool = False,
            hi_open: bool = False) -> None:
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise ValueError(f"{name} must be a number, got {v!r}")
    bad = not math.isfinite(v) or v < lo or v > hi or (lo_open and v == lo) or \
        (hi_open and v == hi)
    if bad:
        raise ValueError(f"{name} {v!r} is out of range; allowed {'(' if lo_open else '['}"
                         f"{lo:g}, {hi:g}{')' if hi_open else ']'}")


def config_for_unit(unit_us: float, **overrides: object) -> FrontEndConfig:
    """Return a config suited to a symbol unit of ``unit_us``: smoothing a quarter unit,
    tracker decay 50 units (holds the levels over any run inside a frame); ``overrides``
    (None values ignored) replace any of these."""
    base: dict[str, object] = {"smooth_us": unit_us / 4.0, "decay_us": 50.0 * unit_us}
    base.update({k: v for k, v in overrides.items() if v is not None})
    return FrontEndConfig(**base)  # type: ignore[arg-type]
