"""The generated C receiver (``emit --side rx``) against the reference decoder.

Frames must equal the reference decoder's (``ookframe.decode``) on clean trains of every
example and every registered line code; the header must compile clean with the strict
warning set on gcc, clang, avr-gcc and arm-none-eabi-gcc; random edge streams must never
crash it or overfill its queue.
"""

from __future__ import annotations

import subprocess

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ookframe.codegen import emit_header
from ookframe.codegen.host_rx import decode_c, host_receiver
from ookframe.codegen.toolchains import (
    AVR_FLAGS,
    CORTEX_M0PLUS_FLAGS,
    STRICT_FLAGS,
    compile_c,
    find_tool,
)
from ookframe.decode import decode
from ookframe.errors import CodegenError
from ookframe.frame import encode, random_values
from ookframe.pulses import PulseTrain
from ookframe.spec_io import spec_from_dict
from tests.conftest import example_spec as _example
from tests.test_codegen import LINE_CODE_DOCS, base_doc

EXAMPLES = ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml", "coldframe_vent.toml",
            "tank_level.toml"]
GCC = find_tool("gcc")
needs_gcc = pytest.mark.skipif(GCC is None, reason="gcc not installed")


def example_spec(name: str):
    """The spec of the shipped example ``name``."""
    return _example(name)[0]


@pytest.fixture(autouse=True)
def _cache(tmp_path_factory, monkeypatch):
    monkeypatch.setenv("OOKFRAME_CACHE", str(tmp_path_factory.getbasetemp() / "rx-cache"))


def _same_frames(spec, n: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    for _ in range(n):
        train = encode(spec, random_values(spec, rng))
        ref = [f for f in decode(spec, train) if f.crc_ok]
        got = [f for f in decode_c(spec, train) if f.crc_ok]
        assert [f.payload_hex for f in got] == [f.payload_hex for f in ref]
        assert [f.raw for f in got] == [f.raw for f in ref]
        assert len(got) == spec.repeats


def test_default_side_is_the_transmitter():
    """``emit`` without --side keeps today's transmitter-only header."""
    spec = example_spec("hive_scale.toml")
    assert "_rx_edge" not in emit_header(spec).text
    assert "_rx_edge" in emit_header(spec, side="rx").text


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_clean_frames_equal_reference(name):
    """Every copy of random frames of each example decodes to the reference's fields."""
    _same_frames(example_spec(name), 12, 7)


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("lc", LINE_CODE_DOCS, ids=lambda d: "-".join(map(str, d.values())))
def test_every_line_code_equals_reference(lc):
    """Each registered line code (and the variants the C generator tests) decodes bit-exact,
    or is refused with a CodegenError naming what is unsupported."""
    spec = spec_from_dict(base_doc(lc))
    try:
        emit_header(spec, side="rx")
    except CodegenError as exc:
        pytest.fail(f"receiver refused {lc}: {exc}")
    _same_frames(spec, 4, 3)


def _compile_rx_strict(tmp_path, tool, flags, e, **switches) -> None:
    """Compile the emitted receiver ``e`` under STRICT_FLAGS with ``tool`` (skip if it is
    not installed), its implementation on and ``<PREFIX>_<name>`` defined as each value of
    ``switches`` (None: defined empty)."""
    cc = find_tool(tool)
    if cc is None:
        pytest.skip(f"{tool} not installed")
    (tmp_path / e.filename).write_text(e.text)
    src = tmp_path / "t.c"
    src.write_text(f'#include "{e.filename}"\n')
    P = e.model.PREFIX
    compile_c(cc, [src], tmp_path / "t.o", flags=(*STRICT_FLAGS, *flags), include_dirs=[tmp_path],
              defines={f"{P}_IMPLEMENTATION": None,
                       **{f"{P}_{k}": v for k, v in switches.items()}})

@pytest.mark.slow
@pytest.mark.parametrize("name", EXAMPLES)
@pytest.mark.parametrize("tool,flags", [("gcc", ("-c",)), ("clang", ("-c",)),
                                        ("avr-gcc", (*AVR_FLAGS, "-c")),
                                        ("arm-none-eabi-gcc", CORTEX_M0PLUS_FLAGS)])
def test_strict_compile(tmp_path, name, tool, flags):
    """-Wall -Wextra -Wpedantic -Wconversion -Wshadow -Werror -std=c99 on every compiler,
    with <PREFIX>_RX_AVR_ICP1 defined (its ISRs compile on avr-gcc, vanish elsewhere)."""
    _compile_rx_strict(tmp_path, tool, flags, emit_header(example_spec(name), side="rx"),
                       RX_AVR_ICP1=None)


@pytest.mark.slow
@pytest.mark.parametrize("name", EXAMPLES)
@pytest.mark.parametrize("tool,flags", [("gcc", ("-c",)), ("clang", ("-c",)),
                                        ("avr-gcc", (*AVR_FLAGS, "-c"))])
def test_receive_only_build_has_no_transmitter(tmp_path, name, tool, flags):
    """``emit --side rx``: the receive-only build (its default, <PREFIX>_WANT_TX 0)
    compiles clean with the strict warning set and, by nm, defines none of the symbols
    the transmit-only header's object has beyond the check and whitening code both sides
    share (no pack, tx_init, tx_next, tx_start, code-word tables); with <PREFIX>_WANT_TX 1
    it has them. -O0, so unused static functions are kept and seen."""
    cc = find_tool(tool)
    nm = find_tool("avr-nm" if tool == "avr-gcc" else "nm")
    if cc is None or nm is None:
        pytest.skip(f"{tool} or its nm not installed")
    spec = example_spec(name)
    syms = {}
    for label, side, want_tx in (("tx", "tx", None), ("rx", "rx", None), ("rx_tx", "rx", "1")):
        e = emit_header(spec, side=side)
        d = tmp_path / label
        d.mkdir()
        (d / e.filename).write_text(e.text)
        (d / "t.c").write_text(f'#include "{e.filename}"\n')
        P = e.model.PREFIX
        defines = {f"{P}_IMPLEMENTATION": None}
        if want_tx is not None:
            defines[f"{P}_WANT_TX"] = want_tx
        obj = compile_c(cc, [d / "t.c"], d / "t.o", flags=(*STRICT_FLAGS, *flags, "-O0"),
                        include_dirs=[d], defines=defines)
        out = subprocess.run([nm, str(obj)], capture_output=True, text=True, check=True).stdout
        syms[label] = {line.split()[-1] for line in out.splitlines()
                       if line.strip() and line.split()[-1].startswith(f"{e.model.prefix}_")}
    p = emit_header(spec).model.prefix
    shared = {f"{p}_{s}" for s in ("check_byte", "check_finish", "crc_table", "reflect",
                                   "lfsr_byte", "div_round")}
    tx_api = {f"{p}_pack", f"{p}_tx_init", f"{p}_tx_next"}
    assert tx_api <= syms["tx"] and tx_api <= syms["rx_tx"]
    assert not (syms["rx"] & syms["tx"]) - shared, sorted((syms["rx"] & syms["tx"]) - shared)
    assert f"{p}_rx_take" in syms["rx"]


def test_avr_icp1_section_follows_the_prescaler():
    """The ready-made ATmega ISRs select Timer1's clock for the header's prescaler (TCCR1B
    CS12..CS10: /8 = CS11, /64 = CS11|CS10; ATmega328P datasheet, from memory), only on
    AVR when asked for, and the transmit-only header has none."""
    e = emit_header(example_spec("hive_scale.toml"), side="rx")
    P = e.model.PREFIX
    want = {8: "(1u << CS11)", 64: "((1u << CS11) | (1u << CS10))"}[e.timing.prescaler]
    assert f"#define {P}_RX_AVR_CLOCK_SELECT ((uint8_t){want})" in e.text
    assert f"#if defined({P}_RX_AVR_ICP1) && defined(__AVR__)" in e.text
    assert "ISR(TIMER1_CAPT_vect)" in e.text and "ISR(TIMER1_COMPB_vect)" in e.text
    tx = emit_header(example_spec("hive_scale.toml"))
    assert "RX_AVR_ICP1" not in tx.text and "ISR(TIMER1_CAPT_vect)" not in tx.text


@pytest.mark.slow
@needs_gcc
def test_jittered_copy_loss_close_to_reference():
    """Under the budget-superregen preset the C receiver's copies lie within the
    reference's 95 % Clopper-Pearson interval (same seeds)."""
    from ookframe.channel import get_preset
    from ookframe.stress import run_stress

    spec = example_spec("hive_scale.toml")
    ch = get_preset("budget-superregen")
    ref = run_stress(spec, ch, 300, seed=5)
    got = run_stress(spec, ch, 300, seed=5, decoder=decode_c)
    lo, hi = ref.per_ci95
    assert lo - 1e-9 <= got.per <= hi + 1e-9


EDGES_TRIED = [0]


@pytest.mark.slow
@needs_gcc
@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(st.integers(0, 1), st.integers(0, 70000)), max_size=3000),
       st.sampled_from(EXAMPLES))
