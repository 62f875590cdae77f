"""Command line bad input: one clear line on stderr, non-zero exit, no traceback, nothing written.

Each case below was checked by hand against the installed ``ookframe`` command; these tests keep
the behaviour from regressing. Expected behaviour is the project's own CLI contract (README,
"Every command prints data on stdout and messages on stderr; errors are one line naming the
problem, with a non-zero exit code"); common practice, no source.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from ookframe.cli import exitcodes
from ookframe.cli.main import main

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = EXAMPLES / "hive_scale.toml"
HIVE_TEXT = HIVE.read_text()


def run_bad(capsys, *argv: str) -> tuple[int, str, str]:
    """Return (exit code, stdout, stderr with whitespace collapsed) of a failing command."""
    code = main([str(a) for a in argv])
    cap = capsys.readouterr()
    assert code != 0, cap.err
    assert "Traceback" not in cap.err
    assert "internal error" not in cap.err
    return code, cap.out, " ".join(cap.err.split())


def spec_with(tmp_path: Path, old: str, new: str, name: str = "s.toml") -> Path:
    """Return the path of a copy of the hive example with one text replacement."""
    assert old in HIVE_TEXT
    p = tmp_path / name
    p.write_text(HIVE_TEXT.replace(old, new, 1))
    return p


# ---------------------------------------------------------------- broken specs (check)

SPEC_CASES = [
    ("repeats = 3", "repeets = 3", "did you mean 'repeats'"),
    ("repeats = 3", 'repeats = "three"', "frame.repeats: must be an integer"),
    ("repeats = 3", "repeats = 3.5", "frame.repeats: must be an integer, got float"),
    ("repeats = 3", "repeats = true", "got bool"),
    ("repeats = 3", "repeats = 0", "frame.repeats: 0 is out of range; allowed 1..255"),
    ("repeats = 3", "repeats = -1", "allowed 1..255"),
    ('name = "manchester"', 'name = "manchesterr"', "did you mean 'manchester'"),
    ('model = "CRC-16/KERMIT"', 'model = "CRC-99/NOPE"', "unknown CRC model 'CRC-99/NOPE'"),
    ("width_bits = 12", "width_bits = 0", "width_bits: 0 is out of range; allowed 1..64"),
    ("width_bits = 12", "width_bits = 100", "allowed 1..64"),
    ("gap_us = 8000", "gap_us = -5", "frame.gap_us: -5 is out of range"),
    ("gap_us = 8000", "gap_us = nan", "frame.gap_us: must be finite"),
    ("bit_rate_bps = 2000", "bit_rate_bps = 0", "frame.bit_rate_bps: 0 is out of range"),
    ("bit_rate_bps = 2000", "bit_rate_bps = inf", "frame.bit_rate_bps: must be finite"),
    ("bit_rate_bps = 2000", "bit_rate_bps = 1e12", "allowed units are"),
    ("bit_rate_bps = 2000", "", "give exactly one of bit_rate_bps or unit_us"),
    ("bit_rate_bps = 2000", "bit_rate_bps = 2000\nunit_us = 250", "give exactly one of"),
    ('bit_order = "msb"', 'bit_order = "middle"', "allowed: msb, lsb"),
    ("length_bits = 16", "length_bits = 0", "sync.length_bits: 0 is out of range"),
    ("length_bits = 16", "length_bits = 8", "is wider than length_bits = 8"),
    ("max_errors = 1", "max_errors = 99", "sync.max_errors: 99 is out of range"),
    ("max_errors = 1", "max_errors = -1", "sync.max_errors"),
    ('covers = ["fields"]', 'covers = ["nothing"]', "'nothing' is not allowed"),
    ('covers = ["fields"]', "covers = []", "must be a non-empty list"),
    ('convention = "ieee"', 'convention = "foo"', "got 'foo'"),
    ('convention = "ieee"', 'convention = "ieee"\nmark_units = 2', "unknown parameter for manchester"),
    ('name = "hive_scale"', 'name = "hive scale-1"', "not a valid frame name"),
    ('name = "weight_g"', 'name = "hive"', "duplicate field name 'hive'"),
    ("default = 41250", "default = 99999999", "does not fit 24 unsigned bits"),
    ("default = 34.6", "default = -300.0", "does not fit 12 signed bits"),
    ("scale = 0.1", "scale = 0", "scale: must not be 0"),
    ("scale = 0.1", "scale = nan", "scale: must be finite"),
    ("[sync]", "[sink]", "sink: unknown key"),
    ("[frame]", "[frame]\n[frame]", "not valid TOML"),
]


@pytest.mark.parametrize(("old", "new", "message"), SPEC_CASES)
def test_check_rejects_broken_spec(capsys, tmp_path, old, new, message):
    spec = spec_with(tmp_path, old, new)
    code, out, err = run_bad(capsys, "check", spec)
    assert code == exitcodes.BAD_SPEC
    assert message in err
    assert out == ""
    assert err.startswith("ookframe check: error: spec error:")


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("", "frame: section is required"),
        ("frame = 3\n" + HIVE_TEXT[HIVE_TEXT.index("[line_code]"):], "frame: must be a table, got int"),
        ("[frame]\nname = 'x'\nunit_us = 100\n", "line_code: section is required"),
        ("[frame]\nname = 'x'\nunit_us = 100\nline_code = 'manchester'\n",
         "frame.line_code: line_code is a section of its own: write a [line_code] table"),
        (HIVE_TEXT + "\n[[[oops\n", "not valid TOML"),
        (HIVE_TEXT + "\n[decoder]\nglitch_fraction = 5\n", "decoder.glitch_fraction: 5 is out of range"),
        (HIVE_TEXT + "\n[decoder]\ntolerance = 0\n", "decoder.tolerance: 0 is out of range"),
        (HIVE_TEXT + "\n[decoder]\nloop_gain = nan\n", "decoder.loop_gain: must be finite"),
        (HIVE_TEXT + "\n[decoder]\nbogus = 1\n", "decoder.bogus: unknown key"),
        (HIVE_TEXT + '\n[decoder]\ntolerance = "x"\n', "must be a number, got str"),
    ],
)
def test_check_rejects_spec_text(capsys, tmp_path, text, message):
    spec = tmp_path / "t.toml"
    spec.write_text(text)
    code, _, err = run_bad(capsys, "check", spec)
    assert code == exitcodes.BAD_SPEC and message in err


@pytest.mark.parametrize("command", ["check", "encode", "stress", "airtime", "vectors"])
def test_missing_spec_file(capsys, tmp_path, command):
    extra = ["--interval-s", "60"] if command == "airtime" else []
    code, _, err = run_bad(capsys, command, tmp_path / "nope.toml", *extra)
    assert code == exitcodes.BAD_SPEC
    assert "cannot read spec file" in err and "No such file or directory" in err


def test_spec_is_a_directory(capsys, tmp_path):
    code, _, err = run_bad(capsys, "check", tmp_path)
    assert code == exitcodes.BAD_SPEC and "Is a directory" in err


def test_check_ber_out_of_range(capsys):
    for ber in ("2", "-1", "nan"):
        code, _, err = run_bad(capsys, "check", HIVE, "--ber", ber)
        assert code == exitcodes.BAD_INPUT and "allowed 0..0.5" in err


# ---------------------------------------------------------------- encode

@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--set", "hive=999"], "999 does not fit 8 unsigned bits; allowed 0..255"),
        (["--set", "hive=-1"], "allowed 0..255"),
        (["--set", "hive=abc"], "'abc' is not a number"),
        (["--set", "hive=3.5"], "3.5 is not an integer"),
        (["--set", "hive=nan"], "nan is not a finite number"),
        (["--set", "brood_temp_c=1e400"], "is not a finite number"),
        (["--set", "nofield=1"], "unknown field 'nofield'"),
        (["--set", "hive"], "expected FIELD=VALUE"),
        (["--payload", "zz"], "--payload 'zz' is not hex"),
        (["--payload", "0300a12215a"], "is not hex"),
        (["--payload", "0300"], "too short"),
        (["--payload", "0300a12215a6ff"], "payload has 7 bytes; the fields use 6"),
        (["--payload", "0300a12215a6", "--set", "hive=1"], "not both"),
    ],
)
def test_encode_bad_values(capsys, args, message):
    code, out, err = run_bad(capsys, "encode", HIVE, *args)
    assert code == exitcodes.BAD_INPUT and message in err and out == ""


def test_encode_bad_format_is_usage_error(capsys):
    code, _, err = run_bad(capsys, "encode", HIVE, "--format", "xyz")
    assert code == exitcodes.USAGE and "invalid choice" in err


def test_encode_refuses_existing_output(capsys, tmp_path):
    out_csv = tmp_path / "exists.csv"
    out_csv.write_text("keep me\n")
    code, _, err = run_bad(capsys, "encode", HIVE, "--format", "csv", "-o", out_csv)
    assert code == exitcodes.EXISTS and "use --force to overwrite" in err
    assert out_csv.read_text() == "keep me\n"
    # a directory as output, even with --force
    code, _, err = run_bad(capsys, "encode", HIVE, "-o", tmp_path, "--force")
    assert code == exitcodes.EXISTS and "is a directory" in err


# ---------------------------------------------------------------- decode: garbage captures

CAPTURES = [
    ("junk.csv", bytes(range(128, 256)) * 4, "not a UTF-8 text file"),
    ("junk.json", bytes(range(128, 256)) * 4, "not a UTF-8 text file"),
    ("junk.vcd", b"\x18garbage\x00 here", "in the VCD header"),
    ("empty.csv", b"", "expected header 'level,duration_us'"),
    ("empty.json", b"", "invalid JSON"),
    ("empty.vcd", b"", "no $enddefinitions"),
    ("nan.csv", b"level,duration_us\n0,250\n1,nan\n", "duration_us is NaN"),
    ("inf.csv", b"level,duration_us\n0,250\n1,inf\n", "duration_us is infinite"),
    ("neg.csv", b"level,duration_us\n0,250\n1,-500\n", "duration_us is -500, must be > 0"),
    ("zero.csv", b"level,duration_us\n0,250\n1,0\n", "duration_us is 0, must be > 0"),
    ("hdr.csv", b"foo,bar\n0,250\n", "expected header 'level,duration_us', got 'foo,bar'"),
    ("nohdr.csv", b"0,250\n1,500\n", "expected header"),
    ("lvl.csv", b"level,duration_us\n2,250\n", "level '2' must be 0 or 1"),
    ("cols.csv", b"level,duration_us\n0,250,7\n", "expected 2 values"),
    ("short.csv", b"level,duration_us\n0\n", "got 1"),
    ("nosig.vcd", b"$timescale 1 ns $end\n$enddefinitions $end\n#0\n", "holds 0 1-bit signals"),
    (
        "two.vcd",
        b"$timescale 1 ns $end\n$scope module m $end\n$var wire 1 ! a $end\n"
        b'$var wire 1 " b $end\n$upscope $end\n$enddefinitions $end\n#0\n0!\n0"\n',
        "available: m.a, m.b",
    ),
    (
        "back.vcd",
        b"$timescale 1 ns $end\n$scope module m $end\n$var wire 1 ! a $end\n$upscope $end\n"
        b"$enddefinitions $end\n#0\n0!\n#100\n1!\n#50\n0!\n",
        "time goes backwards",
    ),
    (
        "ts.vcd",
        b"$timescale 7 parsecs $end\n$enddefinitions $end\n",
        "$timescale '7 parsecs' not understood",
    ),
    (
        "stamp.vcd",
        b"$timescale 1 us $end\n$scope module m $end\n$var wire 1 ! a $end\n$upscope $end\n"
        b"$enddefinitions $end\n#0\n0!\n#abc\n1!\n",
        "bad timestamp '#abc'",
    ),
    ("list.json", b"[]", "expected a JSON object with 'levels' and 'durations_us'"),
    ("num.json", b"3", "expected a JSON object"),
    ("obj.json", b"{}", "key 'levels' must be a list"),
    (
        "mis.json",
        b'{"format":"ookframe-pulses","version":1,"levels":[0,1],"durations_us":[100]}',
        "'levels' has 2 entries but 'durations_us' has 1",
    ),
    (
        "ver.json",
        b'{"format":"ookframe-pulses","version":99,"levels":[0,1],"durations_us":[1,2]}',
        "this reader knows version 1",
    ),
    (
        "neg.json",
        b'{"format":"ookframe-pulses","version":1,"levels":[0,1],"durations_us":[100,-200]}',
        "durations_us[1] is -200, must be > 0",
    ),
    (
        "nan.json",
        b'{"format":"ookframe-pulses","version":1,"levels":[0,1],"durations_us":[100,NaN]}',
        "durations_us[1] is NaN",
    ),
    (
        "lev.json",
        b'{"format":"ookframe-pulses","version":1,"levels":["a",1],"durations_us":[1,2]}',
        "levels[0] is 'a', must be 0 or 1",
    ),
    ("cap.txt", b"level,duration_us\n0,250\n", "cannot tell the capture format from .txt"),
]


@pytest.mark.parametrize(("name", "data", "message"), CAPTURES, ids=[c[0] for c in CAPTURES])
def test_decode_rejects_garbage_capture(capsys, tmp_path, name, data, message):
    cap = tmp_path / name
    cap.write_bytes(data)
    code, out, err = run_bad(capsys, "decode", HIVE, cap)
    assert code == exitcodes.BAD_INPUT
    assert message in err
    assert out == ""
    assert err.count("error:") == 1


def test_decode_missing_capture_and_directory(capsys, tmp_path):
    code, _, err = run_bad(capsys, "decode", HIVE, tmp_path / "nope.csv")
    assert code == exitcodes.BAD_INPUT and "cannot read: No such file or directory" in err
    d = tmp_path / "d.csv"
    d.mkdir()
    code, _, err = run_bad(capsys, "decode", HIVE, d)
    assert code == exitcodes.BAD_INPUT and "Is a directory" in err


def test_decode_signal_option(capsys, tmp_path):
    csv = tmp_path / "c.csv"
    csv.write_text("level,duration_us\n0,250\n1,500\n")
    code, _, err = run_bad(capsys, "decode", HIVE, csv, "--signal", "x")
    assert code == exitcodes.BAD_INPUT and "--signal applies to VCD captures only" in err
    vcd = tmp_path / "c.vcd"
    vcd.write_text("$timescale 1 ns $end\n$scope module m $end\n$var wire 1 ! a $end\n"
                   "$upscope $end\n$enddefinitions $end\n#0\n0!\n")
    code, _, err = run_bad(capsys, "decode", HIVE, vcd, "--signal", "nope")
    assert code == exitcodes.BAD_INPUT and "no signal named 'nope'" in err


# ---------------------------------------------------------------- demo

def test_demo_second_run_refuses(capsys, tmp_path):
    d = tmp_path / "demo"
    assert main(["demo", "--dir", str(d)]) == 0
    capsys.readouterr()
    before = {p.name: p.read_bytes() for p in d.iterdir()}
    code, _, err = run_bad(capsys, "demo", "--dir", d)
    assert code == exitcodes.EXISTS and "use --force" in err
    assert {p.name: p.read_bytes() for p in d.iterdir()} == before


def test_demo_partial_folder_untouched(capsys, tmp_path):
    d = tmp_path / "partial"
    d.mkdir()
    (d / "frame.csv").write_text("mine\n")
    code, _, err = run_bad(capsys, "demo", "--dir", d)
    assert code == exitcodes.EXISTS and "frame.csv exists" in err
    assert sorted(p.name for p in d.iterdir()) == ["frame.csv"]


def test_demo_dir_is_a_file(capsys, tmp_path):
    f = tmp_path / "afile"
    f.write_text("")
    code, _, err = run_bad(capsys, "demo", "--dir", f, "--force")
    # an existing path is in the way of the output (README: exit 6), whatever --force says
    assert code == exitcodes.EXISTS and "afile is a file, not a folder" in err


# ---------------------------------------------------------------- channel options (stress etc.)

CHANNEL_CASES = [
    (["--jitter-us", "-5"], "channel.jitter_us: must be >= 0"),
    (["--jitter-us", "nan"], "channel.jitter_us: must be finite"),
    (["--jitter-us", "inf"], "must be finite"),
    (["--dropout-prob", "1.5"], "channel.dropout_prob: must be in [0, 1]"),
    (["--dropout-prob", "-0.1"], "channel.dropout_prob: must be >= 0"),
    (["--clock-error-pct", "200"], "channel.clock_error_pct: must be in (-50, 50)"),
    (["--glitch-rate-per-ms", "-1"], "channel.glitch_rate_per_ms: must be >= 0"),
    (["--glitch-rate-per-ms", "1"], "glitch_width_us: must be > 0 when glitches are on"),
    (["--quant-step-us", "-1"], "channel.quant_step_us: must be >= 0"),
    (["--min-width-us", "-1"], "channel.min_width_us: must be >= 0"),
    (["--idle-noise-mean-us", "0"], "channel.idle_noise_mean_us: must be > 0"),
    (["--idle-quiet-us", "-1"], "channel.idle_quiet_us: must be >= 0"),
]


@pytest.mark.parametrize(("args", "message"), CHANNEL_CASES)
@pytest.mark.parametrize("command", ["stress", "vectors"])
def test_channel_option_out_of_range(capsys, command, args, message):
    size = ["--workers", "1", "--frames", "10"] if command == "stress" else ["--count", "1"]
    code, out, err = run_bad(capsys, command, HIVE, *size, *args)
    assert code == exitcodes.BAD_INPUT and message in err and out == ""


@pytest.mark.parametrize(
    ("argv", "code"),
    [
        (["stress", str(HIVE), "--frames", "abc"], exitcodes.USAGE),
        (["stress", str(HIVE), "--preset", "nope"], exitcodes.USAGE),
        (["noise", str(HIVE)], exitcodes.USAGE),
        (["sweep", str(HIVE)], exitcodes.USAGE),
        (["airtime", str(HIVE)], exitcodes.USAGE),
        (["plot", str(HIVE), "-o", "x.png"], exitcodes.USAGE),
        (["crc-strength", "--width", "16"], exitcodes.USAGE),
        (["bogus"], exitcodes.USAGE),
    ],
)
def test_usage_errors(capsys, argv, code):
    got, out, _ = run_bad(capsys, *argv)
    assert got == code and out == ""


def test_stress_bad_spec(capsys, tmp_path):
    spec = spec_with(tmp_path, "repeats = 3", "repeets = 3")
    code, _, err = run_bad(capsys, "stress", spec, "--frames", "10")
    assert code == exitcodes.BAD_SPEC and "repeets" in err


# ---------------------------------------------------------------- sweep

@pytest.mark.parametrize(
    ("vary", "message"),
    [
        ("jitter_us", "expected NAME=START:STOP:COUNT"),
        ("bogus=0:1:3", "expected NAME=START:STOP:COUNT"),
        ("jitter_kind=0:1:2", "expected NAME=START:STOP:COUNT"),
        ("jitter_us=0:1", "the grid must be START:STOP:COUNT"),
        ("jitter_us=0:10:0", "COUNT 1..200"),
        ("jitter_us=0:10:100000", "COUNT 1..200"),
        ("jitter_us=0:10:-3", "COUNT 1..200"),
        ("jitter_us=0:10:2.5", "the grid must be"),
        ("jitter_us=,", "the grid must be"),
        ("jitter_us=", "the grid must be"),
        ("jitter_us=-10:0:3", "channel.jitter_us: must be >= 0"),
        ("jitter_us=nan:1:3", "channel.jitter_us: must be finite"),
        ("dropout_prob=0:2:3", "channel.dropout_prob: must be in [0, 1]"),
    ],
)
def test_sweep_bad_vary(capsys, vary, message):
    code, out, err = run_bad(capsys, "sweep", HIVE, "--vary", vary, "--frames", "10", "--workers", "1")
    assert code == exitcodes.BAD_INPUT and message in err and out == ""


def test_sweep_refuses_existing_plot(capsys, tmp_path):
    png = tmp_path / "sw.png"
    png.write_bytes(b"old")
    code, _, err = run_bad(capsys, "sweep", HIVE, "--vary", "jitter_us=0:1:1", "--frames", "1",
                           "--workers", "1", "--plot", png)
    assert code == exitcodes.EXISTS and "use --force to overwrite" in err
    assert png.read_bytes() == b"old"


def test_sweep_bad_second_spec(capsys, tmp_path):
    spec = spec_with(tmp_path, "repeats = 3", "repeets = 3")
    code, _, err = run_bad(capsys, "sweep", HIVE, spec, "--vary", "jitter_us=0:1:1", "--frames", "1")
    assert code == exitcodes.BAD_SPEC and "repeets" in err


# ---------------------------------------------------------------- margin

@pytest.mark.parametrize("target", ["0", "1", "1.5", "-0.1", "nan"])
def test_margin_target_out_of_range(capsys, target):
    code, _, err = run_bad(capsys, "margin", HIVE, "--target-per", target, "--frames", "60",
                           "--impairments", "jitter_us")
    assert code == exitcodes.BAD_INPUT and "target PER must be in (0, 1)" in err


@pytest.mark.parametrize("frames", ["100", "0"])
def test_margin_too_few_frames(capsys, frames):
    code, _, err = run_bad(capsys, "margin", HIVE, "--frames", frames, "--impairments", "jitter_us")
    assert code == exitcodes.BAD_INPUT
    assert re.search(r"cannot show PER < 0.01 at 95 %; use at least \d+", err)


# ---------------------------------------------------------------- vectors

def test_vectors_refuses_existing_output(capsys, tmp_path):
    out = tmp_path / "v.h"
    out.write_text("keep\n")
    code, _, err = run_bad(capsys, "vectors", HIVE, "--count", "1", "-o", out)
    assert code == exitcodes.EXISTS and "use --force to overwrite" in err
    assert out.read_text() == "keep\n"


# ---------------------------------------------------------------- airtime

@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--interval-s", "0"], "interval_s must be longer than one transmission (0.184 s)"),
        (["--interval-s", "-5"], "interval_s must be longer"),
        (["--interval-s", "nan"], "got nan"),
        (["--interval-s", "inf"], "got inf"),
        (["--interval-s", "0.1"], "got 0.1"),
        (["--interval-s", "60", "--nodes", "0"], "nodes must be an integer >= 1, got 0"),
        (["--interval-s", "60", "--nodes", "-2"], "nodes must be an integer >= 1"),
        (["--interval-s", "60", "--power-mw", "-1"], "power_mw must be >= 0"),
        (["--interval-s", "60", "--power-mw", "nan"], "power_mw must be >= 0, got nan"),
        (["--interval-s", "60", "--tx-current-ma", "0"], "tx_current_ma must be > 0"),
        (["--interval-s", "60", "--supply-v", "-1"], "supply_v must be > 0"),
        (["--interval-s", "60", "--supply-v", "nan"], "supply_v must be > 0"),
        (["--interval-s", "60", "--battery-mah", "0"], "battery_mah must be > 0"),
        (["--interval-s", "60", "--battery-mah", "-100"], "battery_mah must be > 0"),
    ],
)
def test_airtime_bad_values(capsys, args, message):
    code, out, err = run_bad(capsys, "airtime", HIVE, *args)
    assert code == exitcodes.BAD_INPUT and message in err and out == ""


# ---------------------------------------------------------------- plot

@pytest.mark.parametrize("name", ["x.txt", "x.svg", "noext"])
def test_plot_output_must_be_png(capsys, tmp_path, name):
    code, _, err = run_bad(capsys, "plot", HIVE, "--what", "timing", "-o", tmp_path / name)
    assert code == exitcodes.BAD_INPUT and "the output must be a .png file" in err
    assert not (tmp_path / name).exists()


def test_plot_bad_values_and_existing(capsys, tmp_path):
    png = tmp_path / "p.png"
    code, _, err = run_bad(capsys, "plot", HIVE, "--what", "timing", "-o", png, "--set", "hive=999")
    assert code == exitcodes.BAD_INPUT and "allowed 0..255" in err and not png.exists()
    code, _, err = run_bad(capsys, "plot", HIVE, "--what", "timing", "-o", png, "--payload", "zz")
    assert code == exitcodes.BAD_INPUT and "is not hex" in err and not png.exists()
    png.write_bytes(b"old")
    code, _, err = run_bad(capsys, "plot", HIVE, "--what", "timing", "-o", png)
    assert code == exitcodes.EXISTS and "use --force" in err and png.read_bytes() == b"old"


# ---------------------------------------------------------------- syncword / crc-strength

@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--bits", "1"], "sync word length 1 bits out of range; allowed 2..64"),
        (["--bits", "65"], "allowed 2..64"),
        (["--bits", "-4"], "allowed 2..64"),
        (["--bits", "16", "--top", "0"], "top 0 out of range; allowed >= 1"),
        (["--bits", "16", "--max-errors", "-1"], "max_errors -1 out of range; allowed 0..16"),
        (["--bits", "16", "--max-errors", "99"], "allowed 0..16"),
        (["--bits", "16", "--bit-rate-bps", "0"], "must be > 0"),
        (["--bits", "16", "--bit-rate-bps", "nan"], "must be > 0"),
        (["--bits", "16", "--word", "zz"], "--word 'zz' is not hex"),
        (["--bits", "8", "--word", "0x1FF"], "sync word 0x1FF does not fit in 8 bits"),
        (["--bits", "16", "--preamble", "0102"], "give 0/1 digits, 0x-hex or 'none'"),
        (["--bits", "16", "--preamble", "0xZZ"], "bad hex digits"),
    ],
)
def test_syncword_bad_values(capsys, args, message):
    code, out, err = run_bad(capsys, "syncword", *args)
    assert code == exitcodes.BAD_INPUT and message in err and out == ""


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--width", "0", "--poly", "0x1"], "CRC width 0 out of range; allowed 1..64"),
        (["--width", "65", "--poly", "0x1"], "allowed 1..64"),
        (["--width", "8", "--poly", "0x1FF"], "poly 0x1FF does not fit in width 8"),
        (["--width", "8", "--poly", "0"], "has no +1 term"),
        (["--width", "8", "--poly", "zz"], "--poly 'zz' is not an integer"),
        (["--width", "8", "--poly", "0x07", "--data-bits", "0"], "data_bits 0 out of range"),
        (["--width", "8", "--poly", "0x03", "--koopman"], "must have its top bit (x^8) set"),
    ],
)
def test_crc_strength_bad_values(capsys, args, message):
    code, out, err = run_bad(capsys, "crc-strength", *args)
    assert code == exitcodes.BAD_INPUT and message in err and out == ""


# ---------------------------------------------------------------- emit (timer options)

@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--mcu-clock-hz", "0"], "allowed: an integer 1000..1000000000"),
        (["--timer-bits", "12"], "timer width 12 bits not allowed; allowed: 8, 16, 24, 32"),
        (["--prescalers", ""], "prescaler list is empty"),
        (["--prescalers", "0"], "prescaler 0 not allowed"),
        (["--tolerance-pct", "0"], "timing tolerance 0.0 not allowed"),
        (["--tolerance-pct", "nan"], "timing tolerance nan not allowed"),
        (["--mcu-clock-hz", "1000"], "no prescaler fits every duration in the timer"),
    ],
)
def test_emit_bad_timer_options(capsys, tmp_path, args, message):
    out_dir = tmp_path / "c"
    code, out, err = run_bad(capsys, "emit", HIVE, "-o", out_dir, *args)
    assert code == exitcodes.CODEGEN and message in err and out == ""
    assert not (out_dir / "hive_scale.h").exists()


def test_demo_empty_dir_refused_and_nothing_written(capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, _, err = run_bad(capsys, "demo", "--dir", "")
    assert code == exitcodes.BAD_INPUT and "--dir is empty" in err
    assert list(tmp_path.iterdir()) == []


def test_crc_strength_poly_with_leading_zero_explained(capsys):
    code, out, err = run_bad(capsys, "crc-strength", "--width", "8", "--poly", "07")
    assert code == exitcodes.BAD_INPUT and "leading zero" in err and "0x" in err
    assert out == ""


# ---------------------------------------------------------------- input shapes that once gave exit 70

def _one_short_line(err: str, limit: int = 400) -> None:
    """The error is one line and quotes no input whole."""
    assert err.count(": error: ") == 1 and len(err) < limit, err[:500]


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        ("zzz = " + "[" * 1000 + "]" * 1000, "nested too deeply"),
        ("zzz = " + "{a=" * 1000 + "1" + "}" * 1000, "nested too deeply"),
    ],
    ids=["array", "inline-table"],
)
def test_deep_toml_is_a_spec_error(capsys, tmp_path, extra, message):
    """Deep TOML nesting makes tomllib (Python 3.11 standard library) recurse past the
    interpreter's limit; that is the user's input, so exit 3, not 70. Common practice, no
    source."""
    spec = spec_with(tmp_path, "repeats = 3", "repeats = 3\n" + extra)
    code, _, err = run_bad(capsys, "check", spec)
    assert code == exitcodes.BAD_SPEC and message in err
    _one_short_line(err)


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ("repeats = 3", 'repeats = "3"', "frame.repeats: must be an integer, got str '3'"),
        ("width_bits = 12", 'width_bits = "12"', "width_bits: must be an integer, got str"),
        ("count = 4", 'count = "4"', "preamble.count: must be an integer, got str"),
        ("signed = true", 'signed = "yes"', "signed: must be true or false, got 'yes'"),
        ("scale = 0.1", 'scale = "0.1"', "scale: must be a number, got str '0.1'"),
    ],
)
def test_every_key_is_typed_the_same_way(capsys, tmp_path, old, new, message):
    """A quoted number is refused for every key, as a quoted boolean is (TOML 1.0.0 has
    typed integers, floats and booleans; a string is not one of them)."""
    code, _, err = run_bad(capsys, "check", spec_with(tmp_path, old, new))
    assert code == exitcodes.BAD_SPEC and message in err


LONG = "a" * 100_000


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ('name = "hive_scale"', f'name = "{LONG}"', "allowed at most 64 characters"),
        ('name = "hive_scale"', f'name = "{"n" * 300}"', "allowed at most 64 characters"),
        ('name = "manchester"', f'name = "{LONG}"', "unknown line code"),
        ('convention = "ieee"', f'convention = "{LONG}"', "must be one of"),
        ('model = "CRC-16/KERMIT"', f'model = "{LONG}"', "unknown CRC model"),
        ("repeats = 3", f"{LONG} = 3", "unknown key"),
        ("repeats = 3", "repeats = " + "9" * 5000, "a number is too long to read"),
        ("repeats = 3", "repeats = " + "9" * 400, "out of range"),
        ("gap_us = 8000", "gap_us = 1" + "0" * 400, "is too large"),
        ("value = 0x2DD4", "value = 0x" + "F" * 5000, "out of range"),
    ],
    ids=["frame-name", "frame-name-300", "line-code", "param", "crc", "key", "int5000",
         "int400", "float", "hex"],
)
def test_spec_messages_quote_a_short_excerpt(capsys, tmp_path, old, new, message):
    """A 100,000-character string or a 5,000-digit number is quoted as a short excerpt
    (Python's int-to-text limit of 4,300 digits, Python 3.11 documentation "Integer string
    conversion length limitation", must not turn into exit 70 either)."""
    code, _, err = run_bad(capsys, "check", spec_with(tmp_path, old, new))
    assert code == exitcodes.BAD_SPEC and message in err
    _one_short_line(err)


def _fields_text(n: int, width: int) -> str:
    return "".join(f'[[fields]]\nname = "f{k}"\nwidth_bits = {width}\n\n' for k in range(n))


def _with_fields(tmp_path: Path, n: int, width: int, repeats: int = 3) -> Path:
    i, j = HIVE_TEXT.index("[[fields]]"), HIVE_TEXT.index("[check]")
    p = tmp_path / "sized.toml"
    p.write_text((HIVE_TEXT[:i] + _fields_text(n, width) + HIVE_TEXT[j:])
                 .replace("repeats = 3", f"repeats = {repeats}"))
    return p


@pytest.mark.parametrize(
    ("n", "width", "repeats", "message"),
    [
        (5000, 8, 3, "fields: 5000 fields; allowed at most 128"),
        (129, 1, 3, "fields: 129 fields; allowed at most 128"),
        (128, 32, 1, "allowed at most 4096"),
        (100, 8, 30, "frame.repeats: 30 repeats of a 864-bit frame are 25920 bits; allowed at "
         "most 16384"),
    ],
)
def test_spec_size_limits_fail_fast(capsys, tmp_path, n, width, repeats, message):
    """The documented size limits (README, "Spec reference") refuse huge frames before any
    analysis runs, for check and stress alike. Common practice, no source."""
    import time

    spec = _with_fields(tmp_path, n, width, repeats)
    for argv in (["check", spec], ["stress", spec, "--frames", "50", "--workers", "1"]):
        t0 = time.perf_counter()
        code, _, err = run_bad(capsys, *argv)
        assert code == exitcodes.BAD_SPEC and message in err
        assert time.perf_counter() - t0 < 20  # was over a minute before the limits


def test_preamble_count_limit(capsys, tmp_path):
    code, _, err = run_bad(capsys, "check", spec_with(tmp_path, "count = 4", "count = 513"))
    assert code == exitcodes.BAD_SPEC and "preamble.count: 513 is out of range; allowed 0..512" in err


def test_spec_at_the_size_limit_is_accepted(capsys, tmp_path):
    """128 fields and a frame just under 4096 bits is valid (the limits are inclusive)."""
    spec = _with_fields(tmp_path, 128, 31, 1)  # 3968 + 32 + 16 + 16 = 4032 bits
    assert main(["check", str(spec), "--json"]) == 0
    capsys.readouterr()


# ---------------------------------------------------------------- check and emit agree

RESERVED_NAMES = ["main", "uint8_t", "errno", "size_t", "__x", "_", "NULL", "INT8_MAX",
                  "static", "lambda"]


@pytest.mark.parametrize("name", RESERVED_NAMES)
@pytest.mark.parametrize("where", ["frame", "field"])
def test_check_refuses_names_emit_refuses(capsys, tmp_path, name, where):
    """C99 6.4.1 (keywords), 7.1.3 (identifiers with a leading underscore are reserved),
    7.18 (stdint.h types and macros); the standard names main and errno: common practice, no
    source. check (exit 3) and emit's own rule (CodegenError) refuse the same names."""
    import dataclasses

    import ookframe
    from ookframe.codegen.model import check_names

    old = 'name = "hive_scale"' if where == "frame" else 'name = "hive"'
    code, _, err = run_bad(capsys, "check", spec_with(tmp_path, old, f'name = "{name}"'))
    assert code == exitcodes.BAD_SPEC and repr(name) in err
    spec, _ = ookframe.load_spec_and_defaults(HIVE)
    if where == "frame":
        bad = dataclasses.replace(spec, name=name)
    else:
        bad = dataclasses.replace(spec, fields=(dataclasses.replace(spec.fields[0], name=name),
                                                *spec.fields[1:]))
    with pytest.raises(ookframe.CodegenError):
        check_names(bad)


def test_field_names_equal_in_upper_case_are_refused(capsys, tmp_path):
    """Field names appear upper-cased in C macro names, so 'hive' and 'HIVE' collide."""
    code, _, err = run_bad(capsys, "check", spec_with(tmp_path, 'name = "weight_g"',
                                                      'name = "HIVE"'))
    assert code == exitcodes.BAD_SPEC and "duplicate field name 'HIVE'" in err


def test_check_warns_when_emit_would_refuse_the_gap(capsys, tmp_path):
    """A 0.01 µs gap is under one tick at every prescaler (0.08 ticks of 0.125 µs at 8 MHz /
    1; arithmetic). check passes with a warning that names emit and gives emit's own reason;
    emit then refuses with that reason. A 9 s gap, longer than one 16-bit timer period at any
    prescaler (70,312.5 ticks of 128 µs at 8 MHz / 1024 > 65,535), is split over several
    periods instead: no warning, and emit writes the header."""
    long_gap = spec_with(tmp_path, "gap_us = 8000", "gap_us = 9000000", name="long.toml")
    assert main(["check", str(long_gap)]) == 0
    assert "ookframe emit" not in capsys.readouterr().err
    assert main(["emit", str(long_gap), "-o", str(tmp_path / "long")]) == 0
    assert "sent as" in capsys.readouterr().out
    spec = spec_with(tmp_path, "gap_us = 8000", "gap_us = 0.01")
    assert main(["check", str(spec)]) == 0
    err = " ".join(capsys.readouterr().err.split())
    assert "warning: 'ookframe emit' with its default timer" in err
    reason = err.split("will refuse this spec: ", 1)[1]
    assert "repeat gap" in reason
    assert main(["check", str(spec), "--json"]) == 0
    import json

    assert "repeat gap" in json.loads(capsys.readouterr().out)["emit_refusal"]
    code, _, err = run_bad(capsys, "emit", spec, "-o", tmp_path / "c")
    assert code == exitcodes.CODEGEN and reason[:80] in err


def test_check_has_no_emit_warning_for_the_examples(capsys):
    for name in ("hive_scale", "gate_sensor", "tank_level"):
        assert main(["check", str(EXAMPLES / f"{name}.toml"), "--json"]) == 0
        cap = capsys.readouterr()
        assert "ookframe emit" not in cap.err


def test_emit_onto_a_plain_file(capsys, tmp_path):
    """-o names a folder; a plain file there is reported as such (not "File exists")."""
    f = tmp_path / "plain"
    f.write_text("keep\n")
    for target in (f, f / "sub"):
        code, _, err = run_bad(capsys, "emit", HIVE, "-o", target)
        assert code == exitcodes.EXISTS and f"{f} is a file, not a folder" in err
        assert "File exists" not in err
    assert f.read_text() == "keep\n"


# ---------------------------------------------------------------- captures

VCD_HEAD = ("$timescale {ts} $end\n$scope module m $end\n$var wire {size} ! a $end\n"
            "$upscope $end\n$enddefinitions $end\n")


def _vcd(body: str, ts: str = "1 ns", size: str = "1") -> bytes:
    return (VCD_HEAD.format(ts=ts, size=size) + body).encode()


BAD_SHAPES = [
    ("deep.json", b'{"levels":' + b"[" * 100_000 + b"]" * 100_000 + b',"durations_us":[]}',
     "nested too deeply"),
    ("bigint.json", b'{"levels":[0,1],"durations_us":[100,1180591620717411303424]}',
     "durations_us[1] is 1.18059e+21, longer than the 1e+12 µs allowed"),
    ("huge.json", b'{"levels":[0,1],"durations_us":[100,1' + b"0" * 400 + b"]}",
     "durations_us[1] <an integer of about 401 digits> is longer than"),
    ("digits.json", b'{"levels":[0,1],"durations_us":[100,' + b"1" * 5000 + b"]}",
     "a number is too long to read"),
    ("twod.json", b'{"levels":[[0,1],[1,0]],"durations_us":[[1,2],[3,4]]}',
     "levels[0] is [0, 1], must be 0 or 1"),
    ("ragged.json", b'{"levels":[0,1],"durations_us":[[1,2],3]}',
     "durations_us[0] is [1, 2], must be a number"),
    ("ragged2.json", b'{"levels":[[0],1],"durations_us":[1,3]}', "levels[0] is [0]"),
    ("bool.json", b'{"levels":[true,0],"durations_us":[1,3]}', "levels[0] is True"),
    ("big.csv", b"level,duration_us\n0,250\n1,1e300\n",
     "big.csv:3: duration_us is 1e+300, longer than the 1e+12 µs allowed"),
    ("bigl.csv", b"level,duration_us\n" + b"0,250\n1,500\n" * 1000 + b"1,1e300\n",
     "bigl.csv:2002: duration_us is 1e+300"),
    ("stamp.vcd", _vcd("#0\n0!\n#100\n1!\n#18446744073709551616\n0!\n"),
     "timestamp '#18446744073709551616' is above 2^63 - 1"),
    ("scale.vcd", _vcd("#0\n0!\n#100\n1!\n#200\n", ts="1" + "0" * 400 + " ns"),
     "expected a magnitude 1..1000"),
    ("digits.vcd", _vcd("#0\n0!\n#" + "1" * 5000 + "\n0!\n"), "is above 2^63 - 1"),
    ("size.vcd", _vcd("#0\n0!\n", size="1" * 5000), "malformed $var"),
    ("scale5000.vcd", _vcd("#0\n0!\n", ts="1" * 5000 + " ns"), "$timescale"),
    ("long.vcd", _vcd("#0\n0!\n#100\n1!\n#9223372036854775807\n", ts="1000 s"),
     "longer than the 1e+12 µs allowed"),
    ("hdr.csv", b"x" * 10_000_000 + b"\n0,1\n", "(10,000,000 characters)"),
    ("stamp10m.vcd", _vcd("#0\n0!\n#" + "9" * 10_000_000 + "\n"), "(10,000,001 characters)"),
    ("row.csv", b"level,duration_us\n0,250," + b"7" * 1_000_000 + b"\n", "expected 2 values"),
]


@pytest.mark.parametrize(("name", "data", "message"), BAD_SHAPES, ids=[c[0] for c in BAD_SHAPES])
def test_decode_rejects_bad_shapes(capfd, tmp_path, name, data, message):
    """Each input shape once ended in exit 70 or echoed the input whole; now exit 4 with a
    one-line message and no numpy warning on stderr. RFC 8259 (JSON), IEEE 1364-2005 clause
    18 (VCD timestamps are unsigned integers; $timescale magnitudes 1, 10, 100)."""
    cap = tmp_path / name
    cap.write_bytes(data)
    code = main(["decode", str(HIVE), str(cap)])
    got = capfd.readouterr()
    err = " ".join(got.err.split())
    assert code == exitcodes.BAD_INPUT, err[:300]
    assert message in err and got.out == ""
    assert "Warning" not in err and "Traceback" not in err
    _one_short_line(err)


def test_vcd_with_many_signals_lists_a_few(capsys, tmp_path):
    vars_ = "".join(f"$var wire 1 s{i} sig{i} $end\n" for i in range(20_000))
    cap = tmp_path / "many.vcd"
    cap.write_text("$timescale 1 ns $end\n$scope module m $end\n" + vars_
                   + "$upscope $end\n$enddefinitions $end\n#0\n")
    code, _, err = run_bad(capsys, "decode", HIVE, cap)
    assert code == exitcodes.BAD_INPUT and "(20000 in all)" in err
    _one_short_line(err)


def test_capture_with_a_huge_pulse_inside_a_frame(capfd, tmp_path):
    """A real transmission with one 1e300 µs pulse: exit 4 naming the line, not exit 70 and
    no numpy RuntimeWarning leaking to stderr."""
    enc = tmp_path / "enc.csv"
    assert main(["encode", str(HIVE), "--format", "csv", "-o", str(enc)]) == 0
    lines = enc.read_text().splitlines()
    lines.insert(len(lines) // 2, "1,1e300")
    enc.write_text("\n".join(lines) + "\n")
    capfd.readouterr()
    code = main(["decode", str(HIVE), str(enc)])
    err = capfd.readouterr().err
    assert code == exitcodes.BAD_INPUT and "longer than the 1e+12 µs allowed" in err
    assert "RuntimeWarning" not in err


# ---------------------------------------------------------------- lenient parsing, decided

def _hive_capture(tmp_path: Path, fmt: str) -> Path:
    p = tmp_path / f"hive.{fmt}"
    assert main(["encode", str(HIVE), "--format", fmt, "-o", str(p)]) == 0
    return p


def test_csv_level_written_as_float_is_read_by_value(tmp_path, capsys):
    """README: a CSV level is any number equal to 0 or 1, so `1.0` reads as 1 and decodes the
    same frames; `2.0` or `0.5` are refused. Project decision, common practice, no source."""
    import ookframe

    p = _hive_capture(tmp_path, "csv")
    capsys.readouterr()
    floaty = tmp_path / "floaty.csv"
    text = p.read_text().splitlines()
    floaty.write_text("\n".join([text[0]] + [r.replace("1,", "1.0,", 1) if r.startswith("1,")
                                             else r for r in text[1:]]) + "\n")
    assert ookframe.read_capture(floaty) == ookframe.read_capture(p)
    for bad in ("2.0", "0.5", "nan"):
        q = tmp_path / "bad.csv"
        q.write_text(f"level,duration_us\n0,250\n{bad},500\n")
        with pytest.raises(ookframe.CaptureError, match=r"bad.csv:3: level .* must be 0 or 1"):
            ookframe.read_capture(q)


@pytest.mark.parametrize(
    ("version", "ok"),
    [("1", True), ("1.0", True), ("1e0", True), ("true", False), ('"1"', False), ("2", False)],
)
def test_json_version_is_read_by_value(tmp_path, version, ok):
    """RFC 8259 section 6: JSON numbers have no int/float distinction, so 1.0 is version 1;
    `true` is not a number (section 3) and is refused, as are strings."""
    import ookframe

    p = tmp_path / "v.json"
    p.write_text(f'{{"version":{version},"levels":[0,1.0],"durations_us":[100,200.5]}}')
    if ok:
        train = ookframe.read_capture(p)
        assert train.levels.tolist() == [0, 1] and train.durations_us.tolist() == [100, 200.5]
    else:
        with pytest.raises(ookframe.CaptureError, match="this reader knows version 1"):
            ookframe.read_capture(p)


def test_json_duplicate_keys_are_refused(tmp_path):
    """RFC 8259 section 4: names within an object SHOULD be unique; with duplicates the
    behaviour is unpredictable, so ookframe refuses them instead of keeping the last."""
    import ookframe

    p = tmp_path / "dup.json"
    p.write_text('{"levels":[0,1],"durations_us":[1,2],"levels":[1,0]}')
    with pytest.raises(ookframe.CaptureError, match="key 'levels' is given twice"):
        ookframe.read_capture(p)


@pytest.mark.parametrize(
    ("timescale", "tick_us"),
    [("7 ps", 7e-6), ("1000 ns", 1.0), ("1000ns", 1.0), ("100 us", 100.0), ("1 s", 1e6)],
)
def test_vcd_nonstandard_magnitudes_read_exactly(tmp_path, timescale, tick_us):
    """IEEE 1364-2005 clause 18.2.3.6 allows magnitudes 1, 10 and 100; ookframe also reads
    1..1000 (README), scaling durations exactly: 250 ticks of 7 ps are 0.00175 µs."""
    import ookframe

    p = tmp_path / "m.vcd"
    p.write_bytes(_vcd("#0\n1!\n#250\n0!\n#1000\n", ts=timescale))
    train = ookframe.read_capture(p)
    assert train.levels.tolist() == [1, 0]
    assert train.durations_us.tolist() == pytest.approx([250 * tick_us, 750 * tick_us],
                                                         rel=1e-12)


@pytest.mark.parametrize("timescale", ["1001 ns", "0 ns", "10000 ps"])
def test_vcd_magnitudes_outside_the_range_are_refused(tmp_path, timescale):
    import ookframe

    p = tmp_path / "m.vcd"
    p.write_bytes(_vcd("#0\n1!\n#250\n", ts=timescale))
    with pytest.raises(ookframe.CaptureError, match=r"expected a magnitude 1..1000"):
        ookframe.read_capture(p)


# ---------------------------------------------------------------- Python API argument types

def test_api_type_errors_name_the_parameter(tmp_path):
    """Public functions check their arguments at the entry (STYLE: "public functions
    validate inputs once"; common practice, no source)."""
    import numpy as np

    import ookframe

    spec, values = ookframe.load_spec_and_defaults(HIVE)
    train = ookframe.encode(spec, values)
    rng = np.random.default_rng(1)
    ideal = ookframe.get_preset("ideal")
    cases = [
        (lambda: ookframe.encode(spec, [1, 2]), "values must be a Mapping, got list"),
        (lambda: ookframe.encode(str(HIVE), values), "spec must be a FrameSpec, got the path"),
        (lambda: ookframe.encode(HIVE, values), "spec must be a FrameSpec, got the path"),
        (lambda: ookframe.frame_bits({}, values), "spec must be a FrameSpec, got dict"),
        (lambda: ookframe.apply_channel(train, None, rng), "channel must be a ChannelSpec, got None"),
        (lambda: ookframe.apply_channel([1, 2], ideal, rng), "train must be a PulseTrain, got list"),
        (lambda: ookframe.apply_channel(train, ideal, 7), "rng must be a Generator, got int"),
        (lambda: ookframe.random_values(spec, None), "rng must be a Generator, got None"),
        (lambda: ookframe.run_stress(spec, None, 10), "channel must be a ChannelSpec"),
        (lambda: ookframe.run_stress(spec, ideal, 2.5), "n_frames must be an int, got float"),
        (lambda: ookframe.run_noise("x.toml", 1.0), "spec must be a FrameSpec"),
        (lambda: ookframe.emit_header(str(HIVE)), "spec must be a FrameSpec"),
        (lambda: ookframe.emit_header(spec, 8), "target must be a TimerTarget, got int"),
        (lambda: ookframe.write_capture(tmp_path / "x.csv", [1]), "train must be a PulseTrain"),
        (lambda: ookframe.read_capture(None), "path must be a str or PathLike, got None"),
        (lambda: ookframe.load_spec(3), "path must be a str or PathLike, got int"),
        (lambda: ookframe.spec_from_dict([1]), "doc must be a Mapping, got list"),
        (lambda: ookframe.frame_layout(None), "spec must be a FrameSpec, got None"),
        (lambda: ookframe.get_line_code("nrz"), "spec must be a LineCodeSpec, got str"),
        (lambda: ookframe.make_check("crc"), "spec must be a CheckSpec, got str"),
        (lambda: ookframe.lfsr_bits(spec.whitening, 2.0), "n_bits must be an int, got float"),
        (lambda: ookframe.get_preset(None), "name must be a str, got None"),
    ]
    for call, message in cases:
        with pytest.raises(TypeError) as info:
            call()
        assert message in str(info.value), (message, str(info.value))
    assert not (tmp_path / "x.csv").exists()
