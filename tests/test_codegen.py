"""Tests for ookframe.codegen: the generated C header, compiled and run on the host.

The reference everywhere is the Python model: ``frame_bits`` (on-air bits), the line code
modules (via ``encode``) and the quantised schedule. The C harness (tests/c/harness.c)
streams many cases per process; every byte and every (level, ticks) pulse must match.
"""

from __future__ import annotations

import dataclasses
import itertools
import os
import re
import subprocess
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from ookframe import __version__
from ookframe.bits import from_raw
from ookframe.checks import CATALOGUE, Crc
from ookframe.codegen import TimerTarget, build_model, emit_header, tx_schedule, write_header
from ookframe.codegen.model import spec_hash
from ookframe.codegen.timing import quantise
from ookframe.codegen.toolchains import (
    CORTEX_M0PLUS_FLAGS,
    STRICT_FLAGS,
    compile_c,
    find_tool,
    section_sizes,
)
from ookframe.errors import CodegenError
from ookframe.frame import encode, frame_bits, random_values
from ookframe.linecodes import LINE_CODES, get_line_code
from ookframe.spec.model import FrameSpec, LineCodeSpec
from ookframe.spec_io import spec_from_dict
from tests.c.runner import (
    bits_case,
    build_harness,
    expected_bits,
    expected_pack,
    pack_case,
    raw_for,
    run_harness,
)
from tests.conftest import example_spec

EXAMPLES = ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml", "tank_level.toml",
            "coldframe_vent.toml"]
GCC = find_tool("gcc")
CLANG = find_tool("clang")
ARM_GCC = find_tool("arm-none-eabi-gcc")
ARM_SIZE = find_tool("arm-none-eabi-size")
COMPILERS = [pytest.param(GCC, id="gcc", marks=pytest.mark.skipif(GCC is None, reason="gcc not installed")),
             pytest.param(CLANG, id="clang", marks=pytest.mark.skipif(CLANG is None, reason="clang not installed"))]
needs_gcc = pytest.mark.skipif(GCC is None, reason="gcc not installed; host C checks skipped")

#: every registered line code at its defaults, then parameter sets that change its C
LINE_CODE_DOCS = [{"name": name, **cls.DEFAULTS} for name, cls in LINE_CODES.items()] + [
    {"name": "nrz", "stuff_after": 3},
    {"name": "nrz", "stuff_after": 5, "stuff_value": "ones"},
    {"name": "manchester", "convention": "thomas"},
    {"name": "pwm", "short_units": 1, "long_units": 3},
    {"name": "pwm", "short_units": 2, "long_units": 5},
    {"name": "pulse_distance", "mark_units": 1, "zero_space_units": 2, "one_space_units": 4},
]


def bits_per_block(lc: dict) -> int:
    """Data bits per block of the line code a ``[line_code]`` table names."""
    params = tuple(sorted((k, v) for k, v in lc.items() if k != "name"))
    return get_line_code(LineCodeSpec(lc["name"], params)).bits_per_block


def base_doc(line_code: dict, **frame: object) -> dict:
    """A spec document exercising every section: signed/scaled fields, a length-driven bytes
    field, CRC over sync + fields, PN9 whitening, three repeats."""
    return {
        "frame": {"name": "probe", "unit_us": 250.0, "repeats": 3, "gap_us": 5000.0, **frame},
        "line_code": line_code,
        "preamble": {"pattern": 0xA, "pattern_bits": 4, "count": 4},
        "sync": {"value": 0xB38, "length_bits": 12},
        "fields": [
            {"name": "node", "width_bits": 8},
            {"name": "temp_c", "width_bits": 12, "signed": True, "scale": 0.1},
            {"name": "count", "width_bits": 4, "role": "length"},
            {"name": "blob", "kind": "bytes", "max_len_bytes": 6},
            {"name": "level", "width_bits": 20},
        ],
        "check": {"model": "CRC-16/KERMIT", "covers": ["sync", "fields"]},
        "whitening": {"kind": "pn9", "covers": ["fields", "check"]},
    }


