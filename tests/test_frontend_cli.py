"""``ookframe slice`` and ``ookframe decode`` on sampled captures; bad input.

Expected behaviour is the project's own CLI contract (README: data on stdout, messages on
stderr, one-line errors with named exit codes, nothing half-written, never overwrite
without --force); common practice, no source.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

import ookframe
from ookframe.captures import read_capture
from ookframe.captures.sampled import RAW_SAMPLE_TYPES, SAMPLED_FORMATS, write_samples
from ookframe.cli import exitcodes, sampled_options
from ookframe.cli.main import main
from ookframe.frontend import ENVELOPES
from tests.conftest import example_spec
from tests.sampled_signals import baseband_capture, iq_capture

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
GATE_TOML = EXAMPLES / "gate_sensor.toml"
GATE = example_spec("gate_sensor.toml")


def run(capsys, *argv) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err
    return code, cap.out, cap.err


def test_option_names_match_registries():
    """The CLI's choices are the formats, sample types and envelopes the library registers."""
    assert set(sampled_options.SAMPLED_FORMATS) == set(SAMPLED_FORMATS)
    assert set(sampled_options.RAW_SAMPLE_TYPES) == set(RAW_SAMPLE_TYPES)
    assert set(sampled_options.ENVELOPES) == set(ENVELOPES)


@pytest.fixture
def gate_iq(tmp_path) -> Path:
    spec, values = GATE
    x = iq_capture(ookframe.encode(spec, values), 1e6, 15.0, np.random.default_rng(3))
    path = tmp_path / "gate.s16.iq"
    write_samples(path, x, 1e6)
    return path


def test_slice_writes_pulses_and_reports_thresholds(capsys, tmp_path, gate_iq):
    """slice -o writes a CSV the decoder reads; --json reports every chosen threshold; the
    output is not overwritten without --force."""
    out = tmp_path / "pulses.csv"
    code, stdout, err = run(capsys, "slice", gate_iq, "--sample-rate", "1e6", "--spec",
                            GATE_TOML, "-o", out, "--json")
    assert code == 0 and "wrote" in err
    rep = json.loads(stdout)
    for key in ("floor_level", "carrier_level", "threshold_high_mean", "threshold_low_mean",
                "hysteresis", "smoothing_cutoff_hz", "decimate", "sample_rate_hz"):
        assert key in rep
    assert rep["envelope"] == "magnitude" and rep["sample_type"] == "s16"
    assert rep["smoothing_cutoff_hz"] == pytest.approx(1e6 / (2 * 350 / 4))
    train = read_capture(out)
    assert len(train) == rep["pulses"]
    spec, _ = GATE
    assert sum(f.crc_ok for f in ookframe.decode_frames(spec, train)) == spec.repeats
    code, _, err = run(capsys, "slice", gate_iq, "--sample-rate", "1e6", "-o", out)
    assert code == exitcodes.EXISTS
    code, stdout, _ = run(capsys, "slice", gate_iq, "--sample-rate", "1e6", "-o", out,
                          "--force", "--decimate", "4")
    assert code == 0 and "noise floor" in stdout and "250000 Hz" in stdout


@pytest.mark.parametrize("fmt", ["wav", "iq", "raw"])
def test_decode_sampled_capture(capsys, tmp_path, fmt):
    """decode SPEC CAPTURE decodes every frame of a WAV, raw I/Q and raw real capture, and
    names the front end's thresholds on stderr."""
    spec, values = GATE
    train = ookframe.encode(spec, values)
    rng = np.random.default_rng(4)
    opts: list[str] = []
    if fmt == "iq":
        path = tmp_path / "g.u8.iq"
        write_samples(path, iq_capture(train, 250e3, 15.0, rng), 250e3)
        opts = ["--sample-rate", "250000"]
    elif fmt == "raw":
        path = tmp_path / "g.raw"
        write_samples(path, baseband_capture(train, 250e3, 15.0, rng), 250e3,
                      sample_type="f32")
        opts = ["--sample-rate", "250000", "--sample-type", "f32"]
    else:
        path = tmp_path / "g.wav"
        write_samples(path, baseband_capture(train, 44100, 15.0, rng), 44100,
                      sample_type="s24")
    code, stdout, err = run(capsys, "decode", GATE_TOML, path, "--json", *opts)
    assert code == 0, err
    frames = json.loads(stdout)
    assert sum(f["crc_ok"] for f in frames) == spec.repeats
    assert "front end:" in err and "thresholds low" in err


def test_decode_without_frames_diagnoses(capsys, tmp_path):
    """A capture of noise only: no frames, a diagnosis line, exit 0."""
    path = tmp_path / "n.f32.iq"
    rng = np.random.default_rng(1)
    write_samples(path, 0.01 * (rng.standard_normal(50_000) + 1j * rng.standard_normal(50_000)),
                  1e6)
    code, _, err = run(capsys, "decode", GATE_TOML, path, "--sample-rate", "1e6")
    assert code == 0 and "no frames" in err


