"""Tests of ookframe.layout.field_offsets and the offsets in ``check`` (table and JSON).

Oracle: the ``bitstring`` library (version >= 4.1) reads each field back out of the
frame's bit stream at the reported offset and width, independently of ookframe's own
parser."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
import pytest
from bitstring import Bits

from ookframe.bits import to_raw
from ookframe.cli.main import main
from ookframe.frame import frame_bits, random_values
from ookframe.layout import field_offsets
from ookframe.spec.model import CheckSpec, WhiteningSpec
from ookframe.spec_io import load_spec, spec_from_dict

EX = Path(__file__).resolve().parent.parent / "examples"


def _plain(spec):
    """The spec with MSB-first big-endian fields, no whitening (offsets do not depend on
    either; this lets bitstring read fields and check as plain big-endian integers)."""
    check = dataclasses.replace(spec.check, byte_order="big")
    return dataclasses.replace(spec, bit_order="msb", byte_order="big",
                               whitening=WhiteningSpec(), check=check)


def _read(bits: np.ndarray, start: int, width: int, signed: bool) -> int:
    b = Bits(bin="".join(map(str, bits.tolist())))[start:start + width]
    return b.int if signed else b.uint


@pytest.mark.parametrize("path", sorted(EX.glob("*.toml")), ids=lambda p: p.stem)
def test_fields_read_back_at_their_offsets(path):
    """For 20 random value sets of every example, bitstring reads every int field at
    frame_offset_bits (width_bits) and gets its raw value; the check follows the fields."""
    spec = _plain(load_spec(path))
    offs = {o.name: o for o in field_offsets(spec) if o.section == "fields"}
    assert list(offs) == [f.name for f in spec.fields]
    rng = np.random.default_rng(2)
    for _ in range(20):
        values = random_values(spec, rng)
        bits = frame_bits(spec, values)
        extra = 0  # bits of the bytes fields before the current field
        for f in spec.fields:
            o = offs[f.name]
            assert o.frame_offset_bits - o.offset_bits == (spec.preamble.length_bits
                                                           + spec.sync.length_bits)
            if f.kind == "bytes":
                n = len(values[f.name]) * 8
                got = Bits(bin="".join(map(str, bits.tolist())))[
                    o.frame_offset_bits + extra:o.frame_offset_bits + extra + n].bytes
                assert got == values[f.name] and o.max_width_bits == 8 * f.max_len_bytes
                extra += n
                continue
            if f.role == "length":
                continue
            start = o.frame_offset_bits + extra
            assert o.frame_offset_bits <= start <= o.max_frame_offset_bits
            assert _read(bits, start, o.width_bits, f.signed) == to_raw(f, values[f.name])
        if spec.check.kind != "none":
            ck = field_offsets(spec)[-1]
            assert ck.section == "check" and ck.frame_offset_bits + extra + ck.width_bits == bits.size


def test_offsets_after_a_bytes_field_are_ranges():
    """A 16-bit field after a 0..4 byte field sits at 8..40 bits of the fields section
    (length byte, then 0..32 bits); hand count."""
    spec = spec_from_dict({
        "frame": {"name": "greenhouse_note", "bit_rate_bps": 1000},
        "line_code": {"name": "nrz"},
        "sync": {"value": 0x2D, "length_bits": 8},
        "fields": [{"name": "n", "width_bits": 8, "role": "length"},
                   {"name": "note", "kind": "bytes", "max_len_bytes": 4},
                   {"name": "soil", "width_bits": 16, "unit": "%"}],
    })
    n, note, soil, *rest = field_offsets(spec)
    assert (n.offset_bits, n.width_bits, n.varies) == (0, 8, False)
    assert (note.offset_bits, note.width_bits, note.max_width_bits) == (8, 0, 32)
    assert (soil.offset_bits, soil.max_offset_bits, soil.width_bits) == (8, 40, 16)
    head = spec.preamble.length_bits + spec.sync.length_bits
    assert soil.frame_offset_bits == head + 8 and soil.varies and soil.unit == "%"
    assert [o.section for o in rest] == (["check"] if spec.check.kind != "none" else [])
    none = dataclasses.replace(spec, check=CheckSpec(kind="none"))
    assert [o.section for o in field_offsets(none)] == ["fields"] * 3

def test_check_prints_offsets_table_and_json(capsys):
    """hive_scale: 4 x 8-bit preamble + 16-bit sync = 48 bits before the fields; fields 8,
    24, 12, 4 bits wide (examples/hive_scale.toml), so offsets 0, 8, 32, 44, check at 48."""
    path = str(EX / "hive_scale.toml")
    assert main(["check", path, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    rows = [(o["name"], o["offset_bits"], o["frame_offset_bits"], o["width_bits"])
            for o in d["field_offsets"]]
    assert rows == [("hive", 0, 48, 8), ("weight_g", 8, 56, 24), ("brood_temp_c", 32, 80, 12),
                    ("battery_v", 44, 92, 4), ("check", 48, 96, 16)]
    assert main(["check", path]) == 0
    text = capsys.readouterr().out
    assert "field offsets" in text and "from frame start" in text
