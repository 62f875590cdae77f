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
    assert code == exitcodes.BAD_INPUT and "afile" in err


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