def test_bad_sampled_input(capsys, tmp_path, gate_iq):
    """Wrong or missing sample rate, truncated file, unknown format, options for the wrong
    kind of capture, bad front-end settings: one line, exit 4 (2 for usage)."""
    cut = tmp_path / "cut.s16.iq"
    cut.write_bytes(gate_iq.read_bytes()[:1001])
    wav = tmp_path / "w.wav"
    write_samples(wav, np.zeros(100), 8000)
    csv = tmp_path / "p.csv"
    run(capsys, "encode", GATE_TOML, "--format", "csv", "-o", csv)
    cases = [
        (["slice", gate_iq], exitcodes.BAD_INPUT, "sample rate"),
        (["slice", cut, "--sample-rate", "1e6"], exitcodes.BAD_INPUT, "truncated"),
        (["slice", wav, "--sample-rate", "44100"], exitcodes.BAD_INPUT, "header says 8000"),
        (["slice", tmp_path / "x.mp3"], exitcodes.BAD_INPUT, "not a sampled capture"),
        (["slice", gate_iq, "--sample-rate", "0"], exitcodes.USAGE, ""),
        (["slice", gate_iq, "--sample-rate", "1e6", "--threshold-high", "0.5"],
         exitcodes.BAD_INPUT, "both"),
        (["slice", gate_iq, "--sample-rate", "1e6", "-o", tmp_path / "p.txt"],
         exitcodes.BAD_INPUT, "pulse capture"),
        (["decode", GATE_TOML, csv, "--sample-rate", "1e6"], exitcodes.BAD_INPUT,
         "sampled captures"),
        (["decode", GATE_TOML, wav, "--channel", "3"], exitcodes.BAD_INPUT, "channel 3"),
        (["decode", GATE_TOML, tmp_path / "x.mp3"], exitcodes.BAD_INPUT, ".wav"),
    ]
    for argv, want, text in cases:
        code, _, err = run(capsys, *argv)
        assert code == want, (argv, err)
        assert text in err, (argv, err)
        assert len(err.strip().splitlines()) <= 2 or want == exitcodes.USAGE
    assert not (tmp_path / "p.txt").exists()


# ------------------------------------------------------------------------ memory (slow)
_MEMORY_SCRIPT = textwrap.dedent("""
    import resource, sys
    from ookframe.cli.main import main
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    code = main(sys.argv[1:])
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(code, base, peak)
""")


def _peak_rss_kb(argv: list[str]) -> tuple[int, list]:
    """Return (peak RSS in kB, the command's JSON output) of ``ookframe argv`` run in a
    fresh process."""
    res = subprocess.run([sys.executable, "-c", _MEMORY_SCRIPT, *map(str, argv)],
                         capture_output=True, text=True, check=True, timeout=600)
    lines = res.stdout.splitlines()
    code, _, peak = map(int, lines[-1].split())
    assert code == 0, res.stderr
    return peak, json.loads("\n".join(lines[:-1]))


def _sparse_capture(path: Path, n_samples: int, bursts: int) -> None:
    """A raw s16 real capture of ``n_samples``: a sparse file (zeros) with ``bursts`` gate
    sensor transmissions written at spread-out places."""
    spec, values = GATE
    burst = baseband_capture(ookframe.encode(spec, values), 1e6, 30.0,
                             np.random.default_rng(0), 0.5, 0.0)
    raw = np.clip(np.rint(burst * 32768), -32768, 32767).astype("<i2")
    with open(path, "wb") as fh:
        fh.truncate(2 * n_samples)
        for k in range(bursts):
            fh.seek(2 * (k * (n_samples // bursts)))
            fh.write(raw.tobytes())


@pytest.mark.slow
def test_streaming_memory_does_not_grow_with_length(tmp_path):
    """decode of a 10^8-sample capture (raw s16 at 1 MS/s, 100 s, sparse file with ten
    transmissions) peaks at the same RSS as a 10^6-sample one, within 40 MB, and finds
    every frame; the peak is measured with resource.getrusage in a fresh process."""
    small, big = tmp_path / "small.s16.raw", tmp_path / "big.s16.raw"
    _sparse_capture(small, 10**6, 1)
    _sparse_capture(big, 10**8, 10)
    args = ["--sample-rate", "1e6", "--json", "--min-contrast", "0.05"]
    peak_small, frames_small = _peak_rss_kb(["decode", GATE_TOML, small, *args])
    peak_big, frames_big = _peak_rss_kb(["decode", GATE_TOML, big, *args])
    assert os.path.getsize(big) == 2 * 10**8
    assert peak_big - peak_small < 40 * 1024, (peak_small, peak_big)
    spec, _ = GATE
    assert sum(f["crc_ok"] for f in frames_small) == spec.repeats
    assert sum(f["crc_ok"] for f in frames_big) == 10 * spec.repeats
