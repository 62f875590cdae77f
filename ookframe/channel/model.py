"""Channel model: one frozen ``ChannelSpec`` holding every impairment (all off by default)."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, fields, replace
from typing import Literal

from ..errors import ValueRangeError

JitterKind = Literal["gauss", "uniform"]

#: impairments that may be negative (bias, clock error, drift); every other one is >= 0
SIGNED: frozenset[str] = frozenset({"mark_bias_us", "clock_error_pct", "drift_pct_per_s"})


@dataclass(frozen=True)
class ChannelSpec:
    """Every impairment of a cheap OOK link; the defaults (0) describe a perfect channel.

    Transmitter side:
      clock_error_pct: whole train scaled by ``1 + clock_error_pct / 100``.
      drift_pct_per_s: the scale grows by this much per second from each transmission start.
      mark_bias_us: added to every mark and removed from the following space (negative =
        marks shortened); RF oscillator start-up and ring-down.
    Path:
      dropout_prob: probability that a whole mark is lost (becomes space).
      glitch_rate_per_ms: spurious level flips per ms of signal (Poisson); a flip in a space
        is a short mark, in a mark a short notch. Width uniform in
        [0.5, 1.5] * ``glitch_width_us``.
    Receiver side:
      idle_noise_us: idle-receiver noise before the first and after the last pulse (each).
        When > 0 the receiver is noisy whenever idle, so every space also fills with noise
        once it has lasted ``idle_quiet_us`` (automatic gain recovery). Noise pulses of both
        levels have exponential durations of mean ``idle_noise_mean_us``.
      jitter_us: per-edge timing error; Gaussian with sigma ``jitter_us`` ("gauss") or
        uniform in [-jitter_us, +jitter_us] ("uniform").
      quant_step_us: output edges moved to the next multiple of this step (random phase),
        as a superregenerative receiver's quench clock does.
    Modelling:
      min_width_us: edges never cross; a pulse pushed narrower than this (by jitter, bias
        or noise) is clipped to it, pushing the next edge.
    """

    jitter_us: float = 0.0
    jitter_kind: JitterKind = "gauss"
    mark_bias_us: float = 0.0
    clock_error_pct: float = 0.0
    drift_pct_per_s: float = 0.0
    quant_step_us: float = 0.0
    glitch_rate_per_ms: float = 0.0
    glitch_width_us: float = 0.0
    dropout_prob: float = 0.0
    idle_noise_us: float = 0.0
    idle_noise_mean_us: float = 100.0
    idle_quiet_us: float = 3000.0
    min_width_us: float = 0.5

    def __post_init__(self) -> None:
        for f in fields(self):
            if f.name == "jitter_kind":
                continue
            value = getattr(self, f.name)
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise ValueRangeError(f"channel.{f.name}: expected a number, got {value!r}")
            if not math.isfinite(value):
                raise ValueRangeError(f"channel.{f.name}: must be finite, got {value!r}")
            if f.name not in SIGNED and value < 0:
                raise ValueRangeError(f"channel.{f.name}: must be >= 0, got {value!r}")
        if self.jitter_kind not in ("gauss", "uniform"):
            raise ValueRangeError(
                f"channel.jitter_kind: expected 'gauss' or 'uniform', got {self.jitter_kind!r}"
            )
        if self.dropout_prob > 1:
            raise ValueRangeError(
                f"channel.dropout_prob: must be in [0, 1], got {self.dropout_prob!r}"
            )
        if abs(self.clock_error_pct) >= 50:
            raise ValueRangeError(
                f"channel.clock_error_pct: must be in (-50, 50), got {self.clock_error_pct!r}"
            )
        if self.idle_noise_mean_us <= 0:
            raise ValueRangeError(
                f"channel.idle_noise_mean_us: must be > 0, got {self.idle_noise_mean_us!r}"
            )
        if self.min_width_us <= 0:
            raise ValueRangeError(f"channel.min_width_us: must be > 0, got {self.min_width_us!r}")
        if 0 < self.quant_step_us < 0.01:
            raise ValueRangeError(
                f"channel.quant_step_us: must be 0 (off) or >= 0.01, got {self.quant_step_us!r}"
            )
        if self.glitch_rate_per_ms > 0 and self.glitch_width_us <= 0:
            raise ValueRangeError("channel.glitch_width_us: must be > 0 when glitches are on")

    @property
    def is_ideal(self) -> bool:
        """True when no impairment is switched on."""
        return self == ChannelSpec(
            jitter_kind=self.jitter_kind,
            idle_noise_mean_us=self.idle_noise_mean_us,
            idle_quiet_us=self.idle_quiet_us,
            min_width_us=self.min_width_us,
        )

    def with_(self, **changes: float | str) -> ChannelSpec:
        """Return a copy with some impairments changed (validated)."""
        unknown = set(changes) - {f.name for f in fields(self)}
        if unknown:
            raise ValueRangeError(
                f"unknown channel impairment(s) {sorted(unknown)}; allowed: {impairment_names()}"
            )
        return replace(self, **changes)  # type: ignore[arg-type]

    def to_dict(self) -> dict[str, float | str]:
        """Return the impairments as a plain dict (JSON-ready)."""
        return asdict(self)


def impairment_names() -> list[str]:
    """Return the names of the numeric ``ChannelSpec`` parameters (for sweeps and CLIs)."""
    return [f.name for f in fields(ChannelSpec) if f.name != "jitter_kind"]
