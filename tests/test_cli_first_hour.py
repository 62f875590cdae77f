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


def test_decode_format_overrides_extension(capsys, tmp_path):
    """A CSV capture saved as .txt decodes with --format csv; without it the extension is
    refused (exit 4); a wrong --format is a usage error (exit 2)."""
    cap = tmp_path / "capture.txt"
    assert run(capsys, "encode", HIVE, "--format", "csv", "-o", str(cap))[0] == 0
    code, _, err = run(capsys, "decode", HIVE, str(cap))
    assert code == exitcodes.BAD_INPUT and "extension" in err
    code, out, _ = run(capsys, "decode", HIVE, str(cap), "--format", "csv", "--json")
    assert code == 0 and len(json.loads(out)) == 3
    code, _, _ = run(capsys, "decode", HIVE, str(cap), "--format", "mp3")
    assert code == exitcodes.USAGE
    # a JSON capture named .csv is read as JSON when told so
    cap_json = tmp_path / "capture.csv"
    assert run(capsys, "encode", HIVE, "--format", "json", "-o", str(cap_json))[0] == 0
    code, out, _ = run(capsys, "decode", HIVE, str(cap_json), "--format", "json", "--json")
    assert code == 0 and len(json.loads(out)) == 3


def test_decode_format_names_match_capture_registry():
    """--format's choices are the capture formats the readers register."""
    from ookframe.captures import FORMATS
    from ookframe.cli.cmd_decode import CAPTURE_FORMATS

    assert set(CAPTURE_FORMATS) == set(FORMATS)


def test_decoded_frames_table_shows_units_time_check_and_quality(capsys, tmp_path, monkeypatch):
    """The frame table has one section per frame: number and time, check result, reception
    figures, and one row per field with its unit from the spec (hive_scale: weight_g in g,
    battery_v in V); the one-line `name=value, ...` form is gone. Values are the example's
    defaults (examples/hive_scale.toml)."""
    monkeypatch.setenv("COLUMNS", "80")
    cap = tmp_path / "f.csv"
    run(capsys, "encode", HIVE, "--format", "csv", "-o", str(cap))
    code, out, _ = run(capsys, "decode", HIVE, str(cap))
    assert code == 0
    lines = out.splitlines()
    assert max(len(line) for line in lines[1:]) <= 80  # the title names the (long) path
    assert lines[1].split() == ["frame", "reception", "field", "value", "unit"]
    assert "=" not in out
    rows = [line.split() for line in lines]
    assert ["#1", "at", "64.000", "ms", "clock", "+0.00", "%", "hive", "3"] in rows
    assert any(r[-3:] == ["weight_g", "41250", "g"] for r in rows)
    assert any(r[-3:] == ["battery_v", "3", "V"] for r in rows)
    assert sum(r[:2] == ["check", "pass"] for r in rows) == 3


def test_decode_json_output_is_stable(capsys, tmp_path):
    """The documented --json keys of a decoded frame stay as they were."""
    cap = tmp_path / "f.csv"
    run(capsys, "encode", HIVE, "--format", "csv", "-o", str(cap))
    frames = json.loads(run(capsys, "decode", HIVE, str(cap), "--json")[1])
    assert set(frames[0]) == {"fields", "payload_hex", "crc_ok", "start_us", "end_us",
                              "unit_us", "worst_deviation", "sync_errors", "corrected"}


def test_pulse_table_columns_add_up(capsys):
    """`encode --format pulses`: index, mark/space, start µs, duration µs, units. Each start
    is the sum of the durations before it, units = duration / unit (hive_scale: 250 µs,
    Manchester, so every pulse inside a frame is 1 or 2 units; the 8000 µs gap of 32 units
    merges with a frame's last space, examples/hive_scale.toml)."""
    code, out, _ = run(capsys, "encode", HIVE, "--format", "pulses")
    assert code == 0
    head, body = out.splitlines()[:2], out.splitlines()[2:]
    assert head[1].split() == ["#", "index", "level", "start_us", "duration_us", "units"]
    t = 0.0
    for k, line in enumerate(body):
        idx, level, start, dur, units = line.split()
        assert int(idx) == k and level in ("mark", "space")
        assert float(start) == pytest.approx(t, abs=1e-3)
        assert float(units) == pytest.approx(float(dur) / 250.0, abs=1e-3)
        t += float(dur)
    units = [float(line.split()[4]) for line in body]
    assert {u for u in units if u < 32} == {1.0, 2.0}
    gaps = [line.split()[1] for line in body if float(line.split()[4]) >= 32]
    assert gaps == ["space", "space"]  # the two gaps between the three copies
    levels = [line.split()[1] for line in body]
    assert all(a != b for a, b in zip(levels, levels[1:], strict=False))


