"""The run buffer transmitter on a simulated ATmega328P (avr-gcc + libsimavr harness).

tests/c/avr/tx_buffer.c fills the buffer with <prefix>_tx_start and lets Timer1 toggle
OC1A on every compare match (CTC mode, COM1A0; ATmega328P datasheet, Timer1 chapter, from
memory); the harness (tests/c/avr/simharness.c) records the pin with cycle stamps and the
compare ISR's cycles from its vector to the end of reti. Each example runs twice: with the
C ISR around <prefix>_tx_step, and with the header's assembly <PREFIX>_TX_AVR_ISR.
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import numpy as np
import pytest

from ookframe.bits import from_raw
from ookframe.codegen import TimerTarget, emit_header
from ookframe.codegen.model import AVR_ISR_CYCLES
from ookframe.codegen.toolchains import (
    AVR_FLAGS,
    CORTEX_M0PLUS_FLAGS,
    STRICT_FLAGS,
    compile_c,
    find_tool,
)
from ookframe.demo import example_names, example_text
from ookframe.errors import CodegenError
from tests.c import avr_run
from tests.conftest import example_spec

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(bool(avr_run.MISSING or avr_run.HARNESS_MISSING),
                                 reason="AVR toolchain or libsimavr missing")]

README = Path(__file__).resolve().parent.parent / "README.md"
#: the issue's target for the compare ISR, vector to end of reti
ISR_TARGET_CYCLES = 50


def _run(tmp_path, name: str, asm: bool):
    spec, values = example_spec(name)
    emitted = emit_header(spec)
    assert emitted.model.txbuf is not None
    run, changes = avr_run.run_tx_buffer(emitted, values, tmp_path, asm=asm)
    assert run.end == "done" and run.report[-1][0] == 0xD0
    errors = avr_run.edge_errors_cycles(emitted, values, changes)
    assert errors.size > 100 and np.abs(errors).max() == 0
    cycles = run.isr_cycles[avr_run.TIMER1_COMPA_VECTOR]
    assert cycles.size == changes.size  # one ISR per edge; the last one stops the timer
    return spec, emitted, cycles


@pytest.mark.parametrize("name", example_names())
def test_c_isr_edges_land_on_the_quantised_schedule(tmp_path, name):
    """With the C ISR every edge of the simulated pin lies on the Python quantised schedule
    to the CPU cycle (all repeats), the transmission ends, and the ISR stays far below the
    shortest pulse."""
    _, emitted, cycles = _run(tmp_path, name, asm=False)
    shortest = min(d.ticks for d in emitted.timing.durations) * emitted.timing.prescaler
    assert emitted.report()["run_buffer"]["shortest_interval_cycles"] == shortest  # type: ignore[index]
    assert f"shortest interval is {shortest} CPU cycles" in " ".join(
        line.lstrip(" *") for line in emitted.text.splitlines())
    print(f"{name}: C ISR max {cycles.max()} mean {cycles.mean():.1f} cycles")
    assert cycles.max() < shortest // 4


@pytest.mark.parametrize("name", example_names())
def test_asm_isr_within_50_cycles_and_exact(tmp_path, name):
    """With <PREFIX>_TX_AVR_ISR the edges are exact too, and the ISR costs what the header
    states: every edge the edge path, each copy but the last ends on the end-of-copy path,
    the last on the stop path; the worst is within the issue's 50 cycles."""
    spec, emitted, cycles = _run(tmp_path, name, asm=True)
    want = np.full(cycles.size, AVR_ISR_CYCLES["edge"])
    ends = (np.arange(1, spec.repeats + 1) * (cycles.size // spec.repeats)) - 1
    want[ends[:-1]] = AVR_ISR_CYCLES["copy_end"]
    want[ends[-1]] = AVR_ISR_CYCLES["stop"]
    print(f"{name}: asm ISR max {cycles.max()} mean {cycles.mean():.1f} cycles")
    np.testing.assert_array_equal(cycles, want)
    assert cycles.max() == AVR_ISR_CYCLES["worst"] <= ISR_TARGET_CYCLES
    assert f"at most {AVR_ISR_CYCLES['worst']} from vector to reti" in emitted.text


def test_asm_isr_only_for_a_16_bit_reload():
    """The assembly ISR assumes 16-bit reload values (Timer1); other widths get none, and
    the end mark is the reload type's top bit, so a copy's intervals stay below it."""
    spec, _ = example_spec("hive_scale.toml")
    text16 = emit_header(spec).text
    assert "#define HIVE_SCALE_TX_AVR_ISR(" in text16
    assert "#define HIVE_SCALE_TX_COPY_END 0x8000u" in text16
    assert "#define HIVE_SCALE_TX_MAX_INTERVAL_TICKS 32768u" in text16
    text32 = emit_header(spec, TimerTarget(timer_bits=32)).text
    assert "TX_AVR_ISR(" not in text32 and "#define HIVE_SCALE_TX_COPY_END 0x80000000u" in text32


def _readme_snippet() -> str:
    text = README.read_text(encoding="utf-8")
    start = text.index("### Generated C transmitter: run buffer")
    return re.findall(r"```c\n(.*?)```", text[start:text.index("\n### ", start + 1)],
                      flags=re.S)[0]


def test_readme_transmitter_snippet_builds_and_sends_exact_edges(tmp_path):
    """README's pasteable transmitter (at most 20 lines) compiles with avr-gcc under the
    strict flags, and in the simulator its first transmission has every edge on the
    quantised schedule of the values it states (raw values, converted with ookframe.bits.from_raw) and its ISR stays
    within the 50 cycles."""
    spec, _ = example_spec("hive_scale.toml")
    emitted = emit_header(spec)
    assert emitted.timing.prescaler == 8 and emitted.timing.clock_hz == 8_000_000  # as it says
    (tmp_path / emitted.filename).write_text(emitted.text)
    source = tmp_path / "readme_tx.c"
    snippet = _readme_snippet()
    assert snippet.count("\n") <= 20
    source.write_text(snippet)
    raw = {m[0]: int(m[1]) for m in re.findall(r"\.(\w+) = (\d+)", snippet)}
    assert sorted(raw) == sorted(f.name for f in spec.fields)
    values = {f.name: from_raw(f, raw[f.name]) for f in spec.fields}
    assert avr_run.AVR_GCC is not None
    elf = compile_c(avr_run.AVR_GCC, [source], tmp_path / "readme_tx.elf",
                    flags=[*STRICT_FLAGS, *AVR_FLAGS], include_dirs=[tmp_path],
                    defines={"F_CPU": "8000000UL"})
    want = avr_run.schedule_edge_cycles(emitted, values)
    run = avr_run.simulate(avr_run.build_harness(tmp_path), elf, clock_hz=8_000_000,
                           isr=(avr_run.TIMER1_COMPA_VECTOR,), watch=("B1",),
                           max_cycles=int(want[-1] * 1.1) + 100_000)
    changes = avr_run.level_changes(*run.edges["B1"])
    assert changes.size > want.size
    np.testing.assert_array_equal(changes[:want.size] - changes[0], want)
    cycles = run.isr_cycles[avr_run.TIMER1_COMPA_VECTOR]
    assert cycles.max() == AVR_ISR_CYCLES["worst"] <= ISR_TARGET_CYCLES


ARM_GCC = find_tool("arm-none-eabi-gcc")
RAM_SIZES = Path(__file__).resolve().parent / "c" / "tx_ram_sizes.c"


@pytest.mark.parametrize("name", example_names())
def test_stated_ram_equals_sizeof(tmp_path, name):
    """The RAM emit states for both transmitters (header comment and report) equals sizeof
    as avr-gcc (8-bit AVR) and arm-none-eabi-gcc (Cortex-M0+, AAPCS) lay the structs out;
    a wrong figure fails the build of tests/c/tx_ram_sizes.c."""
    spec, _ = example_spec(name)
    emitted = emit_header(spec)
    report = emitted.report()
    (tmp_path / emitted.filename).write_text(emitted.text)
    buf = report["run_buffer"]
    stream = report["streaming"]["ram_bytes"]
    assert isinstance(buf, dict) and isinstance(stream, dict)
    assert f"{buf['ram_bytes']['avr']} B on 8-bit AVR" in emitted.text
    assert f"{stream['avr']} B on 8-bit AVR" in emitted.text
    m = emitted.model
    builds = [("avr", avr_run.AVR_GCC, [*AVR_FLAGS, "-c"])]
    if ARM_GCC is not None:
        builds.append(("arm32", ARM_GCC, list(CORTEX_M0PLUS_FLAGS)))
    for abi, cc, flags in builds:
        assert cc is not None
        compile_c(cc, [RAM_SIZES], tmp_path / f"{abi}.o", flags=[*STRICT_FLAGS, *flags],
                  include_dirs=[tmp_path],
                  defines={"OOK_HEADER": f'"{emitted.filename}"', "OOK_PREFIX": m.prefix,
                           "OOK_UPREFIX": m.PREFIX, "OOK_STREAM_BYTES": str(stream[abi]),
                           "OOK_TXBUF_BYTES": str(buf["ram_bytes"][abi])})
    with pytest.raises(CodegenError, match="negative|size"):
        compile_c(avr_run.AVR_GCC, [RAM_SIZES], tmp_path / "wrong.o",
                  flags=[*STRICT_FLAGS, *AVR_FLAGS, "-c"], include_dirs=[tmp_path],
                  defines={"OOK_HEADER": f'"{emitted.filename}"', "OOK_PREFIX": m.prefix,
                           "OOK_UPREFIX": m.PREFIX, "OOK_STREAM_BYTES": str(stream["avr"] + 1)})


HOST_CC = find_tool("cc") or find_tool("gcc")
TXBUF_HOST = Path(__file__).resolve().parent / "c" / "txbuf_host.c"


def _host_steps(emitted, values, directory: Path) -> tuple[bool, list[int], int]:
    """Build tests/c/txbuf_host.c for ``values`` with the host compiler (strict flags) and
    return (tx_start's result, every tx_step value, busy after the last step)."""
    import subprocess

    assert HOST_CC is not None
    m = emitted.model
    (directory / emitted.filename).write_text(emitted.text)
    (directory / "demo_values.h").write_text(avr_run.demo_values_header(emitted, values))
    prog = compile_c(HOST_CC, [TXBUF_HOST], directory / "txbuf_host",
                     flags=[*STRICT_FLAGS, "-O2"], include_dirs=[directory],
                     defines={"OOK_HEADER": f'"{emitted.filename}"', "OOK_PREFIX": m.prefix,
                              "OOK_UPREFIX": m.PREFIX, f"{m.PREFIX}_IMPLEMENTATION": None})
    out = subprocess.run([str(prog)], capture_output=True, text=True, check=True,
                         timeout=60).stdout.split("\n")
    steps = [int(t) for t in out[1].split()] if out[0] == "start 1" else []
    return out[0] == "start 1", steps, int(out[-2].split()[1])


@pytest.mark.parametrize(("name", "timer_bits"), [("coldframe_vent.toml", 8),
                                                  ("hive_scale.toml", 16),
                                                  ("tank_level.toml", 24),
                                                  ("gate_sensor.toml", 32)])
def test_tx_step_sequence_on_the_host(tmp_path, name, timer_bits):
    """On the host, for 8-, 16-, 24- and 32-bit timers (reload types uint8/16/32_t, end
    mark the top bit), tx_step yields every edge-to-edge interval of the Python quantised
    schedule minus 1, all repeats, the gaps included, then 0 with busy cleared."""
    spec, values = example_spec(name)
    emitted = emit_header(spec, TimerTarget(timer_bits=timer_bits, tx_mode="buffer"))
    ok, steps, busy = _host_steps(emitted, values, tmp_path)
    edges = avr_run.schedule_edge_cycles(emitted, values) // emitted.timing.prescaler
    assert ok and busy == 0
    assert steps == [*(np.diff(edges) - 1).tolist(), 0]


def test_tx_start_refuses_an_interval_at_the_end_mark(tmp_path):
    """An interval inside a copy longer than <PREFIX>_TX_MAX_INTERVAL_TICKS (32768 on a
    16-bit timer: its reload would carry the end mark) makes tx_start return false with
    busy 0. coldframe_vent with a 1 ms gap at 16 MHz, prescaler 1: its demo frame has
    3-unit NRZ runs of 3 x 13333 = 39999 ticks (unit 833.3 µs), while the gap interval
    (about 1833 µs, 29333 ticks) fits one period (arithmetic); at 8 MHz the same frame
    goes out."""
    from ookframe.spec_io import spec_and_defaults_from_dict

    text = example_text("coldframe_vent.toml").replace("gap_us = 6000", "gap_us = 1000")
    assert "gap_us = 1000" in text
    spec, values = spec_and_defaults_from_dict(tomllib.loads(text))
    fast = emit_header(spec, TimerTarget(clock_hz=16_000_000, prescalers=(1,), tx_mode="buffer"))
    assert fast.model.txbuf is not None and fast.model.txbuf["max_interval_ticks"] == 32768
    assert np.diff(avr_run.schedule_edge_cycles(fast, values)).max() == 39999
    (tmp_path / "fast").mkdir()
    assert _host_steps(fast, values, tmp_path / "fast")[::2] == (False, 0)
    slow = emit_header(spec, TimerTarget(clock_hz=8_000_000, prescalers=(1,), tx_mode="buffer"))
    (tmp_path / "slow").mkdir()
    assert _host_steps(slow, values, tmp_path / "slow")[0]
