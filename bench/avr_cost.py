"""AVR cost of the generated C: flash/RAM (avr-size, firmware minus an empty baseline),
cycles per tx_next and per pack (measured in simavr by pin toggles), and the worst TX edge
error against the Python quantised schedule, in CPU cycles. Run buffer transmitter
(tests/c/avr/tx_buffer.c in the libsimavr harness): RAM of both transmitters as the header
states it, compare ISR cycles (vector to end of reti) with the C ISR and with
<PREFIX>_TX_AVR_ISR, and the worst edge error. Receiver: capture ISR cycles
per edge (worst, mean; libsimavr harness, vector to end of reti), idle ISR, main-loop
cycles per frame (rx_poll + rx_take between GPIOR1 markers, ISR time removed), flash/RAM
(tests/c/avr/rx_firmware.c minus its stub-receiver baseline). Cortex-M0+ compile sizes of
both sides (arm-none-eabi-gcc -mcpu=cortex-m0plus -mthumb -Os, object sections).

Run: python bench/avr_cost.py   (skips with a message when avr-gcc or simavr is missing)
Ratio: tx_next cycles / the baseline stub's cycles measured the same way in the same run;
run buffer: assembly ISR worst / C ISR worst, same run; receiver: the worst ISR with the
decoding done inside the ISR (rx_poll called there, the way a receiver without the edge
FIFO works) / the worst ISR with the FIFO, same run.
"""

from __future__ import annotations

import sys
import tempfile
import tomllib
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from ookframe.channel.presets import get_preset  # noqa: E402
from ookframe.codegen import TimerTarget, emit_header  # noqa: E402
from ookframe.codegen.toolchains import (  # noqa: E402
    CORTEX_M0PLUS_FLAGS,
    STRICT_FLAGS,
    compile_c,
    find_tool,
    section_sizes,
)
from ookframe.demo import example_names, example_text  # noqa: E402
from ookframe.frame import encode, random_values, raw_values  # noqa: E402
from ookframe.spec_io import spec_and_defaults_from_dict  # noqa: E402
from ookframe.stress.vectors import make_vectors  # noqa: E402
from tests.c import avr_run, avr_rx  # noqa: E402

#: transmissions of random values per example in the receiver run (numpy PCG64, seed 0)
RX_TRANSMISSIONS = 3
#: the harsh-channel receiver run: preset, vectors per example, seed
NOISE_PRESET, NOISE_VECTORS, NOISE_SEED = "edge-of-range-superregen", 6, 9


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
    if not avr_run.HARNESS_MISSING:
        _run_buffer_rows()
        _receiver_rows()
        _receiver_recovery_rows()
        _receiver_noise_rows()
    _cortex_m0plus_rows()
    return 0


def _run_buffer_rows() -> None:
    """Print the run buffer transmitter's RAM, ISR cycles and edge error per example."""
    print("\nrun buffer transmitter, compare ISR cycles from vector to end of reti (C / asm)")
    print(f"{'spec':<22}{'buf RAM':>8}{'stream RAM':>11}{'C max':>7}{'C mean':>8}"
          f"{'asm max':>8}{'asm mean':>9}{'ratio':>7}{'edge err cyc':>13}")
    for name in example_names():
        spec, values = _example(name)
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


def _txbuf_isr(emitted, values, directory: Path, *, asm: bool) -> tuple[int, float, int]:
    """(worst, mean) compare ISR cycles and the worst edge error in cycles of the run buffer
    firmware, with the C ISR or the header's assembly one."""
    run, changes = avr_run.run_tx_buffer(emitted, values, directory, asm=asm)
    err = int(np.abs(avr_run.edge_errors_cycles(emitted, values, changes)).max())
    cycles = run.isr_cycles[avr_run.TIMER1_COMPA_VECTOR]
    return int(cycles.max()), float(cycles.mean()), err


def _example(name: str):
    return spec_and_defaults_from_dict(tomllib.loads(example_text(name)))


def _random_trains(spec) -> tuple[list, list]:
    """(expected raw fields per copy, (levels, durations_us) per transmission) of
    RX_TRANSMISSIONS random transmissions (numpy PCG64 seed 0), as both receiver tables use."""
    rng = np.random.default_rng(0)
    want, trains = [], []
    for _ in range(RX_TRANSMISSIONS):
        values = random_values(spec, rng)
        t = encode(spec, values)
        trains.append((t.levels, t.durations_us))
        want += [raw_values(spec, values)] * spec.repeats
    return want, trains