def test_random_edges_never_break_it(pulses, name):
    """Random level / tick streams (zero-length, huge, same-level pulses) never crash the
    receiver; every frame it reports is complete and the queue drains."""
    spec = example_spec(name)
    rx = host_receiver(spec)
    lv = np.array([p[0] for p in pulses], np.uint8)
    du = np.array([max(p[1], 1) for p in pulses], float) * rx.tick_us
    EDGES_TRIED[0] += lv.size
    print(f"rx fuzz: {EDGES_TRIED[0]} edges tried so far")
    if lv.size == 0:
        return
    frames = rx.decode(PulseTrain(lv, du))
    for f in frames:
        assert set(f.raw) == {fl.name for fl in spec.fields}


def test_no_compiler_is_a_clear_error(monkeypatch, tmp_path):
    """Without any C compiler the host build raises CodegenError (no traceback in the CLI)."""
    from ookframe.codegen.host_rx import find_cc

    monkeypatch.setenv("PATH", str(tmp_path))
    monkeypatch.delenv("OOKFRAME_CC", raising=False)
    with pytest.raises(CodegenError, match="no C compiler"):
        find_cc()


@pytest.mark.slow
@needs_gcc
def test_stress_cli_decoder_c(tmp_path):
    """``stress --decoder c --json`` reports both decoders on the same seeds."""
    import contextlib
    import io
    import json

    from ookframe.cli.main import main

    out = tmp_path / "o.json"
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(["stress", str(_example_path("gate_sensor.toml")), "--decoder", "c",
                     "--frames", "50", "--workers", "1", "--preset", "ideal", "--json"])
    assert code == 0
    d = json.loads(buf.getvalue())
    out.write_text(buf.getvalue())
    assert d["reference"]["ok"] == d["c"]["ok"] == 50


def _example_path(name: str):
    from pathlib import Path

    return Path(__file__).resolve().parents[1] / "examples" / name


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_long_random_and_adversarial_streams(name):
    """200 000 random pulses (uniform 1..3 units, glitches, huge gaps) and real frames cut
    and spliced with noise never crash the receiver; every reported frame is complete.
    Random generator seeded (numpy PCG64)."""
    spec = example_spec(name)
    rx = host_receiver(spec)
    rng = np.random.default_rng(11)
    n = 200_000
    unit = spec.unit_us
    du = rng.choice([0.05, 0.7, 1.0, 1.5, 2.0, 3.2, 40.0], n) * unit * rng.uniform(0.8, 1.2, n)
    lv = (np.arange(n) % 2).astype(np.uint8)
    rx.decode(PulseTrain(lv, du))
    pieces = []
    for _ in range(200):
        t = encode(spec, random_values(spec, rng))
        cut = rng.integers(1, len(t) + 1)
        pieces.append(t.durations_us[:cut])
        pieces.append(rng.uniform(0.1, 3.0, rng.integers(1, 20)) * unit)
    d = np.concatenate(pieces)
    frames = rx.decode(PulseTrain((np.arange(d.size) % 2).astype(np.uint8), d))
    for f in frames:
        assert set(f.raw) == {fl.name for fl in spec.fields}
    print(f"rx stream: {n + d.size} edges")


