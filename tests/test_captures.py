"""Tests for ookframe.captures: CSV / JSON / VCD readers and writers."""

from __future__ import annotations

import tracemalloc
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from vcd import VCDWriter
from vcd.reader import TokenKind, tokenize

from ookframe.captures import capture_format, read_capture, write_capture
from ookframe.captures.vcd_format import list_signals
from ookframe.errors import CaptureError
from ookframe.pulses import PulseTrain


def _alternating(durations_us: list[float], first: int = 1) -> PulseTrain:
    levels = (np.arange(len(durations_us)) + first) % 2
    return PulseTrain(levels.astype(np.uint8), np.asarray(durations_us, np.float64))


durations_strategy = st.lists(
    st.floats(min_value=1e-3, max_value=1e7, allow_nan=False, allow_infinity=False),
    min_size=1, max_size=60)


# --------------------------------------------------------------------------- round trips
@settings(max_examples=60, deadline=None)
@given(durations=durations_strategy, first=st.integers(0, 1), fmt=st.sampled_from(["csv", "json"]))
def test_csv_json_round_trip_exact(tmp_path_factory, durations, first, fmt):
    """write_capture then read_capture returns the identical train (float64 bit-exact)."""
    path = tmp_path_factory.mktemp("rt") / f"t.{fmt}"
    train = _alternating(durations, first)
    write_capture(path, train)
    assert read_capture(path) == train


@settings(max_examples=60, deadline=None)
@given(ns=st.lists(st.integers(1, 10**9), min_size=1, max_size=60), first=st.integers(0, 1))
def test_vcd_round_trip_whole_nanoseconds(tmp_path_factory, ns, first):
    """Durations in whole ns survive the 1 ns VCD writer and the reader exactly."""
    path = tmp_path_factory.mktemp("rt") / "t.vcd"
    train = _alternating([n / 1000 for n in ns], first)
    write_capture(path, train)
    assert read_capture(path) == train
    assert read_capture(path, signal="ook") == train


def test_vcd_writer_rounds_cumulative_time(tmp_path):
    """Edges are rounded from cumulative time, so sub-ns parts do not accumulate drift."""
    train = _alternating([0.3333] * 3000)
    path = tmp_path / "drift.vcd"
    write_capture(path, train)
    back = read_capture(path)
    assert abs(back.total_us - train.total_us) <= 0.0005
    drift_us = np.abs(np.cumsum(back.durations_us) - np.cumsum(train.durations_us))
    assert np.all(drift_us <= 5e-4 + 1e-9)


def test_vcd_writer_read_by_pyvcd(tmp_path):
    """Our VCD parses with pyvcd 0.5's independent tokenizer (vcd.reader.tokenize) and gives
    the same change list: timescale 1 ns, one 1-bit wire, one change per pulse edge."""
    train = _alternating([12.5, 3.0, 7.25, 100.0, 0.001], first=1)
    path = tmp_path / "ours.vcd"
    write_capture(path, train)
    timescale = None
    now = 0
    changes: list[tuple[int, int]] = []
    names = []
    with open(path, "rb") as fh:
        for tok in tokenize(fh):
            if tok.kind is TokenKind.TIMESCALE:
                timescale = (tok.timescale.magnitude, tok.timescale.unit.value)
            elif tok.kind is TokenKind.VAR:
                names.append((tok.var.reference, tok.var.size))
            elif tok.kind is TokenKind.CHANGE_TIME:
                now = tok.time_change
            elif tok.kind is TokenKind.CHANGE_SCALAR:
                changes.append((now, int(tok.scalar_change.value)))
    assert timescale == (1, "ns")
    assert names == [("ook", 1)]
    assert changes == [(0, 1), (12500, 0), (15500, 1), (22750, 0), (122750, 1)]
    assert now == 122751  # the final timestamp closes the last pulse


