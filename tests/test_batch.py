"""Batch encoding equals the one-frame encoder row by row (every layout)."""

from __future__ import annotations

import numpy as np
import pytest

from ookframe import frame_bits, frame_chips
from ookframe.batch import (
    encode_bits,
    field_bits_batch,
    frame_bits_batch,
    frame_bits_flat,
    frame_bits_of,
    frame_chips_batch,
    frame_chips_flat,
    random_raw_arrays,
    random_raw_batch,
    raw_row,
    rows_of,
    split_rows,
)
from ookframe.demo import example_names
from ookframe.linecodes import LINE_CODES
from ookframe.plan import as_plan
from ookframe.spec_io import spec_from_dict
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


@pytest.mark.parametrize("line_code", CODE_DOCS, ids=lambda d: "-".join(map(str, d.values())))
@pytest.mark.parametrize("with_bytes", [False, True])
def test_flat_rows_equal_the_row_lists(line_code, with_bytes):
    """frame_bits_flat / frame_chips_flat hold the rows of frame_bits_batch /
    frame_chips_batch laid end to end, for every line code, fixed and variable layouts."""
    fields = [{"name": "level", "width_bits": 12}, {"name": "id", "width_bits": 4}]
    if with_bytes:
        fields = [{"name": "n", "width_bits": 4, "role": "length"},
                  {"name": "note", "kind": "bytes", "max_len_bytes": 5}, *fields]
    spec = spec_from_dict({
        "frame": {"name": "bed", "unit_us": 500.0}, "line_code": line_code,
        "preamble": {"pattern": 0xAA, "count": 1}, "sync": {"value": 0x2D, "length_bits": 8},
        "fields": fields, "check": {"model": "CRC-16/KERMIT", "covers": ["fields"]}})
    plan = as_plan(spec)
    raws = random_raw_batch(plan, 25, np.random.default_rng(5))
    enc = encode_bits(plan, raws)
    rows = list(frame_bits_of(plan, enc))
    flat, sizes = frame_bits_flat(plan, enc)
    assert sizes.tolist() == [r.size for r in rows]
    assert flat.dtype == np.uint8 and flat.tolist() == np.concatenate(rows).tolist()
    chip_rows = list(frame_chips_batch(plan, frame_bits_of(plan, enc)))
    chips, n_chips = frame_chips_flat(plan, flat, sizes)
    assert n_chips.tolist() == [c.size for c in chip_rows]
    assert chips.tolist() == np.concatenate(chip_rows).tolist()
    assert [c.tolist() for c in split_rows(chips, n_chips)] == [c.tolist() for c in chip_rows]


@pytest.mark.parametrize("name", ["tank_level", "hive_scale"])
def test_raw_arrays_are_the_raw_batch(name):
    """random_raw_arrays draws what random_raw_batch draws (the bytes field as a zero-padded
    matrix); field_bits_batch and encode_bits give the same bits from either form, also
    when the matrix holds other values past the lengths; payload_hex is each frame's
    fields bytes as hex (reference: bytes.hex of the packed bits, row by row)."""
    spec, _ = example_spec(f"{name}.toml")
    plan = as_plan(spec)
    g1, g2 = np.random.default_rng(9), np.random.default_rng(9)
    listed = random_raw_batch(plan, 60, g1)
    arrays = random_raw_arrays(plan, 60, g2)
    assert g1.random() == g2.random() and listed.keys() == arrays.keys()
    for key, value in listed.items():
        if isinstance(value, list):
            assert [bytes(r[:len(b)]) for r, b in zip(arrays[key], value, strict=True)] == value
            noisy = arrays[key].copy()
            noisy[np.arange(noisy.shape[1]) >= np.array([len(b) for b in value])[:, None]] = 0xA5
            for form in (arrays, {**arrays, key: noisy}):
                want, got = field_bits_batch(plan, listed), field_bits_batch(plan, form)
                assert np.array_equal(want[0], got[0]) and np.array_equal(want[1], got[1])
        else:
            assert np.array_equal(value, arrays[key]) and value.dtype == arrays[key].dtype
    a, b = encode_bits(plan, listed), encode_bits(plan, arrays)
    assert np.array_equal(a.body, b.body) and np.array_equal(a.n_body_bits, b.n_body_bits)
    rows = rows_of(a.fields, a.n_field_bits)
    assert a.payload_hex() == tuple(np.packbits(r).tobytes().hex() for r in rows)
