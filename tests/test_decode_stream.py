"""Decoding in pieces (``decode_stream``, ``iter_capture``): the same frames as decoding the
whole train, with bounded memory.

Sources: the reference is this library's own whole-train ``decode`` (equality is the
property under test); streaming with a carried-over tail of one frame span is common
practice, no source. Peak memory is read from ``VmHWM`` in /proc/self/status (Linux
proc(5), KiB), else ``resource.getrusage`` (Python 3.11 documentation, ``ru_maxrss`` in KiB
on Linux, getrusage(2) man page).
"""

from __future__ import annotations

import subprocess
import sys
import textwrap

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ookframe import frame
from ookframe.captures import iter_capture, read_capture, write_capture
from ookframe.decode import decode, decode_stream
from ookframe.demo import example_names
from ookframe.errors import CaptureError
from ookframe.pulses import PulseTrain, merge_runs
from tests.conftest import example_spec

SETTINGS = settings(max_examples=20, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


def _noise(n: int, unit_us: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    lv = (np.arange(n) % 2).astype(np.uint8)
    return lv, unit_us * np.exp(rng.uniform(np.log(0.05), np.log(30.0), n))


def transmissions(spec, n_frames: int, rng: np.random.Generator) -> PulseTrain:
    """Random transmissions of ``spec`` (random values, clock off by up to 3 %) between
    stretches of idle and random noise pulses."""
    lv_parts: list[np.ndarray] = []
    du_parts: list[np.ndarray] = []
    for _ in range(n_frames):
        lv, du = _noise(int(rng.integers(0, 40)), spec.unit_us, rng)
        lv_parts += [lv, np.array([0], np.uint8)]
        du_parts += [du, np.array([spec.unit_us * rng.uniform(20, 200)])]
        tx = frame.encode(spec, frame.random_values(spec, rng))
        lv_parts.append(tx.levels)
        du_parts.append(tx.durations_us * (1 + rng.uniform(-0.03, 0.03)))
        lv_parts.append(np.array([0], np.uint8))
        du_parts.append(np.array([spec.unit_us * rng.uniform(20, 200)]))
    return merge_runs(np.concatenate(lv_parts), np.concatenate(du_parts))


def pieces(train: PulseTrain, size: int) -> list[PulseTrain]:
    return [PulseTrain(train.levels[i:i + size], train.durations_us[i:i + size])
            for i in range(0, len(train), size)]


def assert_same_frames(got, want) -> None:
    assert len(got) == len(want)
    for g, w in zip(got, want, strict=True):
        assert g.raw == w.raw and g.crc_ok == w.crc_ok and g.payload_hex == w.payload_hex
        assert g.start_us == pytest.approx(w.start_us, rel=1e-9, abs=1e-6)
        assert g.end_us == pytest.approx(w.end_us, rel=1e-9, abs=1e-6)
        assert g.unit_us == pytest.approx(w.unit_us, rel=1e-6)
        assert (g.pulses, g.sync_errors, g.timing_errors, g.code_errors, g.corrected) == \
            (w.pulses, w.sync_errors, w.timing_errors, w.code_errors, w.corrected)


@pytest.mark.parametrize("name", example_names())
@SETTINGS
@given(seed=st.integers(0, 2**32 - 1),
       size=st.sampled_from([7, 13, 50, 97, 333, 1009]),
       n_frames=st.integers(1, 6))
def test_stream_equals_whole_decode(name, seed, size, n_frames):
    """Every example spec, random transmissions among noise, cut into pieces of 7..1009
    pulses (cuts fall inside preambles, syncs and fields): the frames equal the whole
    train's, frame for frame (reference: whole-train ``decode``)."""
    spec, _ = example_spec(name)
    rng = np.random.default_rng(seed)
    train = transmissions(spec, n_frames, rng)
    want = decode(spec, train)
    assert want, "the transmissions must decode as a whole"
    got = list(decode_stream(spec, pieces(train, size)))
    assert_same_frames(got, want)
    good = list(decode_stream(spec, pieces(train, size), include_bad=False))
    assert_same_frames(good, [f for f in want if f.crc_ok])


def test_stream_of_nothing_and_of_one_piece():
    """No pieces -> no frames; one piece -> exactly ``decode`` (common practice, no source)."""
    spec, _ = example_spec("hive_scale.toml")
    assert list(decode_stream(spec, [])) == []
    train = transmissions(spec, 3, np.random.default_rng(5))
    assert_same_frames(list(decode_stream(spec, [train])), decode(spec, train))


def test_stream_rejects_bad_pulses_like_decode():
    """A bad duration in a later piece raises CaptureError as ``decode`` does
    (common practice, no source)."""
    spec, _ = example_spec("hive_scale.toml")
    good = PulseTrain(np.array([1, 0], np.uint8), np.array([100.0, 200.0]))
    bad = PulseTrain(np.array([1, 0], np.uint8), np.array([100.0, -1.0]))
    with pytest.raises(CaptureError):
        list(decode_stream(spec, [good, bad]))


@pytest.mark.parametrize("fmt", ["csv", "vcd", "json"])
@pytest.mark.parametrize("size", [1, 7, 1000])
def test_iter_capture_joins_to_read_capture(tmp_path, fmt, size):
    """The pieces joined (equal levels merged) are the whole-file reader's train
    (reference: ``read_capture``)."""
    spec, _ = example_spec("gate_sensor.toml")
    train = transmissions(spec, 2, np.random.default_rng(11))
    path = tmp_path / f"cap.{fmt}"
    write_capture(path, train)
    whole = read_capture(path)
    got = list(iter_capture(path, chunk_pulses=size))
    assert all(len(p) <= size for p in got)
    joined = merge_runs(np.concatenate([p.levels for p in got]),
                        np.concatenate([p.durations_us for p in got]))
    assert np.array_equal(joined.levels, whole.levels)
    np.testing.assert_allclose(joined.durations_us, whole.durations_us, rtol=1e-12)


def test_iter_capture_csv_error_names_the_line_in_a_later_piece(tmp_path):
    """An invalid line deep in the file is named by its line number, as the whole-file
    reader names it (reference: ``read_capture``)."""
    rows = ["level,duration_us", "# comment", ""] + [f"{i % 2},100" for i in range(50)]
    rows[40] = "1,abc"
    path = tmp_path / "bad.csv"
    path.write_text("\n".join(rows) + "\n")
    with pytest.raises(CaptureError) as whole:
        read_capture(path)
    with pytest.raises(CaptureError) as streamed:
        list(iter_capture(path, chunk_pulses=7))
    assert str(streamed.value) == str(whole.value)
    assert ":41:" in str(streamed.value)


_MEMORY_PROBE = textwrap.dedent("""
    import resource, sys
    import numpy as np
    from ookframe import frame
    from ookframe.captures import iter_capture
    from ookframe.decode import decode_stream
    from tests.conftest import example_spec
    spec, _ = example_spec("hive_scale.toml")
    n, path = int(sys.argv[1]), sys.argv[2]
    rng = np.random.default_rng(1)
    tx = frame.encode(spec, frame.random_values(spec, rng))
    block = "".join(f"{lv},{d!r}\\n" for lv, d in zip(tx.levels.tolist(),
                    tx.durations_us.tolist())) + f"0,{spec.unit_us * 100!r}\\n"
    reps = n // (len(tx) + 1) + 1
    with open(path, "w") as fh:
        fh.write("level,duration_us\\n")
        for _ in range(reps):
            fh.write(block)
    frames = sum(1 for _ in decode_stream(spec, iter_capture(path, chunk_pulses=100_000)))
    assert frames == reps * spec.repeats, (frames, reps)
    # this process alone (ru_maxrss would also count the parent's pages at fork time)
    peak_kib = [int(ln.split()[1]) for ln in open("/proc/self/status")
                if ln.startswith("VmHWM:")]
    print(peak_kib[0] if peak_kib else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
""")


@pytest.mark.slow
def test_memory_is_bounded(tmp_path):
    """Peak RSS of decoding a 4·10^6-pulse CSV exceeds that of a 10^6-pulse one by
    < 30 MB (linear growth at the former ~180 B/pulse would add ~540 MB); peak from
    ``VmHWM`` of /proc/self/status (Linux proc(5), KiB), else ``resource.getrusage``
    (Python documentation; ru_maxrss in KiB on Linux)."""
    peaks = []
    for n in (1_000_000, 4_000_000):
        out = subprocess.run([sys.executable, "-c", _MEMORY_PROBE, str(n),
                              str(tmp_path / f"{n}.csv")], capture_output=True, text=True,
                             check=True, cwd=str(__import__("pathlib").Path(__file__).parent.parent))
        peaks.append(int(out.stdout.split()[-1]) / 1024)
    assert peaks[1] - peaks[0] < 30, peaks


def _vcd(changes: list[tuple[int, str]], end: int) -> str:
    body = "".join(f"#{t}\n{v}!\n" for t, v in changes)
    return ("$timescale 10 us $end\n$scope module m $end\n$var wire 1 ! tx $end\n"
            f"$upscope $end\n$enddefinitions $end\n{body}#{end}\n")


@pytest.mark.parametrize("size", [1, 2, 3, 5, 100])
def test_iter_capture_vcd_x_z_repeats_and_errors_match_read(tmp_path, size):
    """Leading x skipped, later x/z read as space, a value repeated and a zero-length
    change merged: pieces joined equal ``read_capture``'s train exactly; with xz='error'
    the same message names the same line (IEEE 1364-2005 clause 18 for the values;
    reference: ``read_capture``)."""
    changes = [(0, "x"), (3, "1"), (5, "1"), (7, "0"), (7, "1"), (9, "z"), (12, "0"),
               (15, "1"), (20, "x"), (21, "1")]
    path = tmp_path / "c.vcd"
    path.write_text(_vcd(changes, 30))
    whole = read_capture(path)
    got = list(iter_capture(path, chunk_pulses=size))
    assert all(0 < len(p) <= size for p in got)
    lv = np.concatenate([p.levels for p in got])
    du = np.concatenate([p.durations_us for p in got])
    assert np.array_equal(lv, whole.levels) and np.array_equal(du, whole.durations_us)
    # by hand: 1 from #3 to #9 (the 0 at #7 lasts no time), 0 to #15, 1 to #20, x to #21
    assert lv.tolist() == [1, 0, 1, 0, 1] and du.tolist() == [60.0, 60.0, 50.0, 10.0, 90.0]
    with pytest.raises(CaptureError) as a:
        read_capture(path, xz="error")
    with pytest.raises(CaptureError) as b:
        list(iter_capture(path, chunk_pulses=size, xz="error"))
    assert str(a.value) == str(b.value)


def test_cli_decode_in_many_pieces_prints_the_whole_train_frames(tmp_path, capsys,
                                                                 monkeypatch):
    """``ookframe decode --json`` on a capture read in pieces of 37 pulses gives the frames
    of ``decode`` on the whole train (reference: whole-train ``decode``)."""
    import json

    from ookframe.cli import cmd_decode
    from ookframe.cli.main import main

    spec, _ = example_spec("hive_scale.toml")
    train = transmissions(spec, 4, np.random.default_rng(3))
    path = tmp_path / "cap.csv"
    write_capture(path, train)
    monkeypatch.setattr(cmd_decode, "CHUNK_PULSES", 37)
    spec_path = str(__import__("pathlib").Path(__file__).parent.parent / "examples"
                    / "hive_scale.toml")
    assert main(["decode", spec_path, str(path), "--json"]) == 0
    got = json.loads(capsys.readouterr().out)
    want = cmd_decode.frame_dicts(decode(spec, read_capture(path)))
    assert [g["payload_hex"] for g in got] == [w["payload_hex"] for w in want]
    assert [g["start_us"] for g in got] == pytest.approx([w["start_us"] for w in want],
                                                         rel=1e-9)