# --------------------------------------------------------------------------- case building
def edge_raws(spec: FrameSpec) -> list[dict[str, object]]:
    """Raw value sets at the field limits (min, max, zero) plus an empty/full bytes field."""
    out = []
    for pick in ("min", "max", "zero"):
        raw: dict[str, object] = {}
        for f in spec.fields:
            if f.kind == "bytes":
                raw[f.name] = bytes([0xFF] * f.max_len_bytes) if pick == "max" else b""
            elif f.role != "length":
                raw[f.name] = {"min": f.raw_min, "max": f.raw_max, "zero": 0}[pick]
        out.append(raw)
    return out


def values_of_raw(spec: FrameSpec, raw: dict[str, object]) -> dict[str, object]:
    """Physical values (length field left out) for raw values."""
    return {f.name: raw[f.name] if f.kind == "bytes" else from_raw(f, raw[f.name])
            for f in spec.fields if f.role != "length"}


def build_cases(emitted, rng: np.random.Generator, n_random: int
                ) -> tuple[list[str], list[str]]:
    """Return (input lines, expected output lines): random and edge values, out-of-range
    values and short buffers (pack must return 0), raw bit streams of every valid length."""
    spec = emitted.model.spec
    m = emitted.model
    cap = m.max_frame_bytes
    lines: list[str] = []
    expect: list[str] = []
    value_sets = [random_values(spec, rng) for _ in range(n_random)]
    value_sets += [values_of_raw(spec, r) for r in edge_raws(spec)]
    for values in value_sets:
        raw = raw_for(spec, values)
        nbytes = (frame_bits(spec, values).size + 7) // 8
        lines.append(pack_case(spec, raw, int(rng.integers(nbytes, cap + 1))))
        expect += expected_pack(emitted, values)
    # rejected by pack: a too small buffer, and each field one past its range
    values = value_sets[0]
    raw = raw_for(spec, values)
    nbytes = (frame_bits(spec, values).size + 7) // 8
    rejected = [pack_case(spec, raw, nbytes - 1), pack_case(spec, raw, 0)]
    for cf in m.fields:
        f = spec.field(cf.name)
        if cf.check_max:
            rejected.append(pack_case(spec, {**raw, f.name: f.raw_max + 1}, cap))
        if cf.check_min:
            rejected.append(pack_case(spec, {**raw, f.name: f.raw_min - 1}, cap))
    if m.bytes_field is not None:
        lf = spec.length_field
        assert lf is not None
        if lf.raw_max > m.bytes_field.max_len_bytes:
            too_long = {**raw, lf.name: m.bytes_field.max_len_bytes + 1}
            rejected.append(pack_case(spec, too_long, cap))
    for line in rejected:
        lines.append(line)
        expect += ["0 -", "L"]
    # the transmitter alone, on arbitrary bit streams of valid and invalid lengths
    k = m.code.bits_per_block
    for extra in (0, 8, 16):
        nbits = m.fixed_bits + (extra if m.variable else 0)
        if nbits > m.max_frame_bits:
            continue
        bits = rng.integers(0, 2, nbits).astype(np.uint8)
        lines.append(bits_case(bits))
        expect += expected_bits(emitted, bits)
    for bad_len in (m.fixed_bits - k, m.max_frame_bits + k, 0):
        lines.append(bits_case(np.zeros(max(bad_len, 0), np.uint8)) if bad_len > 0
                     else "T 0 00")
        expect.append("L")
    return lines, expect


def assert_harness_matches(emitted, program: Path, rng: np.random.Generator, n_random: int,
                           env: dict[str, str] | None = None) -> str:
    lines, expect = build_cases(emitted, rng, n_random)
    out, err = run_harness(program, lines, env=env)
    assert len(out) == len(expect)
    for i, (got, want) in enumerate(zip(out, expect, strict=True)):
        assert got == want, f"line {i} of {emitted.filename}: input {lines[min(i // 2, len(lines) - 1)]!r}"
    return err


