"""The run buffer transmitter on a simulated ATmega328P (avr-gcc + libsimavr harness).

tests/c/avr/tx_buffer.c fills the buffer with <prefix>_tx_start and lets Timer1 toggle
OC1A on every compare match (CTC mode, COM1A0; ATmega328P datasheet, Timer1 chapter, from
memory); the harness (tests/c/avr/simharness.c) records the pin with cycle stamps and the
compare ISR's cycles from its vector to the end of reti.
"""

from __future__ import annotations

import numpy as np
import pytest

from ookframe.codegen import emit_header
from tests.c import avr_run
from tests.conftest import example_spec

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(bool(avr_run.MISSING or avr_run.HARNESS_MISSING),
                                 reason="AVR toolchain or libsimavr missing")]


@pytest.mark.parametrize("name", ["hive_scale.toml", "coldframe_vent.toml"])
def test_buffer_edges_land_on_the_quantised_schedule(tmp_path, name):
    """Every edge of the simulated pin lies on the Python quantised schedule to the CPU
    cycle (all repeats), the transmission ends, and the compare ISR stays far below the
    shortest pulse."""
    spec, values = example_spec(name)
    emitted = emit_header(spec)
    assert emitted.model.txbuf is not None
    harness = avr_run.build_harness(tmp_path)
    elf = avr_run.build_firmware(emitted, values, tmp_path, source=avr_run.TX_BUFFER_FIRMWARE,
                                 name="txb.elf")
    run = avr_run.simulate(harness, elf, clock_hz=emitted.timing.clock_hz,
                           isr=(avr_run.TIMER1_COMPA_VECTOR,), watch=("B1",))
    assert run.end == "done" and run.report[-1][0] == 0xD0
    changes = avr_run.level_changes(*run.edges["B1"])
    errors = avr_run.edge_errors_cycles(emitted, values, changes)
    assert errors.size > 100 and np.abs(errors).max() == 0
    cycles = run.isr_cycles[avr_run.TIMER1_COMPA_VECTOR]
    assert cycles.size == changes.size  # one ISR per edge; the last one stops the timer
    shortest = min(d.ticks for d in emitted.timing.durations) * emitted.timing.prescaler
    print(f"{name}: ISR max {cycles.max()} mean {cycles.mean():.1f} cycles")
    assert cycles.max() < shortest // 4
