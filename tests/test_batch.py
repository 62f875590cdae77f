"""Batch encoding equals the one-frame encoder row by row."""

from __future__ import annotations

import numpy as np
import pytest

from ookframe import frame_bits, frame_chips
from ookframe.batch import frame_bits_batch, frame_chips_batch, random_raw_batch, raw_row
from ookframe.linecodes import LINE_CODES
from ookframe.spec.load import spec_from_dict
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


#: every registered line code at its defaults, and NRZ with stuffing (the per-row path)
CODE_DOCS = [{"name": n, **cls.DEFAULTS} for n, cls in LINE_CODES.items()] + [
    {"name": "nrz", "stuff_after": 4}]


@pytest.mark.parametrize("line_code", CODE_DOCS, ids=lambda d: "-".join(map(str, d.values())))
def test_batch_equals_single_for_every_line_code(line_code):
    """For every registered line code, the batch encoder's bits and chips equal the
    one-frame encoder's row by row (LSB-first little-endian fields, CRC over sync + fields,
    PN9 whitening)."""
    spec = spec_from_dict({
        "frame": {"name": "bed", "unit_us": 500.0, "bit_order": "lsb", "byte_order": "little"},
        "line_code": line_code, "preamble": {"pattern": 0xAA, "count": 2},
        "sync": {"value": 0x2DD4, "length_bits": 16},
        "fields": [{"name": "level", "width_bits": 16, "signed": True},
                   {"name": "id", "width_bits": 4}, {"name": "flags", "width_bits": 8}],
        "check": {"model": "CRC-16/KERMIT", "covers": ["sync", "fields"]},
        "whitening": {"kind": "pn9"}})
    raws = random_raw_batch(spec, 30, np.random.default_rng(3))
    bits = frame_bits_batch(spec, raws)
    chips = frame_chips_batch(spec, bits)
    for i in range(30):
        values = raw_row(spec, raws, i)
        assert bits[i].tolist() == frame_bits(spec, values).tolist()
        assert np.asarray(chips[i]).tolist() == frame_chips(spec, values).tolist()
