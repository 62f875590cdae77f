"""Spec loading and validation: every error names its key path and what is allowed."""

from __future__ import annotations

import copy
import tomllib

import pytest

from ookframe import SpecError, load_spec, spec_from_dict
from ookframe.demo import example_names, example_text
from ookframe.linecodes import get_line_code


def base() -> dict:
    return tomllib.loads(example_text("hive_scale.toml"))


def err_of(mutate) -> SpecError:
    doc = copy.deepcopy(base())
    mutate(doc)
    with pytest.raises(SpecError) as ei:
        spec_from_dict(doc)
    return ei.value


@pytest.mark.parametrize("name", example_names())
def test_examples_load(name):
    doc = tomllib.loads(example_text(name))
    spec = spec_from_dict(doc)
    assert spec.name == doc["frame"]["name"]
    assert len(spec.fields) == len(doc["fields"])


def test_bit_rate_gives_unit():
    """2 kbit/s Manchester = 2 chips per bit -> 250 µs unit (IEEE 802.3 clause 7.3.1.1 coding)."""
    spec = spec_from_dict(base())
    assert spec.unit_us == pytest.approx(250.0)
    assert get_line_code(spec.line_code).units_per_bit == 2


def test_unknown_key_suggests_close_match():
    e = err_of(lambda d: d["fields"][1].__setitem__("widht_bits", 3))
    assert e.path == "fields[1].widht_bits"
    assert "did you mean 'width_bits'" in e.message


def test_unknown_top_level_section():
    e = err_of(lambda d: d.__setitem__("whitenning", {}))
    assert "did you mean 'whitening'" in str(e)


def test_wrong_type():
    e = err_of(lambda d: d["fields"][0].__setitem__("width_bits", "eight"))
    assert e.path == "fields[0].width_bits" and "integer" in e.message


def test_default_out_of_range():
    e = err_of(lambda d: d["fields"][0].__setitem__("default", 300))
    assert e.path == "fields[0].default" and "allowed 0..255" in e.message


def test_sync_wider_than_length():
    e = err_of(lambda d: d["sync"].__setitem__("value", 0x1FFFF))
    assert e.path == "sync.value" and "wider than length_bits" in e.message


def test_bad_identifiers_and_duplicates():
    assert err_of(lambda d: d["fields"][0].__setitem__("name", "2hive")).path == "fields[0].name"
    assert "keyword" in err_of(lambda d: d["frame"].__setitem__("name", "static")).message
    e = err_of(lambda d: d["fields"][1].__setitem__("name", "hive"))
    assert "duplicate" in e.message


def test_zero_fields():
    e = err_of(lambda d: d.__setitem__("fields", []))
    assert e.path == "fields" and "at least one" in e.message


def test_impossible_timing():
    e = err_of(lambda d: d["frame"].__setitem__("bit_rate_bps", 2e6))
    assert e.path == "frame.bit_rate_bps" and "µs" in e.message
    e = err_of(lambda d: d["frame"].__setitem__("unit_us", 100))
    assert "exactly one of" in e.message


def test_unknown_crc_model_lists_close_names():
    e = err_of(lambda d: d["check"].__setitem__("model", "CRC-16/KERMITT"))
    assert e.path == "check.model" and "CRC-16/KERMIT" in e.message


def test_unknown_line_code_param():
    e = err_of(lambda d: d["line_code"].__setitem__("convension", "ieee"))
    assert "convention" in str(e)


def test_block_code_alignment():
    def mutate(d):
        d["line_code"] = {"name": "4b6b"}
        d["fields"][0]["width_bits"] = 7
        d["fields"][0]["default"] = 3

    e = err_of(mutate)
    assert e.path == "line_code.name" and "multiple of 4" in e.message


def test_length_field_needs_bytes_field():
    e = err_of(lambda d: d["fields"][0].__setitem__("role", "length"))
    assert "bytes" in e.message


def test_load_spec_reports_bad_toml(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[frame\nname = 1\n")
    with pytest.raises(SpecError, match="not valid TOML"):
        load_spec(p)
    with pytest.raises(SpecError, match="cannot read"):
        load_spec(tmp_path / "missing.toml")


@pytest.mark.parametrize(("frame_order", "check", "expected"), [
    ("little", {"kind": "fletcher16"}, "little"),
    ("little", {"model": "CRC-16/KERMIT", "byte_order": "big"}, "big"),
    ("little", {"model": "CRC-12/UMTS"}, "big"),  # 12 bits: no byte order to follow
    ("little", {"kind": "sum8"}, "little"),
    ("big", {"model": "CRC-16/KERMIT"}, "big"),
    ("big", {"model": "CRC-16/KERMIT", "byte_order": "little"}, "little"),
])
def test_check_byte_order_follows_the_frame(frame_order, check, expected):
    """Without ``[check] byte_order`` the check's bytes go in the frame's byte order when the
    check is a whole number of bytes (a little-endian frame gets a little-endian check),
    else big; an explicit value always wins (project convention, no source)."""
    doc = copy.deepcopy(base())
    doc["frame"]["byte_order"] = frame_order
    doc["fields"] = [f for f in doc["fields"] if f["width_bits"] % 8 == 0]
    doc["check"] = {**check, "covers": ["fields"]}
    assert spec_from_dict(doc).check.byte_order == expected


def test_little_endian_example_sends_its_check_low_byte_first():
    """coldframe_vent (little-endian, Fletcher-16, no whitening): the two check bytes on air
    are sum1 then sum2, each LSB first like its fields. Fletcher-16 as defined by
    J. G. Fletcher, IEEE Trans. Commun. COM-30 (1982): sum1 = sum of the bytes mod 255,
    sum2 = sum of the running sum1 values mod 255, value = sum2 << 8 | sum1; computed here
    with a plain loop over the packed sync + field bits."""
    import numpy as np

    from ookframe import frame

    spec = load_spec("examples/coldframe_vent.toml")
    values = {"vent": 1, "opening_pct": 35, "inside_temp_c": 18.25}
    bits = frame.frame_bits(spec, values)
    n_head = spec.preamble.length_bits + spec.sync.length_bits
    covered = bits[spec.preamble.length_bits:n_head + 32]  # sync + 32 field bits
    sum1 = sum2 = 0
    for byte in np.packbits(covered).tolist():
        sum1 = (sum1 + byte) % 255
        sum2 = (sum2 + sum1) % 255
    on_air = bits[n_head + 32:]
    first, second = (int("".join(map(str, on_air[i:i + 8][::-1])), 2) for i in (0, 8))
    assert (first, second) == (sum1, sum2)