def test_per_in_json_is_the_exact_ratio_of_counts(capsys):
    """`per` is failures / frames computed from the integer counts, so its JSON text is the
    shortest decimal of that ratio (e.g. 4 / 10000 prints 0.0004, not 1 - 0.9996 =
    0.00039999999999995595: IEEE 754 rounding, Python float repr)."""
    from fractions import Fraction

    code, out, _ = run(capsys, "stress", HIVE, "--frames", "300", "--workers", "1",
                       "--preset", "edge-of-range-superregen", "--jitter-us", "40", "--json")
    assert code == 0
    d = json.loads(out)
    fails = d["frames"] - d["ok"]
    assert 0 < fails < d["frames"]  # a PER that is not 0 or 1, so rounding could show
    assert d["per"] == float(Fraction(fails, d["frames"]))
    assert repr(d["per"]) == repr(fails / d["frames"])


def test_per_float_of_counts_has_no_subtraction_noise():
    """4 failures in 10000: the ratio of counts is 0.0004 exactly as printed (IEEE 754
    correctly rounded division), the old 1 - ok / frames is not."""
    from ookframe.stress.runner import Counts, _result

    r = _result(_hive_spec(), _ideal(), 0, Counts(frames=10000, ok=9996), 500, 0.0, 1)
    assert json.loads(json.dumps(r.per)) == 0.0004 and repr(r.per) == "0.0004"
    assert repr(1 - 9996 / 10000) != "0.0004"  # the noise this replaces


def _hive_spec():
    from ookframe import load_spec

    return load_spec(HIVE)


def _ideal():
    from ookframe import get_preset

    return get_preset("ideal")


def test_progress_on_forces_the_bar_without_a_terminal(capsys):
    """--progress on draws the bar on stderr even when stderr is a pipe (here: captured);
    auto draws nothing there; the result on stdout is the same JSON either way."""
    code, out_on, err_on = run(capsys, "stress", HIVE, "--frames", "40", "--chunk-frames", "10",
                               "--workers", "1", "--preset", "ideal", "--progress", "on")
    assert code == 0
    assert "stress" in err_on and "\x1b[" in err_on  # the bar, drawn with terminal controls
    code, out_auto, err_auto = run(capsys, "stress", HIVE, "--frames", "40", "--chunk-frames",
                                   "10", "--workers", "1", "--preset", "ideal")
    assert code == 0 and "\x1b[" not in err_auto


def test_interrupted_stress_reports_partial_counts(capsys, monkeypatch):
    """Ctrl-C after two chunks: the JSON result counts those 2 x 10 transmissions, is marked
    interrupted, and the exit status is 130 (128 + SIGINT, POSIX shell convention)."""
    import ookframe.stress.runner as runner

    real = runner.run_chunk
    calls = []

    def chunk_then_stop(*a):
        calls.append(1)
        if len(calls) == 3:
            raise KeyboardInterrupt
        return real(*a)

    monkeypatch.setattr(runner, "run_chunk", chunk_then_stop)
    code, out, err = run(capsys, "stress", HIVE, "--frames", "100", "--chunk-frames", "10",
                         "--workers", "1", "--preset", "ideal", "--json")
    assert code == exitcodes.INTERRUPTED == 130
    d = json.loads(out)
    assert d["interrupted"] is True and d["frames"] == 20 and d["ok"] == 20
    assert "interrupted after 20 of 100" in err
    calls.clear()
    code, out, _ = run(capsys, "stress", HIVE, "--frames", "100", "--chunk-frames", "10",
                       "--workers", "1", "--preset", "ideal")
    assert code == 130 and "INTERRUPTED" in out


