"""Command line: results, JSON output, and bad input (message, exit code, no traceback)."""

from __future__ import annotations

import itertools
import json
import subprocess
import sys
from pathlib import Path

import pytest

from ookframe.cli import exitcodes
from ookframe.cli.main import main

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EXAMPLES / "hive_scale.toml")


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err
    return code, cap.out, cap.err


def test_check_json(capsys):
    code, out, _ = run(capsys, "check", HIVE, "--json")
    assert code == 0
    info = json.loads(out)
    # 4 preamble bytes + 2 sync + 6 field + 2 CRC bytes = 14 bytes = 112 bits, 2 chips each
    assert sum(s["bits"] for s in info["sections"]) == 112
    assert info["frame_us"] == pytest.approx(112 * 2 * 250.0)
    assert info["airtime_us"] == pytest.approx(3 * 112 * 500.0 + 2 * 8000)
    assert any("regulations" in c for c in info["cautions"])


def test_encode_bits_and_decode_round_trip(capsys, tmp_path):
    out_csv = tmp_path / "f.csv"
    code, _, _ = run(capsys, "encode", HIVE, "--set", "hive=7", "--set", "weight_g=12345",
                     "--format", "csv", "-o", str(out_csv))
    assert code == 0 and out_csv.read_text().startswith("level,duration_us")
    code, out, _ = run(capsys, "decode", HIVE, str(out_csv), "--json")
    assert code == 0
    frames = json.loads(out)
    assert len(frames) == 3 and all(f["crc_ok"] for f in frames)
    assert frames[0]["fields"]["hive"] == 7 and frames[0]["fields"]["weight_g"] == 12345
    # refuses to overwrite without --force
    code, _, err = run(capsys, "encode", HIVE, "--format", "csv", "-o", str(out_csv))
    assert code == exitcodes.EXISTS and "--force" in err


def test_encode_payload_equals_set(capsys):
    _, bits_set, _ = run(capsys, "encode", HIVE, "--format", "bits")
    _, bits_payload, _ = run(capsys, "encode", HIVE, "--format", "bits", "--payload", "0300a12215a6")
    assert bits_set == bits_payload and len(bits_set.strip()) == 112


PROBE_BITS_SPEC = """
[frame]
name = "vent_probe"
bit_rate_bps = 1000
bit_order = "lsb"
byte_order = "little"
[line_code]
name = "manchester"
[preamble]
pattern = 0xAA
pattern_bits = 8
count = 2
[sync]
value = 0x2DD4
length_bits = 16
[[fields]]
name = "temp_c"
width_bits = 16
signed = true
scale = 0.1
[[fields]]
name = "tilt"
width_bits = 5
signed = true
[[fields]]
name = "mode"
width_bits = 3
[[fields]]
name = "flags"
width_bits = 7
[check]
model = "CRC-16/KERMIT"
covers = ["fields"]
byte_order = "little"
"""


def test_encode_bits_read_back_with_bitstring(capsys, tmp_path):
    """`encode --format bits` parsed with bitstring (PyPI bitstring, an independent bit
    reader): preamble and sync MSB first; LSB-first fields: 16-bit signed scaled -12.3 ->
    raw -123, little-endian with each byte LSB first; 5-bit signed -5, 3-bit 6 and 7-bit
    0x55, each reversed whole; then the CRC-16/KERMIT (crccheck 1.3.x) of the 31 field bits
    packed MSB first and zero-padded, little-endian and LSB first."""
    import crccheck.crc
    from bitstring import BitArray

    spec = tmp_path / "vent_probe.toml"
    spec.write_text(PROBE_BITS_SPEC)
    code, out, _ = run(capsys, "encode", str(spec), "--format", "bits", "--set", "temp_c=-12.3",
                       "--set", "tilt=-5", "--set", "mode=6", "--set", "flags=0x55")
    assert code == 0 and set(out.strip()) <= {"0", "1"}
    frame = BitArray(bin=out.strip())
    cuts = dict(zip(("pre", "sync", "temp_c", "tilt", "mode", "flags", "crc"),
                    itertools.pairwise((0, 16, 32, 48, 53, 56, 63, 79)), strict=True))

    def part(name: str, lsb_bytes: bool = False) -> BitArray:
        """The section as bitstring reads it, with LSB-first order undone."""
        b = frame[slice(*cuts[name])]
        if lsb_bytes:  # whole bytes: each byte LSB first
            for i in range(0, len(b), 8):
                b.reverse(i, i + 8)
        else:
            b.reverse()
        return b

    assert len(frame) == 79
    assert frame[0:16].hex == "aaaa" and frame[16:32].uint == 0x2DD4
    assert part("temp_c", lsb_bytes=True).intle == -123
    assert part("tilt").int == -5 and part("mode").uint == 6 and part("flags").uint == 0x55
    field_bytes = frame[32:63].tobytes()  # packed MSB first, last byte zero-padded
    assert part("crc", lsb_bytes=True).uintle == crccheck.crc.Crc16Kermit.calc(field_bytes)