SAN_MAIN = """
#include <stdio.h>
int main(void)
{{
    uint32_t x = 12345u;
    unsigned long i;
    unsigned long frames = 0u;
    struct {p}_fields f;
    struct {p}_rx_quality q;
    {p}_rx_init();
    for (i = 0u; i < {n}ul; i++) {{
        uint16_t t;
        x = x * 1664525u + 1013904223u;
        t = (uint16_t)((x >> 8) % ((x >> 28) < 2u ? 65535u : 4u * {unit}u));
        {p}_rx_edge((uint8_t)(i & 1u), t);
        if ((x >> 24) == 7u) {{
            {p}_rx_idle();
        }}
        while ({p}_rx_ready()) {{
            if ({p}_rx_take(&f, &q)) {{
                frames++;
            }}
        }}
    }}
    printf("%lu %lu\\n", i, frames);
    return 0;
}}
"""


@pytest.mark.slow
@pytest.mark.parametrize("name", EXAMPLES)
def test_sanitized_random_edges(tmp_path, name):
    """2 000 000 pseudo-random edges (LCG; zero, tiny, unit-sized and saturated pulses,
    idle calls) through the receiver built with clang -fsanitize=address,undefined
    -fno-sanitize-recover: no sanitizer report, exit 0."""
    import subprocess

    clang = find_tool("clang")
    if clang is None:
        pytest.skip("clang not installed")
    e = emit_header(example_spec(name), side="rx")
    (tmp_path / e.filename).write_text(e.text)
    src = tmp_path / "m.c"
    P, p = e.model.PREFIX, e.model.prefix
    src.write_text(f'#define {P}_IMPLEMENTATION\n#include "{e.filename}"\n'
                   + SAN_MAIN.format(p=p, n=2_000_000, unit=e.model.rx.unit16 // 16))
    exe = tmp_path / "m"
    compile_c(clang, [src], exe, flags=("-std=c99", "-O1", "-g", "-fsanitize=address,undefined",
                                        "-fno-sanitize-recover=all"), include_dirs=[tmp_path])
    proc = subprocess.run([str(exe)], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert "runtime error" not in proc.stderr
    assert proc.stdout.split()[0] == "2000000"


def _cli_json(argv: list[str]) -> tuple[int, str]:
    import contextlib
    import io

    from ookframe.cli.main import main

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(argv)
    return code, buf.getvalue()


@pytest.mark.slow
@needs_gcc
def test_sweep_and_margin_cli_decoder_c():
    """``sweep --decoder c`` and ``margin --decoder c`` report the C receiver beside the
    reference on the same seeds (JSON); on the ideal channel both decode every frame."""
    import json

    path = str(_example_path("gate_sensor.toml"))
    code, text = _cli_json(["sweep", path, "--vary", "jitter_us=0,5", "--frames", "40",
                            "--decoder", "c", "--workers", "1", "--json"])
    assert code == 0
    d = json.loads(text)
    for side in ("reference", "c"):
        pts = d[side]["specs"][0]["points"]
        assert [p["value"] for p in pts] == [0.0, 5.0]
        assert pts[0]["ok"] == 40
    code, text = _cli_json(["margin", path, "--decoder", "c", "--impairments", "dropout_prob",
                            "--target-per", "0.2", "--frames", "40", "--resolution", "0.2",
                            "--workers", "1", "--json"])
    assert code == 0
    m = json.loads(text)["margins"][0]
    assert 0.0 <= m["c_per_at_limit"] <= 1.0
    assert len(m["c_per_ci95_at_limit"]) == 2


@pytest.mark.parametrize("cmd", [["stress"], ["sweep", "--vary", "jitter_us=0,5"],
                                 ["margin", "--impairments", "jitter_us"]])
def test_decoder_c_without_compiler_is_a_clear_error(monkeypatch, tmp_path, capsys, cmd):
    """``--decoder c`` with no C compiler: exit code non-zero, message names the problem,
    no traceback, before any simulation runs."""
    from ookframe.cli.main import main

    monkeypatch.setenv("PATH", str(tmp_path))
    monkeypatch.delenv("OOKFRAME_CC", raising=False)
    host_receiver.cache_clear()
    argv = [cmd[0], str(_example_path("gate_sensor.toml")), *cmd[1:], "--decoder", "c",
            "--workers", "1"]
    code = main(argv)
    e = capsys.readouterr().err
    assert code != 0
    assert "no C compiler" in e
    assert "Traceback" not in e


def _one_edge_moved(spec, rng, shift_units: float, after_level: int | None = None,
                    edges: int = 1):
    """A clean train of ``spec`` with one edge inside the first copy's body moved by
    ``shift_units`` (past halfway to the next grid point, so its hard decision is wrong),
    or None when the two pulses it bounds would get too short. ``after_level``: only an
    edge ending a pulse of that level; ``edges``: that many edges moved, apart."""
    from ookframe.decode.head import build_head

    t = encode(spec, random_values(spec, rng))
    u = spec.unit_us
    ends = np.cumsum(t.durations_us)
    body_us = build_head(spec).body_chip * u
    gaps = np.flatnonzero(t.durations_us > 10 * u)
    stop = int(gaps[0]) if gaps.size else t.durations_us.size
    where = (ends[:-1] > body_us + u) & (np.arange(ends.size - 1) < stop - 2)
    if after_level is not None:
        where &= t.levels[:-1] == after_level
    d = t.durations_us.astype(float)
    if edges == 1:
        picks = [int(rng.choice(np.flatnonzero(where)))]
    else:
        picks = sorted(int(j) for j in rng.choice(np.flatnonzero(where), edges, replace=False))
        if min(np.diff(picks)) < 3:
            return None
    for j in picks:
        sh = float(rng.choice([-1.0, 1.0])) * shift_units * u
        if min(d[j] + sh, d[j + 1] - sh) < 0.5 * u:
            return None
        d[j] += sh
        d[j + 1] -= sh
    return PulseTrain(t.levels, d)


def _trains_the_reference_corrects(spec, tries: int = 80):
    """Yield (train, reference frames) of trains with one body edge moved 0.62 unit
    (numpy PCG64 seed 3) whose first frame the reference decoder corrects."""
    rng = np.random.default_rng(3)
    for _ in range(tries):
        train = _one_edge_moved(spec, rng, 0.62)
        if train is None:
            continue
        ref = decode(spec, train, include_bad=True)
        if ref and ref[0].corrected:
            yield train, ref


@needs_gcc
@pytest.mark.parametrize("name", ["hive_scale.toml", "tank_level.toml", "coldframe_vent.toml"])
def test_check_aided_recovery_matches_reference(name):
    """Trains with one body edge moved 0.62 unit (its hard decision wrong, 0.38 unit off
    the grid): wherever the reference decoder corrects the frame (``corrected`` = 1), the C
    receiver returns the same payload with the check passing and ``corrected`` = 1.
    numpy PCG64 seed 3; the reference is ``ookframe.decode`` of this repository."""
    spec = example_spec(name)
    needed = agreed = 0
    for train, ref in _trains_the_reference_corrects(spec):
        needed += 1
        got = decode_c(spec, train)
        assert got, "the C receiver lost the frame"
        assert got[0].crc_ok
        assert got[0].payload_hex == ref[0].payload_hex
        assert got[0].corrected == ref[0].corrected
        agreed += 1
    assert needed >= 3  # the trains do exercise the recovery
    print(f"{name}: {agreed} corrected frames agree with the reference")


@needs_gcc
def test_recovery_stays_within_the_trials():
    """The recovery's limits are the reference's (hive_scale: CRC-16/KERMIT over 64 bits,
    HD 4 (Koopman's CRC tables, from memory) -> 2 flips; 2**16 / 4096 = 16 trials), and on
    a badly jittered train no frame reports more edges moved than that."""
    spec = example_spec("hive_scale.toml")
    e = emit_header(spec, side="rx")
    assert e.model.rx.recovery_flips == 2
    assert e.model.rx.recovery_trials == 16  # 2**16 / 4096
    rng = np.random.default_rng(5)
    t = encode(spec, random_values(spec, rng))
    d = t.durations_us * rng.uniform(0.7, 1.3, t.durations_us.size)
    for f in decode_c(spec, PulseTrain(t.levels, d)):
        assert f.corrected <= 2


#: the host build with the check-aided recovery left out (``<PREFIX>_RX_RECOVERY 0``)
NO_RECOVERY = (("RX_RECOVERY", "0"),)


@needs_gcc
@pytest.mark.parametrize("name", ["hive_scale.toml", "tank_level.toml", "coldframe_vent.toml"])
def test_recovery_switched_off(name):
    """<PREFIX>_RX_RECOVERY 0: clean frames of random values (numpy PCG64 seed 7) still
    decode to the reference's fields with ``corrected`` = 0, and on trains with one body
    edge moved 0.62 unit (seed 3, those the reference corrects) the copy holding it is lost
    exactly as the reference decoder of this repository loses it with ``decoder.max_flips``
    = 0 (the same passing payloads, none corrected): its frame comes out failing the check."""
    import dataclasses

    spec = example_spec(name)
    off = dataclasses.replace(spec, decoder=dataclasses.replace(spec.decoder, max_flips=0))
    rx = host_receiver(spec, NO_RECOVERY)
    rng = np.random.default_rng(7)
    for _ in range(4):
        train = encode(spec, random_values(spec, rng))
        got = rx.decode(train)
        ref = [f for f in decode(spec, train) if f.crc_ok]
        assert [f.raw for f in got] == [f.raw for f in ref] and len(got) == spec.repeats
        assert all(f.crc_ok and f.corrected == 0 for f in got)
    lost = 0
    for train, _ in _trains_the_reference_corrects(spec):
        every = rx.decode(train)
        got = [f for f in every if f.crc_ok]
        ref_off = [f for f in decode(off, train) if f.crc_ok]
        assert [f.payload_hex for f in got] == [f.payload_hex for f in ref_off]
        assert all(f.corrected == 0 for f in got + ref_off)
        assert len(got) == spec.repeats - 1 and len(every) == spec.repeats  # one failed check
        lost += 1
    assert lost >= 3  # the trains do need the recovery


#: mark-space bed specs with a check that leaves safe flips (base_doc: CRC-16/KERMIT over
#: sync + fields, 2 flips, 16 trials): pulse width 1:2 and 2:3, where a moved edge changes
#: a mark and a space by one unit each and both stay allowed lengths
PWM_BEDS = [{"name": "pwm"}, {"name": "pwm", "short_units": 2, "long_units": 3}]


def _frames(frames) -> list[tuple[str, bool, int]]:
    return [(f.payload_hex, f.crc_ok, f.corrected) for f in frames]


@needs_gcc
@pytest.mark.parametrize("lc", PWM_BEDS, ids=lambda d: "-".join(map(str, d.values())))
def test_mark_space_recovery_matches_reference(lc):
    """Pulse width with CRC-16/KERMIT: trains with one body edge ending a mark moved 0.62
    unit (the mark a unit off, the space after it a unit off the other way, 0.38 unit off
    the grid), numpy PCG64 seed 3: the C receiver returns the reference decoder's frames
    (payload, check, ``corrected``) on every train, and the reference does correct some
    (``corrected`` = 1); the same trains unmoved come out with ``corrected`` = 0. The
    reference is ``ookframe.decode`` of this repository."""
    spec = spec_from_dict(base_doc(lc))
    e = emit_header(spec, side="rx")
    assert (e.model.rx.recovery_flips, e.model.rx.recovery_trials) == (2, 16)
    rng = np.random.default_rng(3)
    corrected = 0
    for _ in range(40):
        train = _one_edge_moved(spec, rng, 0.62, after_level=1)
        if train is None:
            continue
        ref = decode(spec, train, include_bad=True)
        assert _frames(decode_c(spec, train)) == _frames(ref)
        corrected += sum(f.corrected == 1 for f in ref)
    assert corrected >= 3  # the trains do exercise the recovery
    rng = np.random.default_rng(3)
    for _ in range(4):
        train = _one_edge_moved(spec, rng, 0.0, after_level=1)
        got = decode_c(spec, train)
        assert _frames(got) == _frames(decode(spec, train, include_bad=True))
        assert len(got) == spec.repeats and all(f.crc_ok and f.corrected == 0 for f in got)
    print(f"{lc}: {corrected} corrected frames agree with the reference")


@needs_gcc
def test_mark_space_recovery_limits():
    """Pulse width 1:2 with CRC-16/KERMIT (2 flips), numpy PCG64 seed 3: with two mark ends
    moved 0.62 unit the C receiver passes the reference decoder's frames, ``corrected`` = 2
    included where the reference corrects the copy; with three (more than the flips) both
    lose the copy holding them (the same passing frames, one copy fewer). Built with
    <PREFIX>_RX_RECOVERY 0 the C loses a copy the reference corrects, as the reference does
    with ``decoder.max_flips`` = 0. The reference is ``ookframe.decode`` of this repository."""
    import dataclasses

    spec = spec_from_dict(base_doc({"name": "pwm"}))
    off = dataclasses.replace(spec, decoder=dataclasses.replace(spec.decoder, max_flips=0))
    rx_off = host_receiver(spec, NO_RECOVERY)
    rng = np.random.default_rng(3)
    two = lost = switched = 0
    for edges in (2, 3):
        for _ in range(25):
            train = _one_edge_moved(spec, rng, 0.62, after_level=1, edges=edges)
            if train is None:
                continue
            ref = [f for f in decode(spec, train) if f.crc_ok]
            got = [f for f in decode_c(spec, train) if f.crc_ok]
            assert _frames(got) == _frames(ref)
            if edges == 2:
                two += sum(f.corrected == 2 for f in ref)
                if any(f.corrected for f in ref):
                    plain = [f for f in rx_off.decode(train) if f.crc_ok]
                    assert _frames(plain) == _frames([f for f in decode(off, train) if f.crc_ok])
                    assert len(plain) == spec.repeats - 1
                    switched += 1
            else:
                assert len(ref) == spec.repeats - 1
                lost += 1
    assert two >= 3 and lost >= 3 and switched >= 3


@needs_gcc
def test_pulse_distance_gets_no_recovery_as_the_reference():
    """Pulse distance (every mark one length) with CRC-16/KERMIT: every edge bounds a mark,
    so no edge can move a unit with both pulses keeping allowed lengths; the reference
    decoder's recovery never moves one (``corrected`` = 0 on trains with one body edge
    moved 0.62 or 1.1 unit, numpy PCG64 seed 3) and the receiver is emitted without it
    (its header says why), passing the reference's frames on the 0.62-unit trains."""
    spec = spec_from_dict(base_doc({"name": "pulse_distance"}))
    e = emit_header(spec, side="rx")
    assert e.model.rx.recovery_flips == 0 and "no edge of this code can move" in e.text
    rng = np.random.default_rng(3)
    for shift in (0.62, 1.1):
        for _ in range(10):
            train = _one_edge_moved(spec, rng, shift)
            if train is None:
                continue
            ref = decode(spec, train, include_bad=True)
            assert all(f.corrected == 0 for f in ref)
            if shift < 1.0:  # (past a unit the two read different frames: not the recovery)
                got = decode_c(spec, train)
                assert _frames([f for f in got if f.crc_ok]) \
                    == _frames([f for f in ref if f.crc_ok])


@pytest.mark.slow
@pytest.mark.parametrize("recovery", ["1", "0"])
@pytest.mark.parametrize("tool,flags", [("gcc", ("-c",)), ("clang", ("-c",)),
                                        ("avr-gcc", (*AVR_FLAGS, "-c"))])
def test_strict_compile_mark_space_recovery(tmp_path, tool, flags, recovery):
    """The pulse-width bed spec's receiver (with the recovery, and with <PREFIX>_RX_RECOVERY
    0) compiles clean under the strict warning set on gcc, clang and avr-gcc."""
    e = emit_header(spec_from_dict(base_doc(PWM_BEDS[0])), side="rx")
    assert e.model.rx.recovery_flips
    _compile_rx_strict(tmp_path, tool, flags, e, RX_RECOVERY=recovery)


def pwm_bed_file(directory):
    """greenhouse_probe as a bed for the mark-space recovery: pulse width 1:2 (a moved edge
    keeps both pulses allowed lengths) and CRC-16/KERMIT over its 24 field bits (2 flips,
    16 trials); written to ``directory``, its path returned."""
    text = _example_path("greenhouse_probe.toml").read_text()
    for old, new in (('long_units = 3', 'long_units = 2'),
                     ('model = "CRC-8/SMBUS"', 'model = "CRC-16/KERMIT"')):
        assert old in text
        text = text.replace(old, new)
    path = directory / "greenhouse_bed.toml"
    path.write_text(text)
    return path


@pytest.mark.slow
@needs_gcc
def test_queue_fuzz_sanitized_mark_space_recovery(tmp_path):
    """test_queue_fuzz_sanitized's 60 000 random and adversarial edges (seed 7) through the
    pulse-width bed's receiver with its recovery (pwm_bed_file), built with gcc
    -fsanitize=address,undefined: no sanitizer report, the invariants (chip counts and
    recovery candidates included) hold after every edge, the queue did overrun."""
    import os
    import sys
    from pathlib import Path

    from ookframe.codegen.host_rx import build_host_receiver
    from ookframe.spec_io import load_spec

    asan = subprocess.run([GCC, "-print-file-name=libasan.so"], capture_output=True,
                          text=True).stdout.strip()
    if not asan or not Path(asan).is_file():
        pytest.skip("gcc has no libasan")
    path = pwm_bed_file(tmp_path)
    spec = load_spec(path)
    assert emit_header(spec, side="rx").model.rx.recovery_flips == 2
    lib = build_host_receiver(spec, sanitize=True)
    env = dict(os.environ, LD_PRELOAD=asan, ASAN_OPTIONS="detect_leaks=0",
               UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1")
    root = Path(__file__).resolve().parents[1]
    proc = subprocess.run([sys.executable, "-m", "tests.rx_fuzz_driver", str(path), str(lib),
                           "60000", "7"], capture_output=True, text=True, timeout=300,
                          env=env, cwd=root)
    assert proc.returncode == 0, (proc.stdout + proc.stderr)[-3000:]
    assert "runtime error" not in proc.stderr
    assert "AddressSanitizer" not in proc.stderr
    words = proc.stdout.split()
    assert int(words[1]) >= 60000 and int(words[5]) > 0
    print(f"rx sanitized queue fuzz pwm bed: {proc.stdout.strip()}")


@needs_gcc
@pytest.mark.parametrize("offset,builds", [(0.3, True), (0.5, True), (0.2, False)])
def test_candidate_cost_range_is_asserted(tmp_path, monkeypatch, offset, builds):
    """The recovery's candidate cost, 512 - offset * 1024 / unit for an edge at least the
    guard offset (in tenths of a unit) and at most 0.5 unit off its grid point, is a
    uint8_t: the header's compile-time assert lets the reference's guard of 0.3 unit
    (worst cost 205) and 0.5 through and stops the build at 0.2 (worst 308: it would
    wrap, as anything below 0.25 unit would)."""
    from ookframe.decode import framer

    monkeypatch.setattr(framer, "RECOVERY_MIN_OFFSET", offset)
    e = emit_header(example_spec("hive_scale.toml"), side="rx")
    assert f"_RX_MIN_OFFSET_10THS {round(offset * 10)} " in e.text
    build = lambda: _compile_rx_strict(tmp_path, "gcc", ("-c",), e)  # noqa: E731
    if builds:
        build()
    else:
        with pytest.raises(CodegenError, match="assert_rx_cand_cost"):
            build()


@needs_gcc
def test_recovery_switch_refused_without_recovery(tmp_path):
    """A spec whose receiver has no recovery (gate_sensor: an 8-bit checksum) stops the build with
    <PREFIX>_RX_RECOVERY 1 (#error naming why) and builds with 0."""
    e = emit_header(example_spec("gate_sensor.toml"), side="rx")
    assert e.model.rx.recovery_flips == 0
    with pytest.raises(CodegenError, match="has no check-aided recovery"):
        _compile_rx_strict(tmp_path, "gcc", ("-c",), e, RX_RECOVERY="1")
    _compile_rx_strict(tmp_path, "gcc", ("-c",), e, RX_RECOVERY="0")


@needs_gcc
def test_permille_saturates_at_the_edges(tmp_path):
    """<p>_rx_permille (the quality struct's worst deviation and clock error, num / den in
    1/1000): exact below 2^22 / 1000, saturated at its top (65535 for the deviation, 32767
    for the clock error) where a 16-bit result would wrap (ratio 65.536 and above, e.g.
    a deviation of 100 units or the 32-bit extremes), 0 for den = 0; above 2^22 the inputs
    are shifted down together, so the ratio keeps within 0.1 %. tests/c/rx_permille.c."""
    import subprocess as sp
    from pathlib import Path

    e = emit_header(example_spec("hive_scale.toml"), side="rx")
    (tmp_path / e.filename).write_text(e.text)
    src = Path(__file__).resolve().parent / "c" / "rx_permille.c"
    exe = compile_c(GCC, [src], tmp_path / "permille", flags=(*STRICT_FLAGS, "-O2"),
                    include_dirs=[tmp_path],
                    defines={"OOK_HEADER": f'"{e.filename}"', "OOK_PREFIX": e.model.prefix,
                             f"{e.model.PREFIX}_IMPLEMENTATION": None})
    u32 = 0xFFFFFFFF
    cases = [(0, 16, 0xFFFF), (8, 16, 0xFFFF), (65535, 1000, 0xFFFF), (65536, 1000, 0xFFFF),
             (65537, 1000, 0xFFFF), (100 * 1600, 1600, 0xFFFF), (0x3FFFFF, 64, 0xFFFF),
             (0x3FFFFF, 0x3FFFFF, 0xFFFF), (0x400000, 0x400000, 0xFFFF), (u32, 1, 0xFFFF),
             (u32, u32, 0xFFFF), (u32, 0x10000, 0xFFFF), (u32, 0x100000, 0xFFFF),
             (12, 0, 0xFFFF), (32767, 1000, 0x7FFF), (32768, 1000, 0x7FFF),
             (600 * 16, 1600, 0x7FFF)]
    out = sp.run([str(exe)], input="".join(f"{n} {d} {t}\n" for n, d, t in cases),
                 capture_output=True, text=True, check=True, timeout=30).stdout.split()
    for (n, d, top), got in zip(cases, map(int, out), strict=True):
        want = 0 if d == 0 else min(top, n * 1000 // d)
        if n <= 0x3FFFFF or want == top:
            assert got == want, (n, d, top, got)
        else:
            assert abs(got - want) <= want // 1000 + 1, (n, d, top, got)


PARITY_PRESETS = ("ideal", "budget-superregen", "edge-of-range-superregen", "superhet")


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_copy_loss_parity_at_presets(name):
    """The C receiver loses no more copies than the reference decoder's 95 % CI
    (Clopper-Pearson) allows, on the same seeds, at every channel preset (300
    transmissions). A C receiver better than the CI's lower bound passes too."""
    from ookframe import get_preset
    from ookframe.stress import run_stress
    from ookframe.stress.runner import copy_loss

    spec = example_spec(name)
    host_receiver(spec)
    seen = []
    for preset in PARITY_PRESETS:
        ch = get_preset(preset)
        ref = run_stress(spec, ch, 300, seed=0)
        c = run_stress(spec, ch, 300, seed=0, decoder=decode_c)
        (lr, (_, hi)), (lc, _) = copy_loss(ref, spec.repeats), copy_loss(c, spec.repeats)
        seen.append(f"{preset}: ref {lr:.3f} (<= {hi:.3f}) C {lc:.3f}")
        assert lc <= hi, seen[-1]
    print(f"{name}: " + "; ".join(seen))


def _shrunk_or_glitched(name: str, seed: int, what: str):
    """A train of ``name`` (a mark-space code) whose first copy has, with "shrunk" in
    ``what``, one body pulse of one unit shrunk to 0.22 unit (its neighbours widened
    alike, as edge jitter does) and, with "glitch", one later body pulse of three units
    cut 0.8 unit in by a 0.22-unit glitch of the other level; 0.22 unit lies below the
    glitch filter and above half of it."""
    from ookframe.decode.head import build_head

    spec = example_spec(name)
    u = spec.unit_us
    assert spec.decoder.glitch_fraction / 2 < 0.22 < spec.decoder.glitch_fraction
    rng = np.random.default_rng(seed)
    t = encode(spec, random_values(spec, rng))
    lv, d = list(t.levels), list(t.durations_us)
    body = build_head(spec).units.size + 2
    i = next(i for i in range(body, body + 40) if abs(d[i] - u) < 1e-6)
    if "shrunk" in what:
        d[i - 1] += 0.39 * u
        d[i + 1] += 0.39 * u
        d[i] = 0.22 * u
    if "glitch" in what:
        i = next(i for i in range(i + 3, i + 60) if abs(d[i] - 3 * u) < 1e-6)
        lv[i:i + 1] = [lv[i], 1 - lv[i], lv[i]]
        d[i:i + 1] = [0.8 * u, 0.22 * u, 1.98 * u]
    return spec, PulseTrain(np.array(lv, np.uint8), np.array(d))


@needs_gcc
@pytest.mark.parametrize("name", ["greenhouse_probe.toml", "gate_sensor.toml"])
@pytest.mark.parametrize("what", ["shrunk", "glitch"])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_mark_space_keeps_a_shrunk_pulse_and_drops_a_glitch(name, what, seed):
    """A pulse jitter shrank below the glitch filter is kept, a glitch as short inside a
    longer run is dropped: every copy decodes, the same as the reference decoder's (its
    low-filter reading, decode/framer.py, keeps the shrunk pulse)."""
    spec, train = _shrunk_or_glitched(name, seed, what)
    ref = [f for f in decode(spec, train) if f.crc_ok]
    got = [f for f in decode_c(spec, train) if f.crc_ok]
    assert len(got) == spec.repeats
    assert [f.raw for f in got] == [f.raw for f in ref]


@needs_gcc
@pytest.mark.parametrize("name", ["greenhouse_probe.toml", "gate_sensor.toml"])
def test_shrunk_pulse_and_glitch_in_one_copy(name):
    """Both in one copy: the C receiver keeps the one and drops the other, so that copy
    decodes too (the reference reads a stretch at one filter or the other and loses it;
    the C is allowed to beat it)."""
    spec, both = _shrunk_or_glitched(name, 0, "shrunk glitch")
    got = [f for f in decode_c(spec, both) if f.crc_ok]
    assert len(got) == spec.repeats
    assert len({str(f.raw) for f in got}) == 1


def _glitch_near_a_start(name: str, seed: int, cut: float, width: float):
    """A train of ``name`` (a mark-space code) whose first copy has its first longest body
    space (of the first 40 body pulses) cut ``cut`` unit in by a mark glitch ``width``
    unit wide: the space before the glitch lies below the glitch filter and above half of
    it, the glitch above the filter. Returns (spec, the train, the train as sent)."""
    from ookframe.decode.head import build_head

    spec = example_spec(name)
    u = spec.unit_us
    assert spec.decoder.glitch_fraction / 2 < cut < spec.decoder.glitch_fraction < width
    t = encode(spec, random_values(spec, np.random.default_rng(seed)))
    lv, d = list(t.levels), list(t.durations_us)
    body = build_head(spec).units.size + 2
    longest = max(x for x, lv_ in zip(d[body:body + 40], lv[body:body + 40], strict=True)
                  if lv_ == 0 and x < 5 * u)
    i = next(i for i in range(body, body + 40) if lv[i] == 0 and abs(d[i] - longest) < 1e-6)
    lv[i:i + 1] = [0, 1, 0]
    d[i:i + 1] = [cut * u, width * u, d[i] - (cut + width) * u]
    return spec, PulseTrain(np.array(lv, np.uint8), np.array(d)), t


@needs_gcc
@pytest.mark.parametrize("name", ["greenhouse_probe.toml", "gate_sensor.toml"])
@pytest.mark.parametrize(("cut", "width"), [(0.22, 0.49), (0.28, 0.4)])
@pytest.mark.parametrize("seed", [0, 2])
def test_mark_space_drops_the_sliver_before_a_glitch(name, cut, width, seed):
    """A mark glitch just after a long space starts leaves a sliver of space below the
    glitch filter between the mark before and the glitch (gate_sensor at its glitch-rate
    margin, seed 0, the copy at 0.528 s: M1 s0.22 M0.49 s2.29 for M1 s3). The reference
    drops the sliver, the mark before and the glitch make one pulse and its repair moves
    that end back; the C read every copy the same but this one: the pulse after the sliver
    (the glitch) fit a one-unit run loosely, so the sliver was kept as a space and the
    pair misread. Now the pulse after must also fit from the sliver's start at the grid
    point the pulse before ends on, where the glitch lies most of a unit short. (Seed 1
    is left out: there the reference takes a misread of the glitched copy whose XOR-8
    passes.)"""
    spec, train, sent = _glitch_near_a_start(name, seed, cut, width)
    (raw,) = {str(f.raw) for f in decode(spec, sent) if f.crc_ok}
    ref = [str(f.raw) for f in decode(spec, train) if f.crc_ok]
    got = [str(f.raw) for f in decode_c(spec, train) if f.crc_ok]
    assert ref == [raw] * spec.repeats
    assert got == ref


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_copy_loss_parity_at_jitter_margin(name):
    """At the jitter margin ``run_margin`` finds for PER < 0.05 (200 transmissions per
    point, seed 0) the C receiver loses no more copies than the reference's 95 % CI
    allows, on the same seeds. (Manchester and 3-of-6 lost copies whose chips slipped at
    one edge past halfway until the receiver held each pulse for the reference's repair,
    rx_repair.)"""
    from ookframe.stress.margin import run_at_margins, run_margin
    from ookframe.stress.runner import copy_loss

    spec = example_spec(name)
    host_receiver(spec)
    m = run_margin(spec, 0.05, impairments=["jitter_us"], n_frames=200, resolution=0.1)
    (row,), (c,) = m.rows, run_at_margins(spec, m, decode_c)
    assert row.at_limit is not None and c is not None
    (lr, (_, hi)), (lc, _) = copy_loss(row.at_limit, spec.repeats), copy_loss(c, spec.repeats)
    print(f"{name}: jitter_us {row.limit:.3g}: ref {lr:.3f} (<= {hi:.3f}) C {lc:.3f}")
    assert lc <= hi


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_copy_loss_parity_at_drift_margins(name):
    """At both clock-drift margins ``run_margin`` finds for PER < 0.05 (200 transmissions
    per point, seed 0; where the whole search range passes, its end) the C receiver loses
    no more copies than the reference's 95 % CI allows, on the same seeds."""
    from ookframe.stress.margin import run_at_margins, run_margin
    from ookframe.stress.runner import copy_loss

    spec = example_spec(name)
    host_receiver(spec)
    m = run_margin(spec, 0.05, impairments=["drift_pct_per_s"], n_frames=200, resolution=0.1)
    assert [r.sign for r in m.rows] == [1, -1]
    seen = []
    for row, c in zip(m.rows, run_at_margins(spec, m, decode_c), strict=True):
        assert row.at_limit is not None and c is not None
        (lr, (_, hi)), (lc, _) = copy_loss(row.at_limit, spec.repeats), copy_loss(c, spec.repeats)
        seen.append(f"drift_pct_per_s {row.limit:.4g}: ref {lr:.3f} (<= {hi:.3f}) C {lc:.3f}")
        assert lc <= hi, seen[-1]
    print(f"{name}: " + "; ".join(seen))


#: the margin impairments without a parity test of their own above
OTHER_MARGINS = ["mark_bias_us", "clock_error_pct", "quant_step_us", "glitch_rate_per_ms",
                 "dropout_prob"]


#: margin rows where the C receiver is known to lose more copies than the reference's
#: 95 % CI allows (the test fails when such a row passes, so a fix removes it here). None
#: now: gate_sensor at its glitch-rate margin (0.0316 half-unit glitches per ms) lost
#: 0.417 of copies against ref 0.364 (<= 0.395) until the low-filter rule also checked the
#: pulse after a short one from the short one's start (0.384;
#: test_mark_space_drops_the_sliver_before_a_glitch)
KNOWN_MARGIN_GAPS: set[tuple[str, str]] = set()


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_copy_loss_parity_at_other_margins(name):
    """At every margin ``run_margin`` finds for PER < 0.05 (200 transmissions per point,
    seed 0; both signs of the signed ones) of mark bias, clock error, quantisation, glitch
    rate and dropout, the C receiver loses no more copies than the reference's 95 % CI
    allows, on the same seeds. (The mark-space codes lost every copy at their mark-bias
    margins, about 0.8 unit, where the bias leaves 0.2-unit pulses under the glitch
    filter, until the low-filter rule also took the short pulse with the pulse after it
    from the end of the pulse before, a first pulse while hunting, and a short last mark
    before the gap.)"""
    from ookframe.stress.margin import MARGIN_IMPAIRMENTS, run_at_margins, run_margin
    from ookframe.stress.runner import copy_loss

    assert set(OTHER_MARGINS) == set(MARGIN_IMPAIRMENTS) - {"jitter_us", "drift_pct_per_s"}
    spec = example_spec(name)
    host_receiver(spec)
    m = run_margin(spec, 0.05, impairments=OTHER_MARGINS, n_frames=200, resolution=0.1)
    assert len(m.rows) == 7
    seen, bad = [], []
    for row, c in zip(m.rows, run_at_margins(spec, m, decode_c), strict=True):
        assert row.at_limit is not None and c is not None, row.impairment
        (lr, (_, hi)), (lc, _) = copy_loss(row.at_limit, spec.repeats), copy_loss(c, spec.repeats)
        seen.append(f"{row.impairment} {row.limit:.4g}: ref {lr:.3f} (<= {hi:.3f}) C {lc:.3f}")
        if (lc > hi) != ((name, row.impairment) in KNOWN_MARGIN_GAPS):
            bad.append(seen[-1])
    print(f"{name}: " + "; ".join(seen))
    assert not bad, (bad, "a row of KNOWN_MARGIN_GAPS that now passes must leave it")


@pytest.mark.slow
@needs_gcc
@pytest.mark.parametrize("name", EXAMPLES)
def test_queue_fuzz_sanitized(name, tmp_path):
    """60 000 random and adversarial edges (tests/rx_fuzz_driver.py: random pulses and
    levels, frames cut, jittered and sent back to back, stretches without rx_take so the
    queue overruns, idle calls) edge by edge through the receiver built with gcc
    -fsanitize=address,undefined -fno-sanitize-recover=all, loaded by ctypes in a child
    process with the ASan runtime preloaded: no sanitizer report, the receiver's
    invariants (queue fill <= depth, indices, mode, phase, unit, bit and chip counts,
    recovery candidates) hold after every edge, every frame taken is well-formed, and the
    queue did overrun (the full-queue path ran)."""
    import os
    import subprocess
    import sys
    from pathlib import Path

    from ookframe.codegen.host_rx import build_host_receiver

    asan = subprocess.run([GCC, "-print-file-name=libasan.so"], capture_output=True,
                          text=True).stdout.strip()
    if not asan or not Path(asan).is_file():
        pytest.skip("gcc has no libasan")
    spec_path = _example_path(name)
    lib = build_host_receiver(example_spec(name), sanitize=True)
    env = dict(os.environ, LD_PRELOAD=asan, ASAN_OPTIONS="detect_leaks=0",
               UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1")
    root = Path(__file__).resolve().parents[1]
    proc = subprocess.run([sys.executable, "-m", "tests.rx_fuzz_driver", str(spec_path),
                           str(lib), "60000", "7"], capture_output=True, text=True,
                          timeout=300, env=env, cwd=root)
    assert proc.returncode == 0, (proc.stdout + proc.stderr)[-3000:]
    assert "runtime error" not in proc.stderr
    assert "AddressSanitizer" not in proc.stderr
    words = proc.stdout.split()
    edges, overruns = int(words[1]), int(words[5])
    assert edges >= 60000
    assert overruns > 0
    print(f"rx sanitized queue fuzz {name}: {proc.stdout.strip()}")