def test_sigint_to_a_pooled_stress_run_exits_130_without_traceback(tmp_path):
    """A real SIGINT to `ookframe stress --workers 2` (while chunks are still being
    submitted): the pool workers leave it to the parent, which stops between completions,
    prints the partial JSON result and exits 130 within the timeout; no traceback."""
    import signal
    import subprocess
    import sys
    import threading
    import time

    cmd = [sys.executable, "-c", "import sys; from ookframe.cli.main import main; "
           "sys.exit(main(sys.argv[1:]))", "stress", HIVE, "--frames", "10000000",
           "--chunk-frames", "20", "--workers", "2", "--json", "--progress", "on"]
    p = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                         preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    seen: list[str] = []
    reader = threading.Thread(target=lambda: seen.extend(iter(lambda: p.stderr.read(1), "")))
    reader.start()
    deadline = time.monotonic() + 120
    while "stress" not in "".join(seen) and time.monotonic() < deadline:  # the bar is up
        time.sleep(0.2)
    time.sleep(2)
    p.send_signal(signal.SIGINT)
    try:
        p.wait(timeout=120)  # a lock left held inside concurrent.futures would hang here
    except subprocess.TimeoutExpired:
        p.kill()
        raise
    out = p.stdout.read()
    reader.join(timeout=10)
    err = "".join(seen)
    assert p.returncode == 130, err
    assert "Traceback" not in err
    assert out.startswith("{"), (out, err[-400:])
    d = json.loads(out)
    assert d["interrupted"] is True and d["frames"] < 10000000, err


def test_margin_unknown_impairment_is_a_usage_error(capsys):
    """A misspelt --impairments name is a bad command line (exit 2, README's exit codes),
    with a close-match suggestion."""
    code, _, err = run(capsys, "margin", HIVE, "--impairments", "clock_error")
    assert code == exitcodes.USAGE
    assert "did you mean 'clock_error_pct'" in err and "Traceback" not in err


def _printed(renderable, width: int = 80) -> list[str]:
    from rich.console import Console

    c = Console(width=width, record=True, file=open("/dev/null", "w"))  # noqa: SIM115
    c.print(renderable)
    return c.export_text().splitlines()


def test_margin_table_keeps_names_and_figures_whole_at_80_columns():
    """At 80 columns every impairment name and figure is printed whole on its row (the
    longest name, glitch_rate_per_ms, included); only the note may wrap."""
    from ookframe import load_spec
    from ookframe.cli.cmd_margin import margin_table
    from ookframe.stress.margin import run_margin

    spec = load_spec(HIVE)
    r = run_margin(spec, 0.1, impairments=["glitch_rate_per_ms", "drift_pct_per_s"],
                   n_frames=60, resolution=0.3, seed=1, workers=1)
    lines = _printed(margin_table(spec.name, 0.1, r))
    assert max(len(x.rstrip()) for x in lines) <= 80
    names = [x.split() for x in lines if x.split() and x.split()[0] in
             ("glitch_rate_per_ms", "drift_pct_per_s")]
    assert [(w[0], w[1]) for w in names] == [(row.impairment, f"{row.limit:.4g}")
                                             for row in r.rows]
    assert "…" not in "".join(lines)


@pytest.mark.parametrize("n_bits", [16, 24])
def test_syncword_bits_column_is_whole_at_80_columns(capsys, monkeypatch, n_bits):
    """At 80 columns the bits column shows every bit of each word (in byte groups, wrapped
    at group boundaries) and equals the word's hex (the binary and hex of one integer)."""
    monkeypatch.setenv("COLUMNS", "80")
    code, out, _ = run(capsys, "syncword", "--bits", str(n_bits), "--top", "3",
                       "--bit-rate-bps", "2000")
    assert code == 0 and "…" not in out
    table = out.split("min distance:")[0].splitlines()
    assert max(len(x.rstrip()) for x in table) <= 80
    rows: list[list[str]] = []
    for x in table[4:]:  # after title, blank, two header lines: a row and its wrapped bits
        if x.split() and x.split()[0].startswith("0x"):
            rows.append(x.split())
        elif rows:
            rows[-1] += x.split()
    assert len(rows) == 3
    for r in rows:
        bits = "".join(g for g in r[1:] if set(g) <= {"0", "1"} and len(g) == 8)
        assert len(bits) == n_bits and int(bits, 2) == int(r[0], 16)