def _receiver_rows() -> None:
    """Print the receiver's AVR figures per example (see the module docstring)."""
    print(f"\nreceiver, ATmega328P @ 8 MHz: {RX_TRANSMISSIONS} transmissions of random values "
          "per example (seed 0), ICP1 driven at exact cycles")
    print(f"{'spec':<18}{'frames':>8}{'ISR max':>8}{'mean':>7}{'2-edge':>7}{'idle ISR':>9}"
          f"{'main cyc/frame':>15}{'CPU %':>6}{'take cyc':>9}{'flash':>7}{'RAM':>5}"
          f"{'in-ISR max':>11}{'frames':>7}{'ratio':>7}{'stub ISR':>9}")
    for name in example_names():
        spec, defaults = _example(name)
        emitted = emit_header(spec, side="rx")
        want, trains = _random_trains(spec)
        with tempfile.TemporaryDirectory() as d:
            fifo = avr_rx.run_receiver(emitted, defaults, trains, Path(d))
            in_isr = avr_rx.run_receiver(emitted, defaults, trains, Path(d), in_isr=True)
            stub = avr_rx.run_receiver(emitted, defaults, trains, Path(d), baseline=True)
            flash, ram = avr_rx.receiver_sizes(emitted, defaults, Path(d))
        ok = sum(a == b for a, b in zip(fifo.frames, want, strict=False))
        ok_isr = sum(a == b for a, b in zip(in_isr.frames, want, strict=False))
        per_frame = fifo.main_cycles_total / max(1, len(fifo.frames))
        air_cycles = sum(float(np.sum(du)) for _, du in trains) * emitted.timing.clock_hz / 1e6
        load_pct = 100 * fifo.main_cycles_total / air_cycles
        one = fifo.capt_cycles[~fifo.capt_two_edges]
        two = fifo.capt_cycles[fifo.capt_two_edges]
        worst = int(one.max())
        worst_isr = int(max(in_isr.capt_cycles.max(), in_isr.idle_cycles.max()))
        print(f"{spec.name:<18}{f'{ok}/{len(want)}':>8}{worst:>8}{one.mean():>7.1f}"
              f"{(str(int(two.max())) if two.size else '-'):>7}"
              f"{int(fifo.idle_cycles.max()):>9}{per_frame:>15.0f}{load_pct:>6.0f}"
              f"{fifo.take_cycles.mean():>9.0f}"
              f"{flash:>7}{ram:>5}{worst_isr:>11}{f'{ok_isr}/{len(want)}':>7}"
              f"{worst_isr / worst:>7.1f}{int(stub.capt_cycles.max()):>9}")
    print("ISR: capture ISR, vector to end of reti (target <= 150 cycles), runs that queue one "
          "edge; 2-edge: runs that also queue an edge missed while they ran; in-ISR: the same "
          "firmware decoding in the ISR (edges it misses lose frames); stub ISR: the same "
          "capture ISR around a stub receiver; main cyc/frame: rx_poll "
          "+ rx_take per frame; CPU %: main-loop cycles / air time of the trains; flash/RAM: "
          "receiver code, tables, state, queue and edge FIFO (unused sections dropped)")


def _receiver_recovery_rows() -> None:
    """Print the receiver's AVR cost with and without its check-aided recovery
    (<PREFIX>_RX_RECOVERY 0) for the examples that have one."""
    print("\nreceiver with the check-aided recovery (default) / without it "
          "(<PREFIX>_RX_RECOVERY 0): the trains of the table above")
    print(f"{'spec':<18}{'flash':>13}{'saved':>7}{'RAM':>11}{'saved':>7}"
          f"{'main cyc/frame':>18}{'saved %':>8}{'frames':>9}")
    for name in example_names():
        spec, defaults = _example(name)
        emitted = emit_header(spec, side="rx")
        if not emitted.model.rx.recovery_flips:
            continue
        off = {f"{emitted.model.PREFIX}_RX_RECOVERY": "0"}
        want, trains = _random_trains(spec)
        row = []
        with tempfile.TemporaryDirectory() as d:
            for defines in ({}, off):
                run = avr_rx.run_receiver(emitted, defaults, trains, Path(d),
                                          extra_defines=defines)
                flash, ram = avr_rx.receiver_sizes(emitted, defaults, Path(d),
                                                   extra_defines=defines)
                ok = sum(a == b for a, b in zip(run.frames, want, strict=False))
                row.append((flash, ram, run.main_cycles_total / max(1, len(run.frames)), ok))
        (f1, r1, c1, ok1), (f0, r0, c0, ok0) = row
        print(f"{spec.name:<18}{f'{f1} / {f0}':>13}{f1 - f0:>7}{f'{r1} / {r0}':>11}{r1 - r0:>7}"
              f"{f'{c1:,.0f} / {c0:,.0f}':>18}{100 * (c1 - c0) / c1:>8.1f}"
              f"{f'{ok1}/{ok0}':>9}")
    print("flash/RAM in bytes as in the table above; main cyc/frame: rx_poll + rx_take per "
          "frame (clean trains: no frame needs the recovery, so its cost here is the "
          "candidates and chips kept per body edge); frames: copies decoded, on / off")


