"""Fuzz campaign over spec files, captures and command-line options (Hypothesis).

The property is the CLI contract of README ("errors are one line naming the problem, with a
non-zero exit code": 2 usage, 3 bad spec, 4 bad input, 5 code generation, 6 output exists):
whatever the input, the command ends with one of those codes, never with 70 (internal error),
a traceback or a numpy warning, and an error is one short line. Common practice, no source.

CI runs a few dozen derandomized examples per target (a few seconds). A longer, random run:
``OOKFRAME_FUZZ_EXAMPLES=2000 python -m pytest tests/test_fuzz.py``. Failures found are
pinned with ``@example`` here or as a case in ``tests/test_cli_badinput.py``.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import tempfile
import warnings
from pathlib import Path

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from ookframe.cli.main import main
from ookframe.demo import example_names, example_text

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = EXAMPLES / "hive_scale.toml"
LONG_RUN = "OOKFRAME_FUZZ_EXAMPLES" in os.environ


def fuzz_settings(default_examples: int) -> settings:
    """Few derandomized examples in CI; OOKFRAME_FUZZ_EXAMPLES random ones when set."""
    n = int(os.environ.get("OOKFRAME_FUZZ_EXAMPLES", default_examples))
    return settings(max_examples=n, deadline=None, derandomize=not LONG_RUN,
                    database=None if not LONG_RUN else settings.default.database,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                           HealthCheck.filter_too_much])


def run_cli(argv: list[str], allowed: set[int]) -> tuple[int, str]:
    """Run the CLI in-process; return (exit code, stderr) after checking the contract."""
    out, err = io.StringIO(), io.StringIO()
    with warnings.catch_warnings(record=True) as caught, contextlib.redirect_stdout(out), \
            contextlib.redirect_stderr(err):
        warnings.simplefilter("always")
        code = main(argv)
    text = err.getvalue()
    assert code in allowed, (code, text[:500])
    assert "Traceback" not in text and "internal error" not in text, text[:500]
    assert not [w for w in caught if issubclass(w.category, RuntimeWarning)], \
        [str(w.message) for w in caught]
    if code not in (0, 1, 2):  # argparse (2) prints its usage on the lines before its error
        errors = [ln for ln in text.splitlines() if ": error: " in ln]
        assert len(errors) == 1 and len(errors[0]) < 600, text[:600]
    return code, text


def scratch(suffix: str, data: bytes | str) -> Path:
    """Write ``data`` to a fresh temporary file; the caller removes it."""
    fd, name = tempfile.mkstemp(suffix=suffix)
    with os.fdopen(fd, "wb") as fh:
        fh.write(data.encode("utf-8", "surrogatepass") if isinstance(data, str) else data)
    return Path(name)


# ---------------------------------------------------------------- TOML values and spec files

_ints = st.one_of(st.integers(-(2**70), 2**70), st.sampled_from(["0x2DD4", "0b101", "1_000",
                                                                  "9" * 400, "-0", "+7"]))
_floats = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(
    lambda f: "nan" if f != f else ("inf" if f == float("inf") else
                                    "-inf" if f == float("-inf") else repr(f))),
    st.sampled_from(["1e300", "1e-300", "0.0", "-0.0", "1" + "0" * 400 + ".0"]))
_strings = st.one_of(st.text(max_size=12), st.sampled_from(
    ["main", "uint8_t", "_", "__x", "manchester", "nrz", "CRC-16/KERMIT", "msb", "little",
     "yes", "3", "a" * 300])).map(json.dumps)
_scalars = st.one_of(_ints.map(str), _floats, _strings, st.sampled_from(["true", "false"]))
toml_values = st.recursive(
    _scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=3).map(lambda xs: "[" + ", ".join(xs) + "]"),
        st.dictionaries(st.sampled_from(["a", "name", "width_bits", "kind"]), inner,
                        max_size=2).map(
            lambda d: "{" + ", ".join(f"{k} = {v}" for k, v in d.items()) + "}")),
    max_leaves=6,
)
KEYS = ["name", "bit_rate_bps", "unit_us", "bit_order", "byte_order", "repeats", "gap_us",
        "convention", "pattern", "pattern_bits", "count", "value", "length_bits",
        "max_errors", "width_bits", "signed", "scale", "offset", "default", "role", "kind",
        "max_len_bytes", "model", "covers", "poly", "width", "init", "seed", "refin",
        "glitch_fraction", "tolerance", "loop_gain", "bogus"]


@st.composite
def mutated_specs(draw) -> str:
    """An example spec with a few lines replaced, inserted or deleted."""
    lines = example_text(draw(st.sampled_from(example_names()))).splitlines()
    for _ in range(draw(st.integers(1, 3))):
        i = draw(st.integers(0, len(lines) - 1))
        op = draw(st.sampled_from(["value", "insert", "delete", "header"]))
        key = draw(st.sampled_from(KEYS))
        if op == "value" and "=" in lines[i]:
            lines[i] = lines[i].split("=", 1)[0] + "= " + draw(toml_values)
        elif op == "insert":
            lines.insert(i, f"{key} = {draw(toml_values)}")
        elif op == "delete":
            del lines[i]
        else:
            lines.insert(i, draw(st.sampled_from(
                ["[frame]", "[[fields]]", "[check]", "[whitening]", "[decoder]", "[sync]",
                 "[preamble]", "[line_code]", "[nope]"])))
    return "\n".join(lines) + "\n"


@fuzz_settings(25)
@given(text=mutated_specs())
@example(text=HIVE.read_text().replace("repeats = 3", 'repeats = "3"'))
@example(text=HIVE.read_text().replace("repeats = 3", "repeats = 3\nx = " + "[" * 999 + "]" * 999))
@example(text=HIVE.read_text().replace('name = "hive_scale"', 'name = "main"'))
def test_fuzz_check_spec(text):
    path = scratch(".toml", text)
    try:
        run_cli(["check", str(path)], {0, 3})
    finally:
        path.unlink()


# ---------------------------------------------------------------- captures

_cells = st.one_of(
    st.sampled_from(["0", "1", "1.0", "0e0", "2", "-1", "nan", "inf", "1e300", "1e-320", "",
                     " ", "250", "500.5", "0x10", "9" * 30, "1" * 5000, "#"]),
    st.floats(allow_nan=True).map(repr), st.integers(-(2**80), 2**80).map(str),
    st.text(max_size=6))


@st.composite
def csv_captures(draw) -> str:
    header = draw(st.sampled_from(["level,duration_us", "level, duration_us", "x", ""]))
    rows = draw(st.lists(st.lists(_cells, min_size=1, max_size=3).map(",".join), max_size=8))
    return "\n".join([header, *rows]) + "\n"


json_values = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(-(2**80), 2**80),
              st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=6)),
    lambda inner: st.one_of(st.lists(inner, max_size=4),
                            st.dictionaries(st.text(max_size=4), inner, max_size=3)),
    max_leaves=12,
)


@st.composite
def json_captures(draw) -> str:
    n = draw(st.integers(0, 6))
    levels = draw(st.one_of(st.lists(st.sampled_from([0, 1, 1.0, 2, True, "1"]), min_size=n,
                                     max_size=n), json_values))
    durations = draw(st.one_of(
        st.lists(st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                           st.integers(-(2**80), 2**80)), min_size=n, max_size=n),
        json_values))
    doc: dict[str, object] = {"levels": levels, "durations_us": durations}
    for key in draw(st.lists(st.sampled_from(["format", "version", "comment", "extra"]),
                             max_size=2)):
        doc[key] = draw(st.one_of(json_values, st.sampled_from([1, 1.0, "ookframe-pulses"])))
    text = json.dumps(doc)
    if draw(st.booleans()):  # a raw edit: truncation or a duplicated key
        text = draw(st.sampled_from([text[: len(text) // 2], text[:-1] + ', "levels": []}',
                                     text]))
    return text


_vcd_body = st.sampled_from(
    ["#0", "#100", "#5", "#18446744073709551616", "#" + "1" * 30, "#abc", "#-3", "0!", "1!",
     "x!", "z!", "b1 !", "b0101 !", "r1.5 !", "1?", "$dumpvars", "$end", "$comment hi $end",
     "$dumpoff", "junk", "b1"])


@st.composite
def vcd_captures(draw) -> str:
    ts = draw(st.sampled_from(["1 ns", "10 us", "100ps", "7 ps", "1000 ns", "1001 ns", "0 ns",
                               "1 parsec", "1" + "0" * 40 + " s", "", "1 s"]))
    size = draw(st.sampled_from(["1", "1", "4", "0", "99999999999", "x"]))
    head = [f"$timescale {ts} $end", "$scope module m $end", f"$var wire {size} ! a $end"]
    if draw(st.booleans()):
        head.append('$var wire 1 " b $end')
    head += ["$upscope $end", "$enddefinitions $end"]
    if draw(st.booleans()):
        del head[draw(st.integers(0, len(head) - 1))]
    body = draw(st.lists(_vcd_body, max_size=12))
    return "\n".join(head + body) + "\n"


@fuzz_settings(30)
@given(kind_text=st.one_of(csv_captures().map(lambda t: (".csv", t)),
                           json_captures().map(lambda t: (".json", t)),
                           vcd_captures().map(lambda t: (".vcd", t))))
@example(kind_text=(".csv", "level,duration_us\n0,250\n1,1e300\n"))
@example(kind_text=(".json", '{"levels":[0,1],"durations_us":[100,1180591620717411303424]}'))
@example(kind_text=(".json", '{"levels":[0,1],"durations_us":[[1,2],3]}'))
@example(kind_text=(".vcd", "$timescale 1 ns $end\n$var wire 1 ! a $end\n$enddefinitions $end\n"
                            "#0\n0!\n#18446744073709551616\n1!\n"))
def test_fuzz_decode_capture(kind_text):
    suffix, text = kind_text
    path = scratch(suffix, text)
    try:
        run_cli(["decode", str(HIVE), str(path)], {0, 4})
    finally:
        path.unlink()


# ---------------------------------------------------------------- command-line options

_option_values = st.one_of(
    st.sampled_from(["0", "1", "-1", "8", "16", "1e300", "nan", "inf", "0x10", "", "abc",
                     "1,8,64", "1,,8", "0,0", "65537", "9" * 40, "hive=3", "hive=1e400",
                     "weight_g=abc", "nofield=1", "brood_temp_c=-300", "0300a12215a6",
                     "zz", "bits", "pulses", "csv", "json", "vcd", "table16", "bitwise"]),
    st.text(max_size=8))
COMMAND_OPTIONS = {
    "check": ["--ber", "--json"],
    "encode": ["--set", "--payload", "--format"],
    "emit": ["--mcu-clock-hz", "--timer-bits", "--prescalers", "--crc-impl", "--tolerance-pct",
             "--json"],
    "airtime": ["--interval-s", "--nodes", "--power-mw", "--tx-current-ma", "--supply-v",
                "--battery-mah", "--region"],
}
FLAGS = {"--json"}


@st.composite
def command_lines(draw) -> list[str]:
    command = draw(st.sampled_from(sorted(COMMAND_OPTIONS)))
    argv = [command, str(HIVE)]
    for opt in draw(st.lists(st.sampled_from(COMMAND_OPTIONS[command]), max_size=3)):
        argv.append(opt)
        if opt not in FLAGS:
            argv.append(draw(_option_values))
    if command == "airtime" and "--interval-s" not in argv:
        argv += ["--interval-s", "60"]
    return argv


@fuzz_settings(30)
@given(argv=command_lines())
@example(argv=["emit", str(HIVE), "--timer-bits", "12"])
@example(argv=["airtime", str(HIVE), "--interval-s", "inf"])  # found by a long run
@example(argv=["encode", str(HIVE), "--set", "hive=1e400"])
def test_fuzz_command_options(argv):
    with tempfile.TemporaryDirectory() as out_dir:
        if argv[0] == "emit":
            argv = [*argv, "-o", out_dir]
        run_cli(argv, {0, 1, 2, 3, 4, 5, 6})
