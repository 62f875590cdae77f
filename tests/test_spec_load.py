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
