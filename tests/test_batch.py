"""Batch encoding equals the one-frame encoder row by row (every layout)."""

from __future__ import annotations

import numpy as np
import pytest

from ookframe import frame_bits, frame_chips
from ookframe.batch import frame_bits_batch, frame_chips_batch, random_raw_batch, raw_row
from ookframe.demo import example_names
from tests.conftest import example_spec


@pytest.mark.parametrize("name", example_names())
def test_batch_equals_single(name):
    spec, _ = example_spec(name)
    rng = np.random.default_rng(7)
    raws = random_raw_batch(spec, 40, rng)
    bits = frame_bits_batch(spec, raws)
    chips = frame_chips_batch(spec, bits)
    for i in range(40):
        values = {k: v for k, v in raw_row(spec, raws, i).items()}
        assert np.asarray(bits[i]).tolist() == frame_bits(spec, values).tolist()
        assert np.asarray(chips[i]).tolist() == frame_chips(spec, values).tolist()


def test_variable_layout_gives_rows_of_their_own_length():
    """With a bytes field every frame has its own length: a list of rows, 8 bits per byte."""
    spec, _ = example_spec("tank_level.toml")
    raws = random_raw_batch(spec, 50, np.random.default_rng(0))
    bits = frame_bits_batch(spec, raws)
    lengths = [len(b) for b in raws["note"]]
    assert isinstance(bits, list) and len(set(lengths)) > 1
    assert [r.size - 8 * k for r, k in zip(bits, lengths, strict=True)] == [bits[0].size - 8 * lengths[0]] * 50
