"""Tests for the analysis commands: ``ookframe syncword`` and ``ookframe crc-strength``."""

from __future__ import annotations

import json

from bitstring import Bits
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe.cli import exitcodes
from ookframe.cli.cmd_syncword import parse_pattern
from ookframe.cli.main import main


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


def test_syncword_json_finds_barker_13(capsys):
    """``syncword --bits 13 --preamble none``: the best words have peak sidelobe 1 and
    include Barker-13 0x1F35 (R. H. Barker, 1953)."""
    rows = _json(capsys, ["syncword", "--bits", "13", "--preamble", "none", "--top", "4",
                          "--json"])
    assert {r["max_sidelobe"] for r in rows} == {1}
    assert "0x1F35" in {r["word"] for r in rows}
    assert {"word", "max_sidelobe", "min_distance"} <= set(rows[0])


def test_syncword_with_preamble_and_word(capsys):
    """A given word is scored against the preamble; 0xAAAA after 1010... is at distance 0."""
    rows = _json(capsys, ["syncword", "--bits", "16", "--word", "AAAA", "--json"])
    assert rows[0]["min_distance"] == 0
    rows = _json(capsys, ["syncword", "--bits", "12", "--preamble", "0xAAAA", "--max-errors",
                          "1", "--bit-rate-bps", "1000", "--top", "2", "--json"])
    assert rows[0]["min_distance"] >= rows[1]["min_distance"]
    assert rows[0]["false_syncs_per_hour_on_noise"] > 0


def test_syncword_table_and_bad_input(capsys):
    assert main(["syncword", "--bits", "8", "--top", "2"]) == 0
    assert "8-bit sync words" in capsys.readouterr().out
    assert main(["syncword", "--bits", "8", "--preamble", "10x1"]) == exitcodes.BAD_INPUT
    err = capsys.readouterr().err
    assert "--preamble" in err and "Traceback" not in err
    assert main(["syncword", "--bits", "99"]) == exitcodes.BAD_INPUT
    assert "2..64" in capsys.readouterr().err


def test_crc_strength_json_koopman(capsys):
    """``crc-strength --width 16 --poly 0x8810 --koopman``: CCITT-16, HD 4 up to 32751 data
    bits (Koopman's CRC zoo, from memory)."""
    d = _json(capsys, ["crc-strength", "--width", "16", "--poly", "0x8810", "--koopman",
                       "--data-bits", "64", "--json"])
    assert d["poly"] == "0x1021" and d["hd"] == 4
    assert d["max_data_bits"]["4"] == 32751


def test_crc_strength_table_and_errors(capsys):
    assert main(["crc-strength", "--width", "8", "--poly", "0x07", "--data-bits", "64"]) == 0
    text = capsys.readouterr().out
    assert "HD 4 at 64 data bits" in text and "119" in text
    assert main(["crc-strength", "--width", "16", "--poly", "0x1020"]) == exitcodes.BAD_INPUT
    assert "+1 term" in capsys.readouterr().err
    assert main(["crc-strength", "--width", "16", "--poly", "zz"]) == exitcodes.BAD_INPUT
    assert "not an integer" in capsys.readouterr().err


@settings(deadline=None)
@given(st.one_of(st.text("01", min_size=1, max_size=40),
                 st.text("0123456789abcdefABCDEF", min_size=1, max_size=10).map("0x".__add__)))
def test_syncword_preamble_pattern_against_bitstring(pattern):
    """`syncword --preamble` reads 0/1 digits MSB first and 0x-hex as 4 bits a digit, as
    bitstring's own bin= / hex= parsers do (PyPI bitstring)."""
    ref = Bits(hex=pattern[2:]) if pattern.startswith("0x") else Bits(bin=pattern)
    assert "".join(map(str, parse_pattern(pattern))) == ref.bin