def test_demo_writes_folder(capsys, tmp_path):
    code, out, _ = run(capsys, "demo", "--dir", str(tmp_path / "d"))
    assert code == 0
    # the project's own value layout (name: value unit | ...), not name=value lists
    assert "hive: 3 | weight_g: 41250 g" in out and "hive=3" not in out
    assert {p.name for p in (tmp_path / "d").iterdir()} >= {"hive_scale.toml", "frame.csv",
                                                             "frame.vcd", "decoded.json", "hive_scale.h"}
    assert len(json.loads((tmp_path / "d" / "decoded.json").read_text())) == 3
    code, _, err = run(capsys, "demo", "--dir", str(tmp_path / "d"))
    assert code == exitcodes.EXISTS


@pytest.mark.parametrize(
    ("argv", "code", "needle"),
    [
        (["chekc", HIVE], exitcodes.USAGE, "did you mean 'check'"),
        (["check", "/nonexistent.toml"], exitcodes.BAD_SPEC, "cannot read"),
        (["encode", HIVE, "--set", "hive=999"], exitcodes.BAD_INPUT, "allowed 0..255"),
        (["encode", HIVE, "--set", "hiev=1"], exitcodes.BAD_INPUT, "did you mean 'hive'"),
        (["encode", HIVE, "--payload", "zz"], exitcodes.BAD_INPUT, "not hex"),
    ],
)
def test_bad_input(capsys, argv, code, needle):
    got, _, err = run(capsys, *argv)
    assert got == code
    assert needle in err


def test_broken_spec_and_garbage_capture(capsys, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text((EXAMPLES / "hive_scale.toml").read_text().replace("width_bits = 24", "width_bits = 99"))
    code, _, err = run(capsys, "check", str(bad))
    assert code == exitcodes.BAD_SPEC and "fields[1].width_bits" in err and "1..64" in err
    garbage = tmp_path / "g.csv"
    garbage.write_text("level,duration_us\n1,nan\n")
    code, _, err = run(capsys, "decode", HIVE, str(garbage))
    assert code == exitcodes.BAD_INPUT and "g.csv" in err


def test_console_script_no_traceback(tmp_path):
    """The installed entry point behaves like main(): one line on stderr, non-zero exit."""
    bad = tmp_path / "x.toml"
    bad.write_text("[frame]\nname='x'\n")
    r = subprocess.run([sys.executable, "-m", "ookframe.cli.main", "check", str(bad)],
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == exitcodes.BAD_SPEC
    assert "Traceback" not in r.stderr and "required" in r.stderr


def test_every_command_has_working_help(capsys):
    """Help text of every registered command renders (argparse formats '%' in help)."""
    from ookframe.cli.main import build_parser

    _, table = build_parser()
    assert {"check", "encode", "decode", "demo"} <= set(table)
    for name in table:
        assert main([name, "--help"]) == 0
        assert name in capsys.readouterr().out


def test_output_files_follow_umask_and_need_their_folder(capsys, tmp_path):
    """Written files get the mode open() would give (0666 & ~umask), and a missing folder
    is an error rather than created (POSIX open(2) semantics as the reference)."""
    import os

    out_csv = tmp_path / "f.csv"
    code, _, _ = run(capsys, "encode", HIVE, "--format", "csv", "-o", str(out_csv))
    assert code == 0
    umask = os.umask(0)
    os.umask(umask)
    assert out_csv.stat().st_mode & 0o777 == 0o666 & ~umask
    code, _, err = run(capsys, "encode", HIVE, "--format", "csv", "-o", str(tmp_path / "no" / "f.csv"))
    assert code == exitcodes.EXISTS and "does not exist" in err
    assert not (tmp_path / "no").exists()


def test_off_grid_scaled_value_warns(capsys):
    code, _, err = run(capsys, "encode", HIVE, "--set", "brood_temp_c=34.65", "--format", "bits")
    assert code == 0 and "not a multiple of its scale" in err and "34.6 is sent" in err


@pytest.mark.parametrize("argv", [
    ["stress", HIVE, "--frames", "-5"],
    ["stress", HIVE, "--seed", "-1"],
    ["stress", HIVE, "--workers", "0"],
    ["noise", HIVE, "--hours", "0"],
    ["noise", HIVE, "--hours", "nan"],
    ["noise", HIVE, "--mean-us", "0", "--hours", "1"],
    ["vectors", HIVE, "--count", "0"],
    ["margin", HIVE, "--resolution", "0"],
    ["margin", HIVE, "--impairments", "bogus"],
])
def test_simulation_options_are_range_checked(capsys, argv):
    code, _, err = run(capsys, *argv)
    assert code in (exitcodes.USAGE, exitcodes.BAD_INPUT)
    assert "internal error" not in err and ("range" in err or "allowed" in err)