# --------------------------------------------------------------------------- pyvcd-written files
def _pyvcd_file(path: Path, timescale: str, changes: list[tuple[int, int | str]], end: int,
                extra_noise: bool = True) -> None:
    with open(path, "w") as fh:
        w = VCDWriter(fh, timescale=timescale, date="today")
        tx = w.register_var("bench.node", "tx_pin", "wire", size=1, init="x")
        if extra_noise:
            bus = w.register_var("bench", "bus", "wire", size=8, init=0)
            clk = w.register_var("bench", "clk", "wire", size=1, init=0)
            temp = w.register_var("bench", "temp", "real", init=1.5)
        for t, v in changes:
            if extra_noise:
                w.change(bus, t, t % 256)
                w.change(clk, t, t % 2)
                w.change(temp, t, t / 7)
            w.change(tx, t, v)
        w.close(end)


@pytest.mark.parametrize("timescale, us_per_tick", [
    ("1 us", 1.0), ("10 ns", 0.01), ("100 ps", 1e-4), ("1 ms", 1000.0), ("1 ns", 1e-3)])
def test_reader_against_pyvcd_timescales(tmp_path, timescale, us_per_tick):
    """A VCD written by pyvcd 0.5 (VCDWriter) in several timescales, with other signals
    (8-bit bus, clock, real) interleaved, reads back as the expected pulse train.
    Timescale semantics per IEEE 1364-2005 clause 18.2.3.7 ($timescale)."""
    changes = [(10, 1), (25, 0), (40, 1), (41, 0), (90, 1), (130, 0)]
    path = tmp_path / "pyvcd.vcd"
    _pyvcd_file(path, timescale, changes, end=200)
    train = read_capture(path, signal="tx_pin")
    ticks = np.array([15, 15, 1, 49, 40, 70])
    assert train.levels.tolist() == [1, 0, 1, 0, 1, 0]
    np.testing.assert_allclose(train.durations_us, ticks * us_per_tick, rtol=1e-12)
    assert read_capture(path, signal="bench.node.tx_pin") == train


def test_reader_selects_by_name_and_lists_available(tmp_path):
    """Without a name, a file with several 1-bit signals is an error listing them."""
    path = tmp_path / "many.vcd"
    _pyvcd_file(path, "1 us", [(5, 1), (9, 0)], end=20)
    with pytest.raises(CaptureError, match=r"--signal NAME.*bench\.clk.*bench\.node\.tx_pin"):
        read_capture(path)
    with pytest.raises(CaptureError, match=r"no signal named 'nope'.*bench\.node\.tx_pin"):
        read_capture(path, signal="nope")
    with pytest.raises(CaptureError, match="8 bits wide"):
        read_capture(path, signal="bus")
    assert {v.name for v in list_signals(path)} == {"bench.node.tx_pin", "bench.bus",
                                                     "bench.clk", "bench.temp"}


def test_xz_handling(tmp_path):
    """Leading x (pyvcd init='x') is skipped; later x/z is space by default, error on request."""
    path = tmp_path / "xz.vcd"
    _pyvcd_file(path, "1 us", [(10, 1), (20, "x"), (30, 1), (40, "z"), (45, 0)], end=60,
                extra_noise=False)
    train = read_capture(path)
    assert train.levels.tolist() == [1, 0, 1, 0]
    assert train.durations_us.tolist() == [10.0, 10.0, 10.0, 20.0]
    with pytest.raises(CaptureError, match=r"xz\.vcd:\d+: signal is x/z"):
        read_capture(path, xz="error")


def test_dumpoff_reads_as_space(tmp_path):
    """pyvcd's dump_off writes $dumpoff with x values (IEEE 1364 18.2.3.6): read as space."""
    path = tmp_path / "off.vcd"
    with open(path, "w") as fh, VCDWriter(fh, timescale="1 us") as w:
        tx = w.register_var("top", "tx", "wire", size=1, init=0)
        w.change(tx, 10, 1)
        w.dump_off(20)
        w.dump_on(50)
        w.change(tx, 60, 0)
        w.change(tx, 70, 1)
        w.change(tx, 80, 0)
    train = read_capture(path)
    assert train.levels.tolist() == [0, 1, 0, 1, 0, 1]
    assert train.durations_us.tolist()[:5] == [10.0, 10.0, 30.0, 10.0, 10.0]


