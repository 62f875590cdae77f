"""AVR cost of the generated C: flash/RAM (avr-size, firmware minus an empty baseline),
cycles per tx_next and per pack (measured in simavr by pin toggles), and the worst TX edge
error against the Python quantised schedule, in CPU cycles. Second table: the run buffer
transmitter (tests/c/avr/tx_buffer.c in the libsimavr harness), RAM of both transmitters
as the header states it, compare ISR cycles (vector to end of reti) with the C ISR and with
<PREFIX>_TX_AVR_ISR, and the worst edge error.

Run: python bench/avr_cost.py   (skips with a message when avr-gcc or simavr is missing)
Ratios: tx_next cycles / the baseline stub's cycles measured the same way in the same run;
assembly ISR worst / C ISR worst, both measured in the same run.
"""

from __future__ import annotations

import sys
import tempfile
import tomllib
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from ookframe.codegen import TimerTarget, emit_header  # noqa: E402
from ookframe.demo import example_names, example_text  # noqa: E402
from ookframe.spec_io import spec_and_defaults_from_dict  # noqa: E402
from tests.c import avr_run  # noqa: E402


def main() -> int:
    if avr_run.MISSING:
        print(f"skipped: AVR toolchain missing ({', '.join(avr_run.MISSING)})")
        return 0
    print("ATmega328P @ 8 MHz, avr-gcc -Os, tables in flash (PROGMEM); sizes in bytes")
    print(f"{'spec':<22}{'crc':<10}{'prescaler':>9}{'flash':>7}{'RAM':>5}{'pack cyc':>10}"
          f"{'tx_next max':>12}{'mean':>7}{'stub':>6}{'ratio':>7}{'edge err cyc':>13}")
    for name in example_names():
        spec, values = spec_and_defaults_from_dict(tomllib.loads(example_text(name)))
        impls = ("table256", "table16", "bitwise") if spec.check.kind == "crc" else ("-",)
        for impl in impls:
            target = TimerTarget(crc_impl=impl if impl != "-" else "table256")
            emitted = emit_header(spec, target)
            with tempfile.TemporaryDirectory() as d:
                base_dir = Path(d) / "base"
                base_dir.mkdir()
                result = avr_run.run(emitted, values, Path(d))
                tx = avr_run.tx_next_cycles(emitted, result.trace)
                pack = avr_run.pin_high_cycles(emitted, result.trace, "PACK")
                err_ticks = avr_run.edge_errors_ticks(emitted, values, result.trace)
                err_cycles = np.abs(err_ticks).max() * emitted.timing.prescaler
                stub = _baseline_stub_cycles(emitted, values, base_dir)
            print(f"{spec.name:<22}{impl:<10}{emitted.timing.prescaler:>9}"
                  f"{result.code_flash_bytes:>7}{result.code_ram_bytes:>5}{pack.max():>10.0f}"
                  f"{tx.max():>12.0f}{tx.mean():>7.0f}{stub:>6.0f}{tx.max() / stub:>7.1f}"
                  f"{err_cycles:>13.0f}")
    print("flash/RAM: frame code and its buffers (frame bytes + tx state); cycles include the "
          "2-cycle pin write closing each measurement")
    if avr_run.HARNESS_MISSING:
        print(f"run buffer skipped: {', '.join(avr_run.HARNESS_MISSING)} missing")
        return 0
    print()
    print("run buffer transmitter, compare ISR cycles from vector to end of reti (C / asm)")
    print(f"{'spec':<22}{'buf RAM':>8}{'stream RAM':>11}{'C max':>7}{'C mean':>8}"
          f"{'asm max':>8}{'asm mean':>9}{'ratio':>7}{'edge err cyc':>13}")
    for name in example_names():
        spec, values = spec_and_defaults_from_dict(tomllib.loads(example_text(name)))
        emitted = emit_header(spec, TimerTarget(tx_mode="buffer"))
        with tempfile.TemporaryDirectory() as d:
            c_max, c_mean, c_err = _txbuf_isr(emitted, values, Path(d), asm=False)
            a_max, a_mean, a_err = _txbuf_isr(emitted, values, Path(d), asm=True)
        buf = emitted.model.txbuf
        assert buf is not None
        print(f"{spec.name:<22}{buf['ram']['avr']:>8}{emitted.model.stream_ram['avr']:>11}"
              f"{c_max:>7}{c_mean:>8.1f}{a_max:>8}{a_mean:>9.1f}{a_max / c_max:>7.2f}"
              f"{max(c_err, a_err):>13}")
    print("RAM in bytes on AVR as the header states it (struct <prefix>_txbuf; struct <prefix>_tx "
          "+ frame bytes)")
    return 0


def _txbuf_isr(emitted, values, directory: Path, *, asm: bool) -> tuple[int, float, int]:
    """(worst, mean) compare ISR cycles and the worst edge error in cycles of the run buffer
    firmware, with the C ISR or the header's assembly one."""
    harness = avr_run.build_harness(directory)
    elf = avr_run.build_firmware(emitted, values, directory, source=avr_run.TX_BUFFER_FIRMWARE,
                                 name="asm.elf" if asm else "c.elf",
                                 extra_defines={"OOK_ASM_ISR": None} if asm else None)
    run = avr_run.simulate(harness, elf, clock_hz=emitted.timing.clock_hz,
                           isr=(avr_run.TIMER1_COMPA_VECTOR,), watch=("B1",))
    changes = avr_run.level_changes(*run.edges["B1"])
    err = int(np.abs(avr_run.edge_errors_cycles(emitted, values, changes)).max())
    cycles = run.isr_cycles[avr_run.TIMER1_COMPA_VECTOR]
    return int(cycles.max()), float(cycles.mean()), err


def _baseline_stub_cycles(emitted, values, directory: Path) -> float:
    """Cycles of the baseline firmware's stub next_pulse, measured like tx_next."""
    import subprocess

    elf = avr_run.build_firmware(emitted, values, directory, baseline=True)
    subprocess.run([avr_run.SIMAVR, str(elf)], cwd=directory, capture_output=True, timeout=60,
                   check=True)
    return float(avr_run.pin_high_cycles(emitted, directory / "trace.vcd", "CPU").max())


if __name__ == "__main__":
    raise SystemExit(main())
