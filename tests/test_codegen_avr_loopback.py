"""Loop back through two simulated ATmega328Ps and the channel model (issue 10 item 5).

The transmitter board runs tests/c/avr/tx_buffer.c (run buffer filled by <prefix>_tx_start,
Timer1 toggling OC1A = PB1 on compare match, the header's assembly compare ISR); the
libsimavr harness records PB1's level changes with their CPU cycles. Those edges, as a
pulse train, go through ookframe's channel model (``apply_channel`` with a preset: mark
bias, quench grid, jitter, idle noise before the burst) and then drive ICP1 = PB0 of the
receiver board, tests/c/avr/rx_firmware.c with the generated receiver, at exact cycles
(tests/c/avr_rx.py). The fields the receiver reports must be the ones sent. Both boards
use one header (``emit --side both``).
"""

from __future__ import annotations

import numpy as np
import pytest

from ookframe.channel import apply_channel, get_preset
from ookframe.codegen import emit_header
from ookframe.demo import example_names
from ookframe.frame import random_values, raw_values
from ookframe.pulses import PulseTrain
from tests.c import avr_run, avr_rx
from tests.conftest import example_spec

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(bool(avr_run.MISSING or avr_run.HARNESS_MISSING),
                                 reason="AVR toolchain or libsimavr missing")]

#: transmissions per example, each with its own random field values
TRANSMISSIONS = 2


def _send(spec, emitted, channel_name: str, rng, directory
          ) -> tuple[list[tuple[np.ndarray, np.ndarray]], list[dict[str, object]]]:
    """Run the transmitter board for TRANSMISSIONS random value sets; return each one's
    pin edges after the channel, as (levels, durations_us) for the receiver board, and the
    raw values sent. The recorded edges are first checked against the quantised schedule
    (0 cycles of error)."""
    channel = get_preset(channel_name)
    trains, sent_raw = [], []
    for k in range(TRANSMISSIONS):
        values = random_values(spec, rng)
        (directory / f"tx{k}").mkdir()
        run, changes = avr_run.run_tx_buffer(emitted, values, directory / f"tx{k}", asm=True)
        assert run.end == "done"
        np.testing.assert_array_equal(avr_run.edge_errors_cycles(emitted, values, changes), 0)
        levels = (np.arange(changes.size - 1) % 2 == 0).astype(np.uint8)  # starts rising
        sent = PulseTrain(levels, np.diff(changes) * 1e6 / emitted.timing.clock_hz)
        received = apply_channel(sent, channel, rng)
        assert not np.array_equal(received.durations_us[-sent.durations_us.size:],
                                  sent.durations_us)  # the channel did change the edges
        trains.append((received.levels, received.durations_us))
        sent_raw.append(raw_values(spec, values))
    return trains, sent_raw


@pytest.mark.parametrize("name", example_names())
def test_loopback_through_the_channel(tmp_path, name):
    """budget-superregen (8 µs mark bias, 2.5 µs quench grid, 4 µs jitter, 20 ms of idle
    noise before each burst; channel presets, common practice, no source): every copy of
    every transmission comes back with the fields sent, in order (the C receiver loses no
    copy on this preset, README's measured table)."""
    spec, defaults = example_spec(name)
    emitted = emit_header(spec, side="both")
    trains, sent_raw = _send(spec, emitted, "budget-superregen", np.random.default_rng(5),
                             tmp_path)
    rx = avr_rx.run_receiver(emitted, defaults, trains, tmp_path)
    assert rx.frames == [v for v in sent_raw for _ in range(spec.repeats)]
    assert rx.counters["check_failures"] == 0 and rx.counters["overruns"] == 0


@pytest.mark.parametrize("name", ["hive_scale.toml", "gate_sensor.toml"])
def test_loopback_at_the_edge_of_range(tmp_path, name):
    """edge-of-range-superregen adds a 2 % sender clock error, glitches and mark dropouts
    (channel presets, common practice, no source): copies may be lost, but every frame the
    receiver reports is one that was sent, in order, and each transmission gets through
    (3 and 5 repeats)."""
    spec, defaults = example_spec(name)
    emitted = emit_header(spec, side="both")
    trains, sent_values = _send(spec, emitted, "edge-of-range-superregen",
                                np.random.default_rng(7), tmp_path)
    rx = avr_rx.run_receiver(emitted, defaults, trains, tmp_path)
    assert len({repr(v) for v in sent_values}) == TRANSMISSIONS  # tell them apart
    for frame in rx.frames:
        assert frame in sent_values, f"reported a frame that was not sent: {frame}"
    index = [sent_values.index(frame) for frame in rx.frames]
    print(f"{name}: {len(index)} of {TRANSMISSIONS * spec.repeats} copies back")
    assert index == sorted(index) and set(index) == set(range(TRANSMISSIONS))