def test_psd_plot_marks_the_bandwidth_check_and_airtime_report(capsys, tmp_path):
    """One function (analysis.spectrum.bandwidth_hz) gives the 99 % bandwidth: the PSD
    plot's marker line, `check --json` and `airtime --json` carry the same number."""
    from ookframe import load_spec, plots
    from ookframe.analysis.spectrum import bandwidth_hz

    spec = load_spec(HIVE)
    import numpy as np

    fig = plots.psd_figure(spec, np.random.default_rng(12345))
    marker_khz = fig.axes[0].lines[1].get_xdata()[0]
    b = bandwidth_hz(spec)
    assert marker_khz * 1e3 == pytest.approx(b, rel=1e-12)
    check = json.loads(run(capsys, "check", HIVE, "--json")[1])
    air = json.loads(run(capsys, "airtime", HIVE, "--interval-s", "60", "--json")[1])
    assert check["bandwidth_hz"] == pytest.approx(b, rel=1e-12)
    assert air["bandwidth_hz"] == pytest.approx(b, rel=1e-12)
    code, _, err = run(capsys, "plot", HIVE, "--what", "psd", "-o", str(tmp_path / "p.png"))
    assert code == 0 and f"99 % bandwidth {b / 1e3:.1f} kHz" in err


README = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")


def _subparsers() -> dict:
    import argparse

    from ookframe.cli.main import build_parser

    parser, _ = build_parser()
    action = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return action.choices


def _option(sub, dest: str):
    return next(a for a in sub._actions if a.dest == dest)


def test_preset_defaults_agree_with_readme():
    """The README names each command's --preset default; the parsers use exactly those."""
    import re

    subs = _subparsers()
    text = " ".join(README.split())
    m = re.search(r"`stress`, `noise` and `vectors` start from `([\w-]+)`.*?`sweep` and "
                  r"`margin` start from `([\w-]+)`", text)
    assert m, "README states the --preset defaults"
    def preset_default(cmd: str) -> str:  # --preset is None until given (--channel FILE is
        # the other way to choose a channel); the command's default preset is kept apart
        return _option(subs[cmd], "preset").default or subs[cmd].get_default("default_preset")

    for cmd in ("stress", "noise", "vectors"):
        assert preset_default(cmd) == m.group(1)
    for cmd in ("sweep", "margin"):
        assert preset_default(cmd) == m.group(2)
        assert f"default: {m.group(2)}" in subs[cmd].format_help()


@pytest.mark.parametrize("cmd", ["stress", "sweep", "margin", "vectors"])
def test_impairment_help_gives_meaning_unit_and_default(cmd):
    """Each impairment option says more than its own name, names a unit or range, and shows
    the default preset's value in brackets (values from ookframe.channel.presets)."""
    from dataclasses import fields

    from ookframe.channel import ChannelSpec, get_preset

    sub = _subparsers()[cmd]
    preset = get_preset(_option(sub, "preset").default or sub.get_default("default_preset"))
    for f in fields(ChannelSpec):
        text = _option(sub, f.name).help % {}
        assert text.lower().replace(" ", "_") != f.name and len(text) > len(f.name) + 10
        assert any(u in text for u in ("µs", "%", "ms", "0..1", "gauss")), text
        value = getattr(preset, f.name)
        assert text.endswith(f"[{value:g}]" if f.name != "jitter_kind" else f"[{value}]")


@pytest.mark.parametrize("cmd, default", [("stress", 10000), ("sweep", 2000)])
def test_frames_help_states_its_default(cmd, default):
    """--frames names its default in the help (and it is the parser's default)."""
    opt = _option(_subparsers()[cmd], "frames")
    assert opt.default == default and f"default {default}" in opt.help


def test_readme_starts_with_setup_and_full_test_command_quick_subset_below():
    """README: one paragraph, then the set-up command and the full test command (what CI
    runs); the quick subset is named further down."""
    body = README.split("\n", 2)[2]
    blocks = body.split("```")
    assert "pip install" in blocks[1] and blocks[3].strip() == "sh\npython -m pytest -q -n 2"
    quick = 'python -m pytest -q -n 2 -m "not slow"'
    assert quick in README and README.index(quick) > README.index(blocks[3])


def test_strict_also_fails_on_emit_refusal(capsys, tmp_path):
    """A 1.1 µs unit is 8.8 ticks of the default 8 MHz timer: 9 ticks is 2.3 % off, above
    emit's 1 % tolerance (arithmetic). check warns and exits 0; --strict exits 3."""
    text = (EXAMPLES / "hive_scale.toml").read_text().replace("bit_rate_bps = 2000",
                                                               "unit_us = 1.1")
    spec = tmp_path / "fast.toml"
    spec.write_text(text)
    code, _, err = run(capsys, "check", str(spec))
    assert code == 0 and "will refuse this spec" in err and "with 1 warning(s)" in err
    code, _, err = run(capsys, "check", str(spec), "--strict")
    assert code == exitcodes.BAD_SPEC and "emit would refuse it" in err.splitlines()[-1]
