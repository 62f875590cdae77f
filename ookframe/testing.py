"""Hypothesis strategies for testing your own decoder against ookframe's encoder and
channel model.

Example::

    from hypothesis import given
    from ookframe import load_spec
    from ookframe.channel import get_preset
    from ookframe.testing import frames_through_channel

    spec = load_spec("hive_scale.toml")

    @given(frames_through_channel(spec, get_preset("budget-superregen")))
    def test_my_decoder(case):
        train, expected = case
        assert my_decoder(train.levels, train.durations_us) == expected
"""

from __future__ import annotations

import numpy as np
from hypothesis import strategies as st

from .bits import from_raw
from .channel import ChannelSpec
from .pulses import PulseTrain
from .spec.model import FieldSpec, FrameSpec
from .stress.vectors import transmit


def _field_value(f: FieldSpec) -> st.SearchStrategy[object]:
    if f.kind == "bytes":
        return st.binary(min_size=0, max_size=f.max_len_bytes)
    return st.integers(f.raw_min, f.raw_max).map(lambda raw: from_raw(f, raw))


def field_values(spec: FrameSpec) -> st.SearchStrategy[dict[str, object]]:
    """Return a strategy of valid field values (physical; bytes for bytes fields; the
    length field left out, it follows from the bytes) for ``spec``."""
    return st.fixed_dictionaries(
        {f.name: _field_value(f) for f in spec.fields if f.role != "length"}
    )


def channels(
    *,
    max_jitter_us: float = 0.0,
    max_mark_bias_us: float = 0.0,
    max_clock_error_pct: float = 0.0,
    base: ChannelSpec | None = None,
) -> st.SearchStrategy[ChannelSpec]:
    """Return a strategy of channels: ``base`` (default ideal) with jitter, mark bias and
    clock error drawn up to the given magnitudes (bias and clock error of either sign)."""
    b = base or ChannelSpec()
    return st.builds(
        lambda j, m, c: b.with_(jitter_us=j, mark_bias_us=m, clock_error_pct=c),
        st.floats(0.0, max_jitter_us),
        st.floats(-max_mark_bias_us, max_mark_bias_us),
        st.floats(-max_clock_error_pct, max_clock_error_pct),
    )


def frames_through_channel(
    spec: FrameSpec,
    channel: ChannelSpec | st.SearchStrategy[ChannelSpec] | None = None,
    *,
    idle_us: float | None = None,
) -> st.SearchStrategy[tuple[PulseTrain, dict[str, object]]]:
    """Return a strategy of (received pulse train, expected field values): one random
    transmission of ``spec`` framed by ``idle_us`` of space (default ``spec.gap_us``),
    through ``channel`` (a ChannelSpec or a strategy of them; default ideal). The channel's
    randomness comes from a drawn seed, so Hypothesis can shrink and replay cases."""
    chan = channel if isinstance(channel, st.SearchStrategy) else st.just(
        channel or ChannelSpec())

    def build(values: dict[str, object], ch: ChannelSpec, seed: int):
        rng = np.random.default_rng(seed)
        return transmit(spec, values, ch, rng, idle_us=idle_us), values

    return st.builds(build, field_values(spec), chan, st.integers(0, 2**63 - 1))