def _receiver_noise_rows() -> None:
    """Print the AVR receiver against the host build through a harsh channel."""
    print(f"\nreceiver through {NOISE_PRESET} ({NOISE_VECTORS} vectors per example, seed "
          f"{NOISE_SEED}): frames passing the check, AVR / host build of the same header")
    print(f"{'spec':<18}{'AVR':>5}{'host':>6}{'equal':>7}{'ISR max':>8}{'2-edge runs':>12}"
          f"{'2-edge max':>11}{'lost edges':>11}{'hunt skips':>11}")
    for name in example_names():
        spec, defaults = _example(name)
        emitted = emit_header(spec, side="rx")
        vecs = make_vectors(spec, get_preset(NOISE_PRESET), NOISE_VECTORS, seed=NOISE_SEED)
        trains = [(v.train.levels, v.train.durations_us) for v in vecs]
        with tempfile.TemporaryDirectory() as d:
            run = avr_rx.run_receiver(emitted, defaults, trains, Path(d))
        host = avr_rx.host_frames(spec, trains)
        one = run.capt_cycles[~run.capt_two_edges]
        two = run.capt_cycles[run.capt_two_edges]
        print(f"{spec.name:<18}{len(run.frames):>5}{len(host):>6}{str(run.frames == host):>7}"
              f"{int(one.max()):>8}{two.size:>12}{(int(two.max()) if two.size else 0):>11}"
              f"{run.counters.get('edge_overruns', 0):>11}{run.counters.get('hunt_skips', 0):>11}")
    print("2-edge: capture ISR runs that also queued an edge the line made while they ran "
          "(pulses shorter than the ISR); lost edges: edges that found the edge FIFO full "
          "(idle noise faster than the main loop decodes); hunt skips: queued edges rx_poll "
          "dropped after such a loss while hunting (the newest edges win)")


def _cortex_m0plus_rows() -> None:
    """Print Cortex-M0+ object sizes of the transmitter and the receiver per example."""
    gcc, size = find_tool("arm-none-eabi-gcc"), find_tool("arm-none-eabi-size")
    if gcc is None or size is None:
        print("\nCortex-M0+: skipped (arm-none-eabi-gcc / arm-none-eabi-size missing)")
        return
    print("\nCortex-M0+ (arm-none-eabi-gcc -mcpu=cortex-m0plus -mthumb -Os, compile only); "
          "bytes, flash = .text + .rodata + .data, RAM = .data + .bss")
    print(f"{'spec':<18}{'tx flash':>9}{'tx RAM':>7}{'rx flash':>9}{'rx RAM':>7}")
    for name in example_names():
        spec, _ = _example(name)
        row = []
        with tempfile.TemporaryDirectory() as d:
            for side in ("tx", "both"):
                e = emit_header(spec, side=side)
                (Path(d) / e.filename).write_text(e.text)
                src = Path(d) / f"{side}.c"
                src.write_text(f'#define {e.model.PREFIX}_IMPLEMENTATION\n#include "{e.filename}"\n')
                obj = compile_c(gcc, [src], Path(d) / f"{side}.o",
                                flags=[*STRICT_FLAGS, *CORTEX_M0PLUS_FLAGS], include_dirs=[d])
                sec = section_sizes(size, obj)
                flash = sum(v for k, v in sec.items() if k.startswith((".text", ".rodata", ".data")))
                ram = sum(v for k, v in sec.items() if k.startswith((".data", ".bss")))
                row.append((flash, ram))
        (tf, tr), (rf, rr) = row
        print(f"{spec.name:<18}{tf:>9}{tr:>7}{rf - tf:>9}{rr - tr:>7}")
    print("rx: the --side both header's object minus the tx header's")


def _baseline_stub_cycles(emitted, values, directory: Path) -> float:
    """Cycles of the baseline firmware's stub next_pulse, measured like tx_next."""
    import subprocess

    elf = avr_run.build_firmware(emitted, values, directory, baseline=True)
    subprocess.run([avr_run.SIMAVR, str(elf)], cwd=directory, capture_output=True, timeout=60,
                   check=True)
    return float(avr_run.pin_high_cycles(emitted, directory / "trace.vcd", "CPU").max())


if __name__ == "__main__":
    raise SystemExit(main())
