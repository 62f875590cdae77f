"""Tests of ookframe.testing: the strategies produce decodable cases with the right
expected values (checked with the reference decoder)."""

from __future__ import annotations

import pytest
from hypothesis import given, settings

from ookframe.channel import ChannelSpec
from ookframe.decode import decode
from ookframe.frame import encode, raw_values, values_equal
from ookframe.testing import channels, field_values, frames_through_channel
from tests.conftest import example_spec

NAMES = ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml",
         "coldframe_vent.toml", "tank_level.toml"]


@pytest.mark.parametrize("name", NAMES)
def test_field_values_are_valid(name):
    spec, _ = example_spec(name)

    @settings(max_examples=25, deadline=None)
    @given(field_values(spec))
    def check(values):
        raw_values(spec, values)  # raises ValueRangeError when out of range
        assert len(encode(spec, values)) > 0

    check()


@pytest.mark.parametrize("name", NAMES)
def test_frames_through_channel_decode_to_expected(name):
    """The reference decoder, used as "your decoder", finds the expected fields in every
    drawn case of a mild channel (within the decoder's tolerance)."""
    spec, _ = example_spec(name)
    mild = channels(max_jitter_us=0.05 * spec.unit_us, max_mark_bias_us=0.05 * spec.unit_us,
                    max_clock_error_pct=2.0)

    @settings(max_examples=20, deadline=None)
    @given(frames_through_channel(spec, mild))
    def check(case):
        train, expected = case
        frames = [f for f in decode(spec, train) if f.crc_ok]
        assert frames, "nothing decoded"
        assert all(values_equal(spec, f.fields, expected) for f in frames)
        assert len(frames) == spec.repeats

    check()


@settings(max_examples=50, deadline=None)
@given(channels(max_jitter_us=10.0, max_mark_bias_us=5.0, max_clock_error_pct=3.0,
                base=ChannelSpec(quant_step_us=2.5)))
def test_channels_stay_within_bounds(ch):
    assert 0.0 <= ch.jitter_us <= 10.0
    assert abs(ch.mark_bias_us) <= 5.0 and abs(ch.clock_error_pct) <= 3.0
    assert ch.quant_step_us == 2.5


def test_length_field_is_derived_not_drawn():
    spec, _ = example_spec("tank_level.toml")
    length = spec.length_field
    assert length is not None

    @settings(max_examples=20, deadline=None)
    @given(field_values(spec))
    def check(values):
        assert length.name not in values
        assert raw_values(spec, values)[length.name] == len(values["note"])

    check()
