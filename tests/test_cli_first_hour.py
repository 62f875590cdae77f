"""Command line as a new user meets it: strict check, help texts, output streams and layouts."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from ookframe.cli import exitcodes
from ookframe.cli.main import main

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EXAMPLES / "hive_scale.toml")

AA_SYNC = """
[frame]
name = "aa_sync"
bit_rate_bps = 2000
[line_code]
name = "manchester"
[preamble]
pattern = 0xAA
pattern_bits = 8
count = 4
[sync]
value = 0xAAAA
length_bits = 16
max_errors = 0
[[fields]]
name = "x"
width_bits = 8
[check]
model = "CRC-16/KERMIT"
"""


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err
    return code, cap.out, cap.err


@pytest.fixture
def aa_spec(tmp_path) -> str:
    p = tmp_path / "aa_sync.toml"
    p.write_text(AA_SYNC)
    return str(p)


def test_sync_word_equal_to_preamble_window_warns_and_fails_strict(capsys, aa_spec):
    """0xAAAA after an 0xAA preamble is a window of the preamble (distance 0): without
    --strict a warning on stderr and exit 0; with --strict one error line and exit 3, in
    table and JSON mode alike (common practice, no source: a sync word must differ from
    the preamble to be located)."""
    code, out, err = run(capsys, "check", aa_spec)
    assert code == 0
    assert "warning: sync word 0xAAAA equals a window of the preamble" in err
    assert "warning" not in out
    code, out, err = run(capsys, "check", aa_spec, "--strict")
    assert code == exitcodes.BAD_SPEC
    assert err.strip().splitlines()[-1].startswith("ookframe check: error: --strict: 1 warning")
    code, out, _ = run(capsys, "check", aa_spec, "--strict", "--json")
    assert code == exitcodes.BAD_SPEC
    assert len(json.loads(out)["warnings"]) == 1


def test_good_sync_word_passes_strict(capsys):
    """The shipped example's sync word is 2+ bits from every preamble window: no warning."""
    code, out, err = run(capsys, "check", HIVE, "--strict", "--json")
    assert code == 0 and json.loads(out)["warnings"] == []


@pytest.mark.parametrize("argv", [["check", HIVE], ["airtime", HIVE, "--interval-s", "60"]])
def test_caution_lines_go_to_stderr(capsys, argv):
    """README: data on stdout, messages on stderr; the regulatory caution is a message."""
    code, out, err = run(capsys, *argv)
    assert code == 0
    assert "caution" not in out.lower()
    assert "caution: Airtime, power and duty-cycle figures are estimates" in err
