"""``apply_channel``: every impairment of a ``ChannelSpec`` in physical order."""

from __future__ import annotations

import numpy as np

from .._require import require, require_rng, require_train
from ..pulses import PulseTrain
from .impairments import (
    Edges,
    _k_clock,
    _k_dropout,
    _k_glitches,
    _k_idle_noise,
    _k_jitter,
    _k_mark_bias,
    _k_quantise,
    _min_width,
    tx_time_map_us,
)
from .model import ChannelSpec

#: the order in which ``apply_channel`` applies the impairments (transmitter -> receiver)
ORDER: tuple[str, ...] = (
    "clock_error_pct + drift_pct_per_s  (transmitter timebase)",
    "mark_bias_us                       (transmitter RF oscillator start-up / ring-down)",
    "dropout_prob                       (path: whole marks lost)",
    "idle_noise_us                      (receiver output while no carrier)",
    "glitch_rate_per_ms                 (impulsive interference)",
    "jitter_us                          (receiver slicer timing noise, every edge)",
    "quant_step_us                      (receiver quench clock, edges to its grid)",
)


def apply_channel(
    train: PulseTrain,
    channel: ChannelSpec,
    rng: np.random.Generator,
    *,
    burst_starts_us: np.ndarray | None = None,
    pulse_ends_us: np.ndarray | None = None,
) -> PulseTrain:
    """Return the train as the receiver outputs it after ``channel`` (see ``ORDER``).

    ``burst_starts_us`` (times in ``train``) are where the transmitter keys up; clock
    drift restarts at each (default: one burst at 0). Idle noise, when on, adds
    ``channel.idle_noise_us`` before the train, so the input's times map to output times
    by ``channel_time_map_us``. Edges never cross: a pulse narrower than
    ``channel.min_width_us`` is widened to it (pushing the next edge); with quantisation
    a pulse shrunk to nothing vanishes and its neighbours merge.

    ``pulse_ends_us``: where each pulse of ``train`` ends, when the caller has these
    running sums of its durations at hand with every sum exact (as ``Batch.pulse_ends_us``
    holds them; the same floats ``np.cumsum`` gives then): used instead of summing the
    durations again. Ignored unless the train's levels alternate and the lengths agree.
    """
    require_train(train, "train")
    require(channel, ChannelSpec, "channel", "e.g. ookframe.get_preset('ideal')")
    require_rng(rng, "rng")
    if len(train) == 0:
        return train
    c = channel
    # every kernel below gets toggle times that only this call holds (from_arrays makes a
    # new array; each kernel returns a new one or its input's), so they may work in place
    lv = train.levels
    if (pulse_ends_us is not None and pulse_ends_us.shape == lv.shape
            and (lv[1:] != lv[:-1]).all()):
        e = Edges.from_ends(lv, pulse_ends_us)
    else:
        e = Edges.from_arrays(lv, train.durations_us)
    if c.clock_error_pct or c.drift_pct_per_s:
        e = _k_clock(e, c.clock_error_pct, c.drift_pct_per_s, burst_starts_us)
    if c.mark_bias_us:
        e = _k_mark_bias(e, c.mark_bias_us, c.min_width_us, own=True)
    if c.dropout_prob:
        e = _k_dropout(e, c.dropout_prob, rng)
    if c.idle_noise_us:
        e = _k_idle_noise(e, c.idle_noise_us, c.idle_noise_mean_us, c.idle_quiet_us, rng)
    if c.glitch_rate_per_ms:
        e = _k_glitches(e, c.glitch_rate_per_ms, c.glitch_width_us, rng)
    if c.jitter_us:
        e = _k_jitter(e, c.jitter_us, c.jitter_kind, c.min_width_us, rng)
    if c.quant_step_us:
        e = _k_quantise(e, c.quant_step_us, rng, own=True)
    elif c.idle_noise_us or c.glitch_rate_per_ms:
        e = _min_width(e, c.min_width_us)
    return e.to_train()


def channel_time_map_us(
    t_us: np.ndarray, channel: ChannelSpec, burst_starts_us: np.ndarray | None = None
) -> np.ndarray:
    """Return where (µs, in the output of ``apply_channel``) input times ``t_us`` end up,
    ignoring the random impairments (which move edges by at most a few µs)."""
    mapped = tx_time_map_us(
        t_us, channel.clock_error_pct, channel.drift_pct_per_s, burst_starts_us
    )
    return mapped + channel.idle_noise_us
