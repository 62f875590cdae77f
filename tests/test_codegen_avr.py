"""Tests for ookframe.codegen on a simulated ATmega328P (avr-gcc + simavr).

The firmware (tests/c/avr/firmware.c) transmits the demo frame from a Timer1 compare
interrupt driven by the generated tx_next; simavr records the pin as a VCD, which is read
with ookframe.captures and decoded with ookframe.decode.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from ookframe.captures import read_capture
from ookframe.cli.main import main
from ookframe.codegen import TimerTarget, emit_header
from ookframe.decode import decode
from ookframe.demo import DEMO_SPEC
from ookframe.frame import values_equal
from tests.c import avr_run
from tests.conftest import example_spec

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(bool(avr_run.MISSING),
                                 reason=f"AVR toolchain missing: {', '.join(avr_run.MISSING)}")]

EXAMPLES_DIR = Path(__file__).resolve().parent.parent / "examples"
EXAMPLES = ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml", "tank_level.toml",
            "coldframe_vent.toml"]


@pytest.mark.parametrize("name", [DEMO_SPEC, "coldframe_vent.toml", "tank_level.toml"])
def test_simulated_avr_transmits_the_frame(tmp_path, name):
    """The ATmega328P firmware's pin trace (simavr VCD, read by ookframe.captures) decodes
    with the reference decoder to the values it sent, every repeat with a good check, and
    every edge lies within +-1 timer tick of the Python quantised schedule."""
    spec, values = example_spec(name)
    emitted = emit_header(spec)
    result = avr_run.run(emitted, values, tmp_path)
    frames = decode(spec, read_capture(result.trace, signal="TX"))
    assert len(frames) == spec.repeats
    assert all(f.crc_ok and values_equal(spec, f.fields, values) for f in frames)
    errors = avr_run.edge_errors_ticks(emitted, values, result.trace)
    assert errors.size > 100
    assert np.abs(errors).max() <= 1.0
    cycles = avr_run.tx_next_cycles(emitted, result.trace)
    shortest_pulse_cycles = min(d.ticks for d in emitted.timing.durations) * \
        emitted.timing.prescaler
    print(f"{name}: code flash {result.code_flash_bytes} B, RAM {result.code_ram_bytes} B, "
          f"tx_next max {cycles.max():.0f} cycles, worst edge {np.abs(errors).max():.2f} ticks")
    assert cycles.max() < shortest_pulse_cycles  # the ISR keeps up with the shortest pulse
    assert 0 < result.code_flash_bytes < 4096 and 0 < result.code_ram_bytes < 128


def test_cli_decodes_the_simavr_trace(tmp_path, capsys):
    """``ookframe decode SPEC trace.vcd --signal TX --json`` reads the simavr VCD (timescale
    10 ns, several signals) and reports every repeat with its fields."""
    spec, values = example_spec(DEMO_SPEC)
    result = avr_run.run(emit_header(spec), values, tmp_path)
    code = main(["decode", str(EXAMPLES_DIR / DEMO_SPEC), str(result.trace), "--signal", "TX",
                 "--json"])
    frames = json.loads(capsys.readouterr().out)
    assert code == 0 and len(frames) == spec.repeats
    assert all(f["crc_ok"] and values_equal(spec, f["fields"], values) for f in frames)


@pytest.mark.parametrize("crc_impl", ["table256", "table16", "bitwise"])
@pytest.mark.parametrize("name", EXAMPLES)
def test_avr_gcc_compiles_every_example(tmp_path, name, crc_impl):
    """Every example builds for the ATmega328P with the strict warnings (avr-gcc 5.4, int is
    16 bits there); the CRC implementations trade flash as documented (256 > 16 > bitwise)."""
    spec, values = example_spec(name)
    emitted = emit_header(spec, TimerTarget(crc_impl=crc_impl))
    elf = avr_run.build_firmware(emitted, values, tmp_path)
    assert elf.is_file()


def test_crc_impl_flash_order(tmp_path):
    """For CRC-16/KERMIT (hive_scale) flash use falls from table256 to table16 to bitwise."""
    spec, values = example_spec("hive_scale.toml")
    flash = {}
    for impl in ("table256", "table16", "bitwise"):
        d = tmp_path / impl
        d.mkdir()
        elf = avr_run.build_firmware(emit_header(spec, TimerTarget(crc_impl=impl)), values, d)
        flash[impl] = avr_run.avr_flash_ram(avr_run.section_sizes(avr_run.AVR_SIZE, elf))[0]
    print(flash)
    assert flash["table256"] > flash["table16"] > flash["bitwise"]
    assert flash["table256"] - flash["table16"] >= 2 * (256 - 16) - 64


def test_simulated_avr_split_gap_on_an_8_bit_timer(tmp_path):
    """hive_scale for an 8-bit timer: its 8 ms repeat gap spans several timer periods; the
    simulated pin still decodes to every repeat and each edge is within +-1 tick of the
    Python schedule (which holds the split gap)."""
    spec, values = example_spec("hive_scale.toml")
    emitted = emit_header(spec, TimerTarget(timer_bits=8))
    assert emitted.model.timing.gap_pieces > 1
    result = avr_run.run(emitted, values, tmp_path)
    frames = decode(spec, read_capture(result.trace, signal="TX"))
    assert len(frames) == spec.repeats
    assert all(f.crc_ok and values_equal(spec, f.fields, values) for f in frames)
    errors = avr_run.edge_errors_ticks(emitted, values, result.trace)
    assert errors.size > 100 and np.abs(errors).max() <= 1.0