def test_vcd_vector_one_bit_and_hand_written(tmp_path):
    """Hand-written VCD in the IEEE 1364 clause 18.2 layout: 1-bit vector changes 'b1 id',
    tokens split across lines, comments, same-time changes (last wins)."""
    path = tmp_path / "hand.vcd"
    path.write_text(
        "$comment hand written $end\n$timescale\n 100 ns\n$end\n$scope module m $end\n"
        "$var reg 1 % d [0] $end\n$upscope $end\n$enddefinitions $end\n"
        "#0 $dumpvars b0 % $end\n#10 b1 %\n#12 b0 % b1 %\n#15\n$comment mid $end\nb0 %\n#30\n")
    train = read_capture(path, signal="d[0]")
    assert train.levels.tolist() == [0, 1, 0]
    np.testing.assert_allclose(train.durations_us, [1.0, 0.5, 1.5])


def test_vcd_streaming_does_not_load_file(tmp_path):
    """Reading a ~6 MB VCD whose target signal changes rarely peaks far below the file size."""
    path = tmp_path / "big.vcd"
    with open(path, "w") as fh:
        fh.write("$timescale 1 ns $end\n$scope module t $end\n$var wire 1 ! tx $end\n"
                 "$var wire 16 # noise $end\n$upscope $end\n$enddefinitions $end\n#0\n1!\n")
        for block in range(12):
            base = block * 20000
            fh.write("".join(f"#{base + t}\nb{t % 65536:b} #\n" for t in range(1, 20000)))
            fh.write(f"#{base + 20000}\n{block % 2}!\n")
        fh.write("#340000\n")
    size = path.stat().st_size
    assert size > 5_000_000
    tracemalloc.start()
    train = read_capture(path, signal="tx")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert len(train) == 13
    assert train.durations_us.tolist() == [20.0] * 12 + [100.0]
    assert peak < size / 10


# --------------------------------------------------------------------------- bad input
def assert_rejected(path: Path, body: str, match: str) -> None:
    """Write ``body`` to ``path``; reading it must raise CaptureError matching ``match``."""
    path.write_text(body)
    with pytest.raises(CaptureError, match=match):
        read_capture(path)


@pytest.mark.parametrize("body, match", [
    ("lvl,dur\n1,5\n", r"bad\.csv:1: expected header 'level,duration_us'"),
    ("", r"bad\.csv:1: expected header"),
    ("level,duration_us\n1,5\n0,nan\n", r"bad\.csv:3: duration_us is NaN"),
    ("level,duration_us\n1,5\n\n# note\n0,inf\n", r"bad\.csv:5: duration_us is infinite"),
    ("level,duration_us\n1,0\n", r"bad\.csv:2: duration_us is 0, must be > 0"),
    ("level,duration_us\n1,-3.5\n", r"bad\.csv:2: duration_us is -3.5, must be > 0"),
    ("level,duration_us\n1,abc\n", r"bad\.csv:2: duration_us 'abc' is not a number"),
    ("level,duration_us\n2,5\n", r"bad\.csv:2: level '2' must be 0 or 1"),
    ("level,duration_us\n1,5,7\n", r"bad\.csv:2: expected 2 values"),
    ("level,duration_us\n1\n", r"bad\.csv:2: expected 2 values"),
])
def test_csv_bad_input(tmp_path, body, match):
    """Every invalid CSV raises CaptureError naming file and line (common practice, no source)."""
    assert_rejected(tmp_path / "bad.csv", body, match)


def test_csv_comments_blank_lines_and_empty(tmp_path):
    """Comments and blank lines are skipped; a header-only file is an empty train."""
    path = tmp_path / "ok.csv"
    path.write_text("level, duration_us\n# start\n1,2.5\n\n0,1e3\n")
    assert read_capture(path) == PulseTrain(np.array([1, 0]), np.array([2.5, 1000.0]))
    path.write_text("level,duration_us\n")
    assert len(read_capture(path)) == 0