# --------------------------------------------------------------------------- Python model
@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), name=st.sampled_from(EXAMPLES))
def test_schedule_merges_to_encoder_train(seed, name):
    """The quantised schedule, merged by level and taken at nominal durations, is exactly
    ookframe.frame.encode's pulse train; its ticks are the quantised durations."""
    spec, _ = example_spec(name)
    emitted = emit_header(spec)
    values = random_values(spec, np.random.default_rng(seed))
    s = tx_schedule(emitted.model, values)
    ref = encode(spec, values)
    nominal = s.nominal_train()
    assert nominal.levels.tolist() == ref.levels.tolist()
    np.testing.assert_allclose(nominal.durations_us, ref.durations_us, rtol=1e-12)
    tick = emitted.model.timing.tick_us
    worst = emitted.model.timing.worst_error
    np.testing.assert_allclose(s.ticks * tick, s.nominal_us, rtol=worst + 1e-12)
    assert s.ticks.max() <= emitted.model.max_pulse_ticks


@pytest.mark.parametrize("lc", LINE_CODE_DOCS, ids=lambda d: "-".join(map(str, d.values())))
def test_schedule_every_line_code(lc):
    """Every line code's run table replays its Python module exactly (encode, 40 values)."""
    spec = spec_from_dict(base_doc(lc))
    emitted = emit_header(spec)
    rng = np.random.default_rng(7)
    for _ in range(40):
        values = random_values(spec, rng)
        nominal = tx_schedule(emitted.model, values).nominal_train()
        ref = encode(spec, values)
        assert nominal.levels.tolist() == ref.levels.tolist()
        np.testing.assert_allclose(nominal.durations_us, ref.durations_us, rtol=1e-12)


# --------------------------------------------------------------------------- quantisation
def test_quantise_picks_exact_prescaler_and_reports_errors():
    """8 MHz / 8 = 1 µs ticks make 250 µs and 8000 µs exact; prescaler 1 is exact too but its
    merged gap pulse (8500 µs = 68000 ticks) would not fit 16 bits, so 8 wins the tie."""
    t = quantise(TimerTarget(), 250.0, [1], 8000.0, (2, 1))
    assert t.prescaler == 8
    assert [(d.units, d.ticks) for d in t.durations] == [(1, 250), (0, 8000)]
    assert t.worst_error == 0.0
    # 416.667 µs (2400 bit/s NRZ) at 1 MHz: 417 ticks, error +0.08 % (hand computed)
    t = quantise(TimerTarget(prescalers=(8,)), 1e6 / 2400, [1, 2], None, (8, 0))
    assert [d.ticks for d in t.durations] == [417, 833]
    assert t.durations[0].error == pytest.approx((417 - 1e6 / 2400) / (1e6 / 2400))
    assert t.durations[1].error == pytest.approx((833 - 2e6 / 2400) / (2e6 / 2400))


def test_quantise_refusals():
    """Chip runs that fit no timer period, a gap too long even split over 65535 periods
    (20 s at 0.125 µs ticks on an 8-bit timer), a too coarse tick, empty prescaler lists."""
    with pytest.raises(CodegenError, match="no prescaler fits.*1 unit"):
        quantise(TimerTarget(prescalers=(1,)), 10000.0, [1], None, (2, 0))
    with pytest.raises(CodegenError, match="no prescaler fits.*repeat gap.*65535 periods"):
        quantise(TimerTarget(timer_bits=8, prescalers=(1,)), 20.0, [1], 20e6, (2, 1))
    with pytest.raises(CodegenError, match=r"worst timing error .* exceeds the tolerance 1 %"):
        quantise(TimerTarget(prescalers=(1024,)), 250.0, [1], None, (2, 0))
    assert quantise(TimerTarget(prescalers=(1024,), tolerance=0.05), 2500.0, [1], None,
                    (2, 0)).prescaler == 1024
    with pytest.raises(CodegenError, match="prescaler list is empty"):
        TimerTarget(prescalers=())
    with pytest.raises(CodegenError, match="timer width 12"):
        TimerTarget(timer_bits=12)
    with pytest.raises(CodegenError, match="crc implementation 'fast'"):
        TimerTarget(crc_impl="fast")
    with pytest.raises(CodegenError, match="tolerance"):
        TimerTarget(tolerance=0.0)


