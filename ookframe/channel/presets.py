"""Named channel presets (registry: one entry per preset).

Every value below is a typical figure for the kind of link named, common practice, no
source; use a preset as a starting point and measure your own hardware.
"""

from __future__ import annotations

from .._require import require
from ..errors import ValueRangeError
from .model import ChannelSpec

PRESETS: dict[str, ChannelSpec] = {
    # A perfect channel: what the encoder emits is what the decoder sees.
    "ideal": ChannelSpec(),
    # Cheap superregenerative receiver module + SAW-resonator transmitter, short range.
    "budget-superregen": ChannelSpec(
        # TX RF oscillator needs a few µs to start and rings down after keying off:
        # marks come out longer (common practice, no source).
        mark_bias_us=8.0,
        # ~400 kHz quench oscillator: the data output only changes on quench cycles,
        # 1 / 400 kHz = 2.5 µs (common practice, no source).
        quant_step_us=2.5,
        # Slicer timing noise at moderate signal level (common practice, no source).
        jitter_us=4.0,
        # With no carrier the gain control opens up within a few ms and the data pin
        # toggles randomly, pulses of the order of 100 µs (common practice, no source).
        idle_noise_us=20000.0,
        idle_noise_mean_us=100.0,
        idle_quiet_us=3000.0,
    ),
    # The same link near the edge of its range, with an uncalibrated RC-clocked sender.
    "edge-of-range-superregen": ChannelSpec(
        mark_bias_us=15.0,
        quant_step_us=2.5,
        jitter_us=12.0,
        clock_error_pct=2.0,
        glitch_rate_per_ms=0.02,
        glitch_width_us=30.0,
        dropout_prob=0.001,
        idle_noise_us=20000.0,
        idle_noise_mean_us=80.0,
        idle_quiet_us=2000.0,
    ),
    # Superheterodyne receiver, crystal-referenced sender: small bias and jitter, no quench
    # grid, quieter idle output (common practice, no source).
    "superhet": ChannelSpec(
        mark_bias_us=2.0,
        jitter_us=1.5,
        idle_noise_us=20000.0,
        idle_noise_mean_us=200.0,
        idle_quiet_us=10000.0,
    ),
}


def get_preset(name: str) -> ChannelSpec:
    """Return the preset ``ChannelSpec`` called ``name``."""
    require(name, str, "name")
    try:
        return PRESETS[name]
    except KeyError:
        raise ValueRangeError(
            f"unknown channel preset {name!r}; allowed: {', '.join(sorted(PRESETS))}"
        ) from None
