"""AVR cost of the generated C: flash/RAM (avr-size, firmware minus an empty baseline),
cycles per tx_next and per pack (measured in simavr by pin toggles), and the worst TX edge
error against the Python quantised schedule, in CPU cycles.

Run: python bench/avr_cost.py   (skips with a message when avr-gcc or simavr is missing)
Ratio: tx_next cycles / the baseline stub's cycles measured the same way in the same run.
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
    return 0


def _baseline_stub_cycles(emitted, values, directory: Path) -> float:
    """Cycles of the baseline firmware's stub next_pulse, measured like tx_next."""
    import subprocess

    elf = avr_run.build_firmware(emitted, values, directory, baseline=True)
    subprocess.run([avr_run.SIMAVR, str(elf)], cwd=directory, capture_output=True, timeout=60,
                   check=True)
    return float(avr_run.pin_high_cycles(emitted, directory / "trace.vcd", "CPU").max())


if __name__ == "__main__":
    raise SystemExit(main())