def test_emit_refuses_bad_names_and_timing():
    """Frame/field names unusable in C and durations that do not fit are CodegenErrors."""
    spec = spec_from_dict(base_doc({"name": "manchester"}))
    for bad in ("int", "size_t", "_probe", "main"):
        with pytest.raises(CodegenError, match="frame name"):
            build_model(dataclasses.replace(spec, name=bad))
    renamed = dataclasses.replace(spec, fields=(
        dataclasses.replace(spec.fields[0], name="Node"), *spec.fields[1:2],
        dataclasses.replace(spec.fields[2], name="NODE"), *spec.fields[3:]))
    with pytest.raises(CodegenError, match="same C macro name"):
        build_model(renamed)
    with pytest.raises(CodegenError, match="no prescaler fits"):  # 250 µs = 2000 ticks > 255
        build_model(spec, TimerTarget(timer_bits=8, prescalers=(1,)))


# --------------------------------------------------------------------------- rendering
def test_header_banner_is_reproducible():
    """The banner names the version and spec hash, says do not edit, has no timestamp; two
    renders are identical; the hash changes with the spec."""
    spec, _ = example_spec("hive_scale.toml")
    a, b = emit_header(spec).text, emit_header(spec).text
    assert a == b
    head = a[:2000]
    assert "GENERATED by ookframe 0.1.0" in head and "DO NOT EDIT" in head
    assert spec_hash(spec) in head
    assert "#define HIVE_SCALE_SPEC_HASH 0x" in a
    for word in ("2024", "2025", "2026", "time", "date"):
        assert word not in head.lower().replace("timer", "").replace("timing", "")
    other = dataclasses.replace(spec, repeats=2)
    assert spec_hash(other) != spec_hash(spec)


GOLDEN = Path(__file__).resolve().parent / "c" / "golden" / "probe.h"


def _without_hash(text: str) -> str:
    text = text.replace(f'ookframe {__version__}', "ookframe <version>")
    text = text.replace(f'VERSION "{__version__}"', 'VERSION "<version>"')
    return re.sub(r"0x[0-9A-F]{8}u|[0-9a-f]{64}", "<hash>", text)


def test_golden_header():
    """The header for a fixed spec (Manchester, bytes field, CRC over sync + fields, PN9,
    3 repeats) equals the reviewed copy in tests/c/golden/probe.h (spec hash and version
    masked, so a change of the spec model or a release alone does not fail it). After an intended template change,
    regenerate with OOKFRAME_UPDATE_GOLDEN=1 and review the diff."""
    text = emit_header(spec_from_dict(base_doc({"name": "manchester"}))).text
    if os.environ.get("OOKFRAME_UPDATE_GOLDEN") == "1":
        GOLDEN.parent.mkdir(parents=True, exist_ok=True)
        GOLDEN.write_text(text)
    assert _without_hash(text) == _without_hash(GOLDEN.read_text())


def test_write_header_never_overwrites_without_force(tmp_path):
    """An existing header is kept unless force=True; no temporary file is left behind."""
    spec, _ = example_spec("hive_scale.toml")
    emitted = emit_header(spec)
    path = write_header(emitted, tmp_path / "out")
    assert path.read_text() == emitted.text
    path.write_text("mine")
    with pytest.raises(CodegenError, match="exists; use --force"):
        write_header(emitted, tmp_path / "out")
    assert path.read_text() == "mine"
    write_header(emitted, tmp_path / "out", force=True)
    assert path.read_text() == emitted.text
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == ["hive_scale.h"]