@pytest.mark.parametrize("body, match", [
    ('{"levels": [1, 0], "durations_us": [1.0]', r"bad\.json:1: invalid JSON"),
    ('[1, 2]', "expected a JSON object"),
    ('{"levels": [1, 0], "durations_us": [1.0]}', "'levels' has 2 entries"),
    ('{"levels": [1, 3], "durations_us": [1.0, 2]}', r"levels\[1\] is 3"),
    ('{"levels": [1, true], "durations_us": [1.0, 2]}', r"levels\[1\] is True"),
    ('{"levels": [1, 0], "durations_us": [1.0, NaN]}', r"durations_us\[1\] is NaN"),
    ('{"levels": [1, 0], "durations_us": [1.0, -Infinity]}', r"durations_us\[1\] is infinite"),
    ('{"levels": [1, 0], "durations_us": [1.0, "2"]}', r"durations_us\[1\] is '2'"),
    ('{"levels": [1], "durations_us": [0]}', r"durations_us\[0\] is 0, must be > 0"),
    ('{"levels": [], "durations_us": [], "colour": 1}', "unknown key"),
    ('{"format": "other", "levels": [], "durations_us": []}', "'format' is 'other'"),
    ('{"levels": 5, "durations_us": []}', "'levels' must be a list"),
])
def test_json_bad_input(tmp_path, body, match):
    """Every invalid JSON capture raises CaptureError naming the file and entry."""
    assert_rejected(tmp_path / "bad.json", body, match)


@pytest.mark.parametrize("body, match", [
    ("$scope module m $end $var wire 1 ! a $end $upscope $end $enddefinitions $end #0 0!\n",
     "no \\$timescale"),
    ("$timescale 0 ns $end $enddefinitions $end\n", r"bad\.vcd:1: \$timescale '0 ns'"),
    ("$timescale 1 parsec $end $enddefinitions $end\n", r"bad\.vcd:1: \$timescale '1 parsec'"),
    ("$timescale 1 ns $end\n$var wire 1 ! a $end\n$enddefinitions $end\n#5\n1!\n#3\n",
     r"bad\.vcd:6: time goes backwards"),
    ("$timescale 1 ns $end\n$var wire 1 ! a $end\n$enddefinitions $end\n#x5\n",
     r"bad\.vcd:4: bad timestamp"),
    ("$timescale 1 ns $end\n$var wire 1 ! a $end\n", "no \\$enddefinitions"),
    ("$timescale 1 ns $end\n$var wire ! a $end\n$enddefinitions $end\n", r"bad\.vcd:2: malformed"),
    ("$timescale 1 ns $end\n$var wire 1 ! a $end\n$enddefinitions $end\n#0\nr1.5 !\n",
     r"bad\.vcd:5: value 'r1.5' for a 1-bit signal"),
    ("$timescale 1 ns $end\n$var wire 1 ! a $end\n$enddefinitions $end\n#0\n$bogus\n",
     r"bad\.vcd:5: unexpected '\$bogus'"),
    ("$timescale 1 ns $end\n$comment never closed\n", r"bad\.vcd:2: \$comment has no matching"),
])
def test_vcd_bad_input(tmp_path, body, match):
    """Malformed VCD (IEEE 1364-2005 clause 18.2 syntax) raises CaptureError with file:line."""
    assert_rejected(tmp_path / "bad.vcd", body, match)


def test_format_dispatch_and_writer_checks(tmp_path):
    """Unknown extensions and signal= on non-VCD are errors; writers refuse invalid trains and
    leave no file behind."""
    with pytest.raises(CaptureError, match="allowed: .csv, .json, .vcd"):
        capture_format(tmp_path / "x.txt")
    assert capture_format(tmp_path / "x.TXT", "json") == "json"
    with pytest.raises(CaptureError, match="unknown capture format 'bin'"):
        capture_format(tmp_path / "x.csv", "bin")
    (tmp_path / "a.csv").write_text("level,duration_us\n1,2\n")
    with pytest.raises(CaptureError, match="VCD captures only"):
        read_capture(tmp_path / "a.csv", signal="tx")
    with pytest.raises(CaptureError, match="cannot read"):
        read_capture(tmp_path / "missing.csv")
    bad = PulseTrain(np.array([1, 0]), np.array([1.0, np.nan]))
    for ext in ("csv", "json", "vcd"):
        with pytest.raises(CaptureError, match="pulse 1: duration_us is NaN"):
            write_capture(tmp_path / f"w.{ext}", bad)
        assert not (tmp_path / f"w.{ext}").exists()
    assert list(tmp_path.iterdir()) == [tmp_path / "a.csv"]
    with pytest.raises(CaptureError, match="shorter than the 1 ns"):
        write_capture(tmp_path / "tiny.vcd", _alternating([1.0, 0.0001, 1.0]))
