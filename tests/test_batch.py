"""Batch encoding equals the one-frame encoder row by row."""

from __future__ import annotations

import numpy as np
import pytest

from ookframe import frame_bits, frame_chips
from ookframe.batch import frame_bits_batch, frame_chips_batch, random_raw_batch, raw_row
from tests.conftest import example_spec

FIXED = ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml", "coldframe_vent.toml"]


@pytest.mark.parametrize("name", FIXED)
def test_batch_equals_single(name):
    spec, _ = example_spec(name)
    rng = np.random.default_rng(7)
    raws = random_raw_batch(spec, 40, rng)
    bits = frame_bits_batch(spec, raws)
    chips = frame_chips_batch(spec, bits)
    for i in range(40):
        values = {k: v for k, v in raw_row(spec, raws, i).items()}
        assert bits[i].tolist() == frame_bits(spec, values).tolist()
        assert np.asarray(chips[i]).tolist() == frame_chips(spec, values).tolist()


def test_variable_layout_refused():
    spec, _ = example_spec("tank_level.toml")
    with pytest.raises(ValueError, match="fixed-layout"):
        frame_bits_batch(spec, random_raw_batch(spec, 2, np.random.default_rng(0)))