# --------------------------------------------------------------------------- host C
@pytest.mark.slow
@pytest.mark.parametrize("cc", COMPILERS)
@pytest.mark.parametrize("name", EXAMPLES)
def test_examples_bit_and_tick_exact(tmp_path, cc, name):
    """Every example spec compiles clean under -std=c99 -Wall -Wextra -Wpedantic -Wconversion
    -Wshadow -Werror and the harness equals the Python model on 150 random + edge values,
    rejects out-of-range values and short buffers, and replays raw bit streams."""
    spec, _ = example_spec(name)
    emitted = emit_header(spec)
    program = build_harness(emitted, tmp_path, cc)
    assert_harness_matches(emitted, program, np.random.default_rng(11), 150)


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("crc_impl", ["table256", "table16", "bitwise"])
@pytest.mark.parametrize("lc", LINE_CODE_DOCS, ids=lambda d: "-".join(map(str, d.values())))
def test_every_line_code_and_crc_impl(tmp_path, lc, crc_impl):
    """Each line code (incl. stuffing, differential codes, trailers) with each CRC
    implementation, bytes field and LSB-first little-endian fields, is bit/tick exact."""
    spec = spec_from_dict(base_doc(lc, bit_order="lsb"))
    emitted = emit_header(spec, TimerTarget(crc_impl=crc_impl))
    program = build_harness(emitted, tmp_path, GCC)
    assert_harness_matches(emitted, program, np.random.default_rng(3), 40)


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("target, frame, ticks_type", [
    (TimerTarget(timer_bits=8, prescalers=(64,)), {"unit_us": 2000.0, "repeats": 1}, "uint8_t"),
    (TimerTarget(clock_hz=16_000_000, timer_bits=32, prescalers=(1,)), {}, "uint32_t"),
    (TimerTarget(clock_hz=1_000_000, prescalers=(1, 8)), {"unit_us": 1000.0}, "uint16_t"),
], ids=["8-bit", "32-bit", "1MHz"])
def test_timer_targets(tmp_path, target, frame, ticks_type):
    """8-, 16- and 32-bit timers: the ticks type fits, merged pulses longer than one timer
    period are split (8-bit case: 250-tick units, runs of 2 exceed 255), output stays exact."""
    spec = spec_from_dict(base_doc({"name": "nrz"}, **frame))
    emitted = emit_header(spec, target)
    assert emitted.model.ticks_type == ticks_type
    assert emitted.model.max_pulse_ticks <= target.timer_max_ticks
    program = build_harness(emitted, tmp_path, GCC)
    assert_harness_matches(emitted, program, np.random.default_rng(5), 40)


