"""Building blocks of bench/decoder_vs_ideal.py and bench/link_losses.py: the independent
transmitter, the allowed run lengths, the ideal hard-decision classifier, the harnesses."""

from __future__ import annotations

import dataclasses
import importlib
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import binomtest

import ookframe
from ookframe import LINE_CODES, LineCodeSpec
from ookframe.demo import example_names
from tests.conftest import example_spec

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "bench"))
refgen = importlib.import_module("refgen")
dvi = importlib.import_module("decoder_vs_ideal")
links = importlib.import_module("link_losses")


def _same_as_encode(spec: ookframe.FrameSpec, n: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    for _ in range(n):
        raw = refgen.random_raw(spec, rng)
        lv, du = refgen.transmission(spec, raw)
        train = ookframe.encode(spec, refgen.physical_values(spec, raw))
        assert np.array_equal(lv, train.levels), raw
        assert np.allclose(du, train.durations_us, rtol=0, atol=1e-6), raw


@pytest.mark.parametrize("name", example_names())
def test_independent_transmitter_equals_encode_on_every_example(name: str) -> None:
    """The bench's own transmitter, written from README's spec reference (order of check,
    whitening, stuffing, line code; field and check bit/byte order) and the line-code
    definitions (Manchester: IEEE 802.3 clause 7.3.1.1; 3-out-of-6: EN 13757-4, from
    memory; PWM / pulse distance / stuffing: README and common practice, no source), gives
    ookframe.encode's train for random field values."""
    spec, _ = example_spec(name)
    _same_as_encode(spec, 25, seed=len(name))


@pytest.mark.parametrize("code", list(LINE_CODES))
def test_independent_transmitter_equals_encode_on_every_line_code(code: str) -> None:
    """Every registered line code with its default parameters, on the hive_scale frame
    (Manchester conventions: IEEE 802.3 clause 7.3.1.1; differential Manchester: IEEE
    802.5; biphase-mark: AES3 / IEC 60958-1 channel coding, from memory; 4B6B: the
    selection rule stated for ookframe's table; 3-out-of-6: EN 13757-4, from memory)."""
    spec, _ = example_spec("hive_scale.toml")
    _same_as_encode(dataclasses.replace(spec, line_code=LineCodeSpec(code)), 10, seed=7)


@pytest.mark.parametrize("mode", ["both", "ones"])
def test_independent_stuffing_equals_encode(mode: str) -> None:
    """NRZ bit stuffing after 3 equal bits / 3 ones (HDLC rule of ISO/IEC 13239, with
    N = 3 to make stuffing frequent) on a little-endian LSB-first frame."""
    spec, _ = example_spec("coldframe_vent.toml")
    lc = LineCodeSpec("nrz", (("stuff_after", 3), ("stuff_value", mode)))
    _same_as_encode(dataclasses.replace(spec, line_code=lc), 25, seed=3)


@pytest.mark.parametrize(("width", "poly", "init", "refin", "refout", "xorout", "check"), [
    (16, 0x1021, 0x0000, True, True, 0x0000, 0x2189),   # CRC-16/KERMIT
    (16, 0x1021, 0xFFFF, False, False, 0x0000, 0x29B1),  # CRC-16/IBM-3740
    (8, 0x07, 0x00, False, False, 0x00, 0xF4),           # CRC-8/SMBUS
])
def test_independent_crc_check_values(width, poly, init, refin, refout, xorout, check) -> None:
    """Check values of "123456789" from the CRC catalogue of R. Williams' parameter model
    (reveng catalogue entries CRC-16/KERMIT 0x2189, CRC-16/IBM-3740 0x29B1, CRC-8/SMBUS
    0xF4), and equality with crccheck (>= 1.3) on random data."""
    from crccheck.crc import Crc

    assert refgen.crc_bitwise(b"123456789", width, poly, init, refin, refout, xorout) == check
    ref = Crc(width, poly, init, refin, refout, xorout)
    data = np.random.default_rng(width).integers(0, 256, 40, dtype=np.uint8).tobytes()
    assert refgen.crc_bitwise(data, width, poly, init, refin, refout, xorout) == ref.calc(data)


def test_independent_fletcher16_and_pn9() -> None:
    """Fletcher-16 of "abcde" is 0xC8F0 (Fletcher 1982 algorithm; worked example commonly
    quoted for it, from memory). PN9 (x^9 + x^5 + 1, seed 0x1FF) whitening bytes start
    FF E1 1D 9A ED 85 33 24 (sub-GHz transceiver data whitening, from memory)."""
    spec, _ = example_spec("coldframe_vent.toml")
    assert refgen.check_value(spec, b"abcde") == 0xC8F0
    mask = refgen.lfsr_mask(9, 0x021, 0x1FF, 64)
    assert refgen.pack_msb(mask) == bytes.fromhex("FFE11D9AED853324")


def test_allowed_runs_from_the_code_definitions() -> None:
    """Allowed run lengths per level: Manchester 1 or 2 units; PWM 1:3 short or long for
    both levels; pulse distance 1/1/3 marks of 1, spaces of 1 or 3; 3-out-of-6 words of
    weight 3 run 1..4 across word boundaries (common practice, no source). Stuffed NRZ
    after 3: runs 1..3, and marks up to 4, since the count starts after the sync word and
    coldframe_vent's sync 0xD391 ends in a 1 (README: stuffing after the sync word)."""
    runs = {n.removesuffix(".toml"): refgen.allowed_runs(example_spec(n)[0])
            for n in example_names()}
    assert runs["hive_scale"] == refgen.AllowedRuns((1, 2), (1, 2))
    assert runs["greenhouse_probe"] == refgen.AllowedRuns((1, 3), (1, 3))
    assert runs["gate_sensor"] == refgen.AllowedRuns((1, 3), (1,))
    assert runs["tank_level"] == refgen.AllowedRuns((1, 2, 3, 4), (1, 2, 3, 4))
    assert runs["coldframe_vent"] == refgen.AllowedRuns((1, 2, 3), (1, 2, 3, 4))


def test_allowed_runs_unbounded_nrz() -> None:
    """Plain NRZ has runs of any length (common practice, no source): every length up to
    a long frame's is allowed, so the classifier rounds to whole units."""
    spec, _ = example_spec("hive_scale.toml")
    allowed = refgen.allowed_runs(dataclasses.replace(spec, line_code=LineCodeSpec("nrz")))
    assert allowed.mark[:100] == tuple(range(1, 101))
    assert allowed.space[:100] == tuple(range(1, 101))


@pytest.mark.parametrize("name", example_names())
def test_ideal_is_perfect_at_5pct_jitter(name: str) -> None:
    """With edges moved by at most 5 % of a unit, a pulse is off by at most 0.1 unit, less
    than half the distance between any two allowed lengths (>= 1 unit): the ideal
    classifier gets every copy right."""
    spec, _ = example_spec(name)
    rng = np.random.default_rng(11)
    cap = dvi.build_capture(spec, [refgen.random_raw(spec, rng) for _ in range(20)],
                            idle_us=3 * spec.gap_us)
    dur = dvi.jittered(cap.durations_us, 0.05, spec.unit_us, rng)
    assert dvi.ideal_ok(cap, dur, spec.unit_us, refgen.allowed_runs(spec)).all()


def test_ideal_manchester_pulse_error_rate_matches_triangular_law() -> None:
    """Manchester pulses (allowed lengths {1, 2}) with edges moved by independent U(-J, J):
    the length error D = e_end - e_start has the triangular density (2J - |d|) / (4J^2)
    on [-2J, 2J] (sum of two uniforms, e.g. Feller vol. II, I.9). A 1-unit pulse is misread
    when D > 1/2, a 2-unit pulse when D < -1/2: both with probability
    P = (2J - 1/2)^2 / (8 J^2) for 1/4 < J < 1/2, and 0 for J <= 1/4. Every other pulse is
    used so that no two share an edge (independent trials); the Monte Carlo count must lie
    in the 99.9 % Clopper-Pearson interval."""
    spec, _ = example_spec("hive_scale.toml")
    rng = np.random.default_rng(2026)
    bits = rng.integers(0, 2, 40_000).tolist()
    lv, un = refgen.runs(refgen.line_chips(spec, bits))
    levels, true_units = np.array(lv[1:-1], np.uint8), np.array(un[1:-1])
    allowed = refgen.AllowedRuns((1, 2), (1, 2))
    for j in (0.24, 0.3, 0.4, 0.45):
        edges = np.concatenate(([0], np.cumsum(true_units))).astype(float)
        edges += rng.uniform(-j, j, edges.size)
        measured = np.diff(edges)
        got = np.empty(measured.size, np.int64)
        for level in (0, 1):
            sel = levels == level
            got[sel] = refgen.nearest_allowed(measured[sel], allowed.of(level))
        wrong = (got != true_units)[::2]
        p = (2 * j - 0.5) ** 2 / (8 * j * j) if j > 0.25 else 0.0
        if p == 0.0:
            assert not wrong.any()
            continue
        ci = binomtest(int(wrong.sum()), wrong.size).proportion_ci(0.999)
        assert ci.low <= p <= ci.high, (j, wrong.mean(), p)


@pytest.mark.parametrize("name", example_names())
def test_decoder_harness_finds_every_clean_copy(name: str) -> None:
    """On clean trains the harness's copy start times and raw values match what
    ookframe.decode_frames reports for every copy (README Python API: frames with
    start_us, crc_ok, raw), so a copy counted lost is a decoder loss, not a harness one."""
    spec, _ = example_spec(name)
    rng = np.random.default_rng(5)
    cap = dvi.build_capture(spec, [refgen.random_raw(spec, rng) for _ in range(6)],
                            idle_us=3 * spec.gap_us)
    train = ookframe.PulseTrain(cap.levels, cap.durations_us)
    good, tally = dvi.decoder_ok(spec, cap, train, tol_us=spec.unit_us)
    assert good.all() and tally["false_accepts"] == tally["misplaced"] == 0


def test_hugging_harness_without_noise_loses_nothing() -> None:
    """The link-loss loop (trains cut to the carrier, channel applied, noise appended) on
    a perfect channel counts every copy of every transmission as right."""
    spec, _ = example_spec("gate_sensor.toml")
    r = links.hugging_losses(spec, ookframe.get_preset("ideal"), 30, seed=4, chunk=10)
    assert r["copy_loss"] == 0 and r["per"] == 0 and r["false_accepts"] == 0