@st.composite
def spec_docs(draw) -> dict:
    """Random valid spec documents covering line codes, widths 1..64, signedness, scale,
    bytes fields, every check kind (random and catalogue CRCs), LFSR whitening, bit/byte
    order and repeats."""
    lc = draw(st.sampled_from(LINE_CODE_DOCS))
    bpb = bits_per_block(lc)
    block = bpb > 1
    byte_order = draw(st.sampled_from(["big", "little"]))

    def width(lo: int, hi: int, *, whole_bytes_if_wide: bool = False) -> int:
        w = draw(st.integers(lo, hi))
        if whole_bytes_if_wide and byte_order == "little" and w > 8:
            w = min(64, -(-w // 8) * 8)
        if block:
            w = max(bpb, min(hi - hi % bpb, -(-w // bpb) * bpb))
        return w

    pattern_bits = width(1, 16)
    sync_bits = width(4, 32)
    fields = []
    for i in range(draw(st.integers(1, 4))):
        w = width(1, 64, whole_bytes_if_wide=True)
        f = {"name": f"f{i}", "width_bits": w, "signed": draw(st.booleans())}
        if w <= 40 and draw(st.integers(0, 4)) == 0:  # physical values are floats
            f["scale"] = 0.5
        fields.append(f)
    if draw(st.booleans()):
        max_len = draw(st.integers(1, 7))
        lw = max(width(3, 8), max_len.bit_length())
        if block:
            lw = -(-max(lw, max_len.bit_length()) // bpb) * bpb
        fields.insert(draw(st.integers(0, len(fields))), {"name": "n", "width_bits": lw, "role": "length"})
        pos = next(i for i, f in enumerate(fields) if f["name"] == "n")
        fields.insert(draw(st.integers(pos + 1, len(fields))),
                      {"name": "data", "kind": "bytes", "max_len_bytes": max_len})
    kind = draw(st.sampled_from(["none", "sum8", "xor8", "fletcher16", "crc", "crc"]))
    check: dict = {"kind": kind, "covers": draw(st.sampled_from([["fields"], ["sync", "fields"]]))}
    if kind == "crc":
        models = [n for n, e in CATALOGUE.items() if e.params.width % bpb == 0]
        if draw(st.booleans()):
            check = {"model": draw(st.sampled_from(models)), "covers": check["covers"]}
        else:
            w = width(3, 64)
            check.update(width=w, poly=draw(st.integers(0, (1 << w) - 1)) | 1,
                         init=draw(st.integers(0, (1 << w) - 1)), refin=draw(st.booleans()),
                         refout=draw(st.booleans()), xorout=draw(st.integers(0, (1 << w) - 1)))
    doc_check = dict(check)
    cw = {"none": 0, "sum8": 8, "xor8": 8, "fletcher16": 16}.get(kind)
    if cw is None:
        cw = CATALOGUE[check["model"]].params.width if "model" in check else check["width"]
    if cw % 8 == 0 and cw and draw(st.booleans()):
        doc_check["byte_order"] = "little"
    white_kind = draw(st.sampled_from(["none", "pn9", "lfsr"]))
    whitening: dict = {"kind": white_kind,
                       "covers": draw(st.sampled_from([["fields"], ["check"], ["fields", "check"]]))}
    if white_kind == "lfsr":
        ww = draw(st.integers(2, 32))
        whitening.update(width=ww, poly=draw(st.integers(0, (1 << ww) - 1)) | 1,
                         seed=draw(st.integers(1, (1 << ww) - 1)))
    return {
        "frame": {"name": "hyp", "unit_us": draw(st.sampled_from([50.0, 100.0, 250.0, 333.5, 500.0,
                                                                  1e6 / 2400, 1000.0])),
                  "bit_order": draw(st.sampled_from(["msb", "lsb"])), "byte_order": byte_order,
                  "repeats": draw(st.integers(1, 3)),
                  "gap_us": draw(st.sampled_from([700.0, 5000.0, 12345.0]))},
        "line_code": lc,
        "preamble": {"pattern": draw(st.integers(0, (1 << pattern_bits) - 1)),
                     "pattern_bits": pattern_bits, "count": draw(st.integers(0, 3))},
        "sync": {"value": draw(st.integers(0, (1 << sync_bits) - 1)), "length_bits": sync_bits},
        "fields": fields,
        "check": doc_check,
        "whitening": whitening,
    }


@pytest.mark.slow
@needs_gcc
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                              HealthCheck.too_slow])
@given(doc=spec_docs(), crc_impl=st.sampled_from(["table256", "table16", "bitwise"]),
       seed=st.integers(0, 2**32 - 1))
def test_hypothesis_specs_bit_and_tick_exact(tmp_path_factory, doc, crc_impl, seed):
    """Hypothesis-generated specs compile clean and match the Python model exactly."""
    spec = spec_from_dict(doc)
    try:
        emitted = emit_header(spec, TimerTarget(crc_impl=crc_impl))
    except CodegenError:
        assume(False)
    program = build_harness(emitted, tmp_path_factory.mktemp("hyp"), GCC)
    assert_harness_matches(emitted, program, np.random.default_rng(seed), 30)


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", ["examples", "line-codes"])
def test_sanitizers_clean(tmp_path, name):
    """Under -fsanitize=address,undefined (gcc) the harness runs the same cases with no
    finding (any report aborts the process: -fno-sanitize-recover=all)."""
    flags = ["-fsanitize=address,undefined", "-fno-sanitize-recover=all", "-g"]
    if name == "examples":
        emitted_list = [emit_header(example_spec(n)[0]) for n in EXAMPLES]
    else:
        emitted_list = [emit_header(spec_from_dict(base_doc(lc)), TimerTarget(crc_impl=impl))
                        for lc, impl in zip(LINE_CODE_DOCS,
                                            itertools.cycle(["table256", "table16", "bitwise"]))]
    env = {"ASAN_OPTIONS": "detect_leaks=1:abort_on_error=1",
           "UBSAN_OPTIONS": "print_stacktrace=1:halt_on_error=1"}
    for i, emitted in enumerate(emitted_list):
        d = tmp_path / str(i)
        d.mkdir()
        program = build_harness(emitted, d, GCC, extra_flags=flags)
        err = assert_harness_matches(emitted, program, np.random.default_rng(i), 40, env=env)
        assert "runtime error" not in err and "Sanitizer" not in err


# --------------------------------------------------------------------------- C-level contracts
MULTI_TU_MAIN = """
#include "hive_scale.h"
#include "hive_scale.h" /* twice: the include guard holds */
size_t other_unit(uint8_t *out, size_t cap);
int main(void)
{
    struct hive_scale_fields f = {3u, 41250u, 346, 6u};
    uint8_t a[HIVE_SCALE_MAX_FRAME_BYTES];
    uint8_t b[HIVE_SCALE_MAX_FRAME_BYTES];
    size_t i;
    if (hive_scale_pack(&f, a, sizeof a) != HIVE_SCALE_FRAME_BITS) return 1;
    if (other_unit(b, sizeof b) != HIVE_SCALE_FRAME_BITS) return 2;
    for (i = 0; i < sizeof a; i++) if (a[i] != b[i]) return 3;
    return 0;
}
"""
MULTI_TU_IMPL = """
#define HIVE_SCALE_IMPLEMENTATION
#include "hive_scale.h"
#include "hive_scale.h"
size_t other_unit(uint8_t *out, size_t cap);
size_t other_unit(uint8_t *out, size_t cap)
{
    struct hive_scale_fields f = {3u, 41250u, 346, 6u};
    return hive_scale_pack(&f, out, cap);
}
"""


@pytest.mark.slow
@pytest.mark.parametrize("cc", COMPILERS)
def test_multi_translation_unit_link(tmp_path, cc):
    """Included from two .c files (one defines the IMPLEMENTATION) it links without duplicate
    symbols, and the CRC table exists once (nm shows one hive_scale_crc_table)."""
    emitted = emit_header(example_spec("hive_scale.toml")[0])
    (tmp_path / "hive_scale.h").write_text(emitted.text)
    (tmp_path / "main.c").write_text(MULTI_TU_MAIN)
    (tmp_path / "impl.c").write_text(MULTI_TU_IMPL)
    objs = []
    for src in ("main.c", "impl.c"):
        objs.append(compile_c(cc, [tmp_path / src], tmp_path / f"{src}.o",
                              flags=[*STRICT_FLAGS, "-O2", "-c"], include_dirs=[tmp_path]))
    exe = compile_c(cc, objs, tmp_path / "multi")
    assert subprocess.run([str(exe)]).returncode == 0
    nm = subprocess.run(["nm", str(exe)], capture_output=True, text=True, check=True).stdout
    assert nm.count("hive_scale_crc_table") == 1
    assert nm.count(" T hive_scale_pack") == 1


@pytest.mark.slow
@needs_gcc
def test_version_checks_stop_stale_headers(tmp_path):
    """<PREFIX>_REQUIRE_API_VERSION / _EXPECT_SPEC_HASH mismatches are #errors; matching
    values compile."""
    emitted = emit_header(example_spec("hive_scale.toml")[0])
    (tmp_path / "hive_scale.h").write_text(emitted.text)
    src = tmp_path / "v.c"
    src.write_text('#include "hive_scale.h"\nint main(void) { return 0; }\n')
    good = {"HIVE_SCALE_REQUIRE_API_VERSION": "1",
            "HIVE_SCALE_EXPECT_SPEC_HASH": emitted.model.spec_hash32}
    compile_c(GCC, [src], tmp_path / "ok", flags=STRICT_FLAGS, include_dirs=[tmp_path],
              defines=good)
    with pytest.raises(CodegenError, match="generated API version differs"):
        compile_c(GCC, [src], tmp_path / "bad1", flags=STRICT_FLAGS, include_dirs=[tmp_path],
                  defines={"HIVE_SCALE_REQUIRE_API_VERSION": "2"})
    with pytest.raises(CodegenError, match="different spec"):
        compile_c(GCC, [src], tmp_path / "bad2", flags=STRICT_FLAGS, include_dirs=[tmp_path],
                  defines={"HIVE_SCALE_EXPECT_SPEC_HASH": "0x12345678u"})


@pytest.mark.slow
@needs_gcc
def test_crc_catalogue_self_tests_in_c(tmp_path):
    """Every catalogue CRC (published check values over "123456789", Greg Cook's catalogue
    via ookframe.checks.CATALOGUE), in all three C implementations, passes its generated
    self-test: 3 x catalogue headers compiled into one program."""
    base = spec_from_dict(base_doc({"name": "nrz"}))
    names = []
    includes = []
    for i, (model_name, entry) in enumerate(CATALOGUE.items()):
        for impl in ("table256", "table16", "bitwise"):
            prefix = f"crc{i}_{impl}"
            spec = dataclasses.replace(base, name=prefix, check=dataclasses.replace(
                base.check, crc=Crc.from_params(entry.params).params))
            emitted = emit_header(spec, TimerTarget(crc_impl=impl))
            (tmp_path / emitted.filename).write_text(emitted.text)
            up = prefix.upper()
            includes.append(f"#define {up}_IMPLEMENTATION\n#define {up}_SELF_TEST\n"
                            f'#include "{emitted.filename}"')
            names.append((prefix, model_name))
    checks = "\n".join(f'    if (!{p}_self_test()) {{ puts("{n} {p}"); bad++; }}' for p, n in names)
    (tmp_path / "all.c").write_text("#include <stdio.h>\n" + "\n".join(includes)
                                    + f"\nint main(void)\n{{\n    int bad = 0;\n{checks}\n"
                                    "    return bad;\n}\n")
    exe = compile_c(GCC, [tmp_path / "all.c"], tmp_path / "all", flags=[*STRICT_FLAGS, "-O1"],
                    include_dirs=[tmp_path], timeout_s=240)
    proc = subprocess.run([str(exe)], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stdout
    assert len(names) == 3 * len(CATALOGUE) >= 300


@pytest.mark.slow
@pytest.mark.skipif(ARM_GCC is None or ARM_SIZE is None,
                    reason="arm-none-eabi-gcc not installed; Cortex-M0+ build skipped")
@pytest.mark.parametrize("name", EXAMPLES)
def test_cortex_m0plus_compiles(tmp_path, name):
    """Compile-only for Cortex-M0+ (-mcpu=cortex-m0plus -mthumb -Os -ffreestanding -c) with
    the strict warnings; the .text size is reported and plausible (< 4 KiB)."""
    emitted = emit_header(example_spec(name)[0])
    (tmp_path / emitted.filename).write_text(emitted.text)
    src = tmp_path / "impl.c"
    src.write_text(f"#define {emitted.model.PREFIX}_IMPLEMENTATION\n"
                   f'#include "{emitted.filename}"\n')
    obj = compile_c(ARM_GCC, [src], tmp_path / "impl.o", flags=[*STRICT_FLAGS, *CORTEX_M0PLUS_FLAGS],
                    include_dirs=[tmp_path])
    sizes = section_sizes(ARM_SIZE, obj)
    print(f"cortex-m0+ {name}: .text {sizes.get('.text', 0)} B, .rodata {sizes.get('.rodata', 0)} B")
    assert 200 < sizes[".text"] < 4096
