"""The generated receiver on a simulated ATmega328P: build tests/c/avr/rx_firmware.c, drive
ICP1 (PB0) with a pulse train at exact CPU cycles through the libsimavr harness, and read
back the decoded fields and the cycle figures (shared by tests/test_codegen_avr_rx.py and
bench/avr_cost.py)."""

from __future__ import annotations

import ctypes
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ookframe.codegen import Emitted
from ookframe.codegen.host_rx import COUNTER_FIELDS, raw_fields
from ookframe.codegen.toolchains import avr_flash_ram, section_sizes
from tests.c import avr_run

RX_FIRMWARE = avr_run.AVR_DIR / "rx_firmware.c"
TIMER1_COMPB_VECTOR = 12  # ATmega328P vector numbers (datasheet interrupt table, from memory)
REPORT_START = 0xA5
REPORT_END = 0x5A  # the counters once more when the harness raises END_PIN
#: the firmware's end-of-run input: raised TAIL_CYCLES after the last driven edge
END_PIN = "B1"
#: CPU cycles simulated after END_PIN rises, for the end report
END_REPORT_CYCLES = 100_000
MARK_POLL, MARK_POLLED, MARK_TAKE, MARK_TAKEN, MARK_TWO_EDGES = 1, 2, 3, 4, 5
#: CPU cycles before the first driven edge (reset, rx_init, timer set-up are long done)
LEAD_IN_CYCLES = 20_000
#: quiet line between two driven trains, in microseconds
GAP_US = 30_000.0
#: CPU cycles simulated after the last driven edge: a check-aided recovery still running
#: then (tens of ms at 8 MHz; it keeps polling, so later frames wait behind it) can finish
TAIL_CYCLES = 2_000_000
#: link only what is used (the rx header also holds the transmitter)
GC_FLAGS = ("-ffunction-sections", "-fdata-sections", "-Wl,--gc-sections")
_CTYPES = {"uint8_t": ctypes.c_uint8, "int8_t": ctypes.c_int8, "uint16_t": ctypes.c_uint16,
           "int16_t": ctypes.c_int16, "uint32_t": ctypes.c_uint32, "int32_t": ctypes.c_int32,
           "uint64_t": ctypes.c_uint64, "int64_t": ctypes.c_int64}


class _Counters(ctypes.LittleEndianStructure):
    _pack_ = 1
    _fields_ = list(COUNTER_FIELDS)  # as the AVR lays it out: packed, little-endian


def fields_struct(emitted: Emitted) -> type[ctypes.LittleEndianStructure]:
    """Return struct <prefix>_fields as avr-gcc lays it out (byte aligned, little endian)."""
    members: list[tuple[str, object]] = []
    for f in emitted.model.fields:
        if f.kind == "bytes":
            members.append((f.name, ctypes.c_uint8 * f.max_len_bytes))
        else:
            members.append((f.name, _CTYPES[f.c_type]))
    return type("AvrFields", (ctypes.LittleEndianStructure,), {"_pack_": 1, "_fields_": members})


def lock_defines(emitted: Emitted) -> dict[str, str | None]:
    """The receiver's atomic-section macros for AVR (save SREG, cli; restore SREG)."""
    P = emitted.model.PREFIX
    return {f"{P}_RX_LOCK()": "uint8_t ook_sreg = SREG; cli()",
            f"{P}_RX_UNLOCK()": "SREG = ook_sreg"}


def laid_end_to_end(trains: Sequence[tuple[np.ndarray, np.ndarray]], gap_us: float = GAP_US
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Return (levels, durations_us) of ``trains`` laid end to end, each followed by
    ``gap_us`` of quiet line: what the harness drives and the host build is fed."""
    lv_parts, du_parts = [], []
    for levels, durations in trains:
        lv_parts += [np.asarray(levels, np.uint8), np.zeros(1, np.uint8)]
        du_parts += [np.asarray(durations, np.float64), np.array([gap_us])]
    return np.concatenate(lv_parts), np.concatenate(du_parts)


def host_frames(spec, trains: Sequence[tuple[np.ndarray, np.ndarray]]) -> list[dict[str, object]]:
    """Raw fields of the frames passing the check that the host build of the receiver
    decodes from ``trains`` laid end to end as the harness drives them."""
    from ookframe.codegen.host_rx import host_receiver
    from ookframe.pulses import PulseTrain

    lv, du = laid_end_to_end(trains)
    return [f.raw for f in host_receiver(spec).decode(PulseTrain(lv, du)) if f.crc_ok]


def drive_lines(trains: Sequence[tuple[np.ndarray, np.ndarray]], clock_hz: int,
                gap_us: float = GAP_US) -> tuple[str, int]:
    """Return the harness's drive file ("CYCLE LEVEL" per level change) for ``trains``
    ((levels, durations_us) each) laid end to end with ``gap_us`` of quiet line after each,
    and the cycle at which the last one has ended. Times are rounded to whole cycles from
    the running sum, so they do not drift."""
    lv, du = laid_end_to_end(trains, gap_us)
    starts_us = np.concatenate(([0.0], np.cumsum(du)))
    cyc = LEAD_IN_CYCLES + np.rint(starts_us * clock_hz / 1e6).astype(np.int64)
    prev = np.concatenate(([0], lv[:-1]))
    change = np.flatnonzero(lv != prev)
    text = "".join(f"{c} {v}\n" for c, v in zip(cyc[change].tolist(), lv[change].tolist(), strict=True))
    return text, int(cyc[-1])


@dataclass(frozen=True)
class RxRun:
    """What the receiver firmware reported and what it cost."""

    frames: list[dict[str, object]]  # raw field values, in the order decoded
    counters: dict[str, int]  # the counters at the end of the run (END_PIN raised)
    frame_counters: dict[str, int]  # the counters reported with the last frame (empty: none)
    capt_cycles: np.ndarray  # each capture ISR, vector to end of reti
    capt_two_edges: np.ndarray  # bool per capture ISR run: it also queued a missed edge
    idle_cycles: np.ndarray  # each compare B (idle) ISR
    poll_cycles: np.ndarray  # each main-loop rx_poll call, ISR time inside removed
    take_cycles: np.ndarray  # each rx_ready + rx_take that gave a frame, ISR time removed
    main_cycles_total: int  # every marked main-loop interval (polls and takes), ISRs removed


def _parse(run: avr_run.SimRun, emitted: Emitted, *, baseline: bool = False) -> RxRun:
    fields_t = fields_struct(emitted)
    nf, nc = ctypes.sizeof(fields_t), ctypes.sizeof(_Counters)
    data = [v for v, _ in run.report]
    if baseline:  # the stub receiver: no frame, a one-byte stand-in for the counters
        if data[:1] != [REPORT_END] or len(data) != 2:
            raise AssertionError(f"stub report not as expected: {data[:8]}")
        data = []
    frames: list[dict[str, object]] = []
    frame_counters: dict[str, int] = {}
    final: dict[str, int] | None = None
    i = 0
    while i < len(data):
        if data[i] == REPORT_END and final is None and i + 1 + nc <= len(data):
            final = _counters(data[i + 1:i + 1 + nc])
            i += 1 + nc
            continue
        if data[i] != REPORT_START or final is not None or i + 1 + nf + nc > len(data):
            raise AssertionError(f"report out of step at byte {i}: {data[i:i + 8]}")
        f = fields_t.from_buffer_copy(bytes(data[i + 1:i + 1 + nf]))
        frames.append(_raw(emitted, f))
        frame_counters = _counters(data[i + 1 + nf:i + 1 + nf + nc])
        i += 1 + nf + nc
    if final is None and baseline:
        final = {}
    elif final is None:
        raise AssertionError("no end-of-run counters: the main loop did not get to the end "
                             f"report within {END_REPORT_CYCLES} cycles of {END_PIN} rising")
    poll, take, total = _main_loop_cycles(run.events)
    return RxRun(frames, final, frame_counters, run.isr_cycles[avr_run.TIMER1_CAPT_VECTOR],
                 _two_edge_runs(run.events, run.isr_cycles[avr_run.TIMER1_CAPT_VECTOR].size),
                 run.isr_cycles[TIMER1_COMPB_VECTOR], poll, take, total)


def _counters(data: list[int]) -> dict[str, int]:
    c = _Counters.from_buffer_copy(bytes(data))
    return {name: int(getattr(c, name)) for name, _ in _Counters._fields_}


def _two_edge_runs(events: list[tuple[str, int, int]], n: int) -> np.ndarray:
    """Which capture ISR runs wrote the two-edges marker (the next ISR line after it)."""
    out = np.zeros(n, bool)
    i, pending = 0, False
    for kind, value, where in events:
        if kind == "mark" and value == MARK_TWO_EDGES:
            pending = True
        elif kind == "isr" and where == avr_run.TIMER1_CAPT_VECTOR and i < n:
            out[i] = pending
            pending = False
            i += 1
    return out


def _raw(emitted: Emitted, f: ctypes.Structure) -> dict[str, object]:
    return raw_fields(emitted.model.fields, f)


def _main_loop_cycles(events: list[tuple[str, int, int]]) -> tuple[np.ndarray, np.ndarray, int]:
    """Cycles of each rx_poll and of each rx_ready + rx_take that gave a frame (between the
    GPIOR1 markers, less the ISR cycles that fell inside), and of every marked interval."""
    poll: list[int] = []
    take: list[int] = []
    total = 0
    open_mark, start, isr_inside, last_take = 0, 0, 0, -1
    for kind, value, cycle in events:
        if kind == "isr":
            if open_mark:
                isr_inside += value
        elif kind == "byte":
            if last_take >= 0:  # the take just closed gave a frame
                take.append(last_take)
                last_take = -1
        elif value in (MARK_POLL, MARK_TAKE):
            open_mark, start, isr_inside, last_take = value, cycle, 0, -1
        elif open_mark and value == open_mark + 1:
            spent = cycle - start - isr_inside
            total += spent
            if open_mark == MARK_POLL:
                poll.append(spent)
            else:
                last_take = spent
            open_mark = 0
    return np.asarray(poll, np.int64), np.asarray(take, np.int64), total


def run_receiver(emitted: Emitted, values: Mapping[str, object],
                 trains: Sequence[tuple[np.ndarray, np.ndarray]], directory: Path, *,
                 in_isr: bool = False, baseline: bool = False,
                 header_isrs: bool = False,
                 extra_defines: Mapping[str, str | None] | None = None) -> RxRun:
    """Build the receiver firmware (``values``: any valid field values, for the shared
    demo_values.h; ``baseline``: around the stub receiver; ``header_isrs``: with the
    header's <PREFIX>_RX_AVR_ICP1 ISRs, start function and default lock instead of the
    firmware's; ``extra_defines``: more -D macros, e.g. <PREFIX>_RX_EDGE_FIFO), drive PB0
    with ``trains`` and return its report."""
    harness = avr_run.build_harness(directory)
    defines: dict[str, str | None] = {}
    if header_isrs:
        defines = {"OOK_HEADER_ISRS": None, f"{emitted.model.PREFIX}_RX_AVR_ICP1": None}
    else:
        defines = lock_defines(emitted)
    if in_isr:
        defines["OOK_RX_IN_ISR"] = None
    defines.update(extra_defines or {})
    elf = avr_run.build_firmware(emitted, values, directory, source=RX_FIRMWARE,
                                 baseline=baseline,
                                 name=f"rx{'_isr' if in_isr else ''}{'_base' if baseline else ''}"
                                      f"{'_hdr' if header_isrs else ''}.elf",
                                 extra_defines=defines)
    text, end_cycle = drive_lines(trains, emitted.model.timing.clock_hz)
    drive = directory / "drive.txt"
    drive.write_text(text)
    end = directory / "end.txt"
    end.write_text(f"{end_cycle + TAIL_CYCLES} 1\n")
    run = avr_run.simulate(harness, elf, clock_hz=emitted.model.timing.clock_hz,
                           isr=(avr_run.TIMER1_CAPT_VECTOR, TIMER1_COMPB_VECTOR),
                           drive=("B0", drive), more_drives=((END_PIN, end),),
                           max_cycles=end_cycle + TAIL_CYCLES + END_REPORT_CYCLES,
                           timeout_s=300)
    return _parse(run, emitted, baseline=baseline)


def receiver_sizes(emitted: Emitted, values: Mapping[str, object], directory: Path, *,
                   extra_defines: Mapping[str, str | None] | None = None) -> tuple[int, int]:
    """Return (flash, RAM) bytes of the receiver: rx_firmware.c minus its stub baseline,
    both linked with unused sections dropped (the header's transmitter is not counted);
    ``extra_defines``: more -D macros for the receiver build, e.g. <PREFIX>_RX_RECOVERY."""
    assert avr_run.AVR_SIZE is not None
    sizes = []
    for baseline in (False, True):
        elf = avr_run.build_firmware(emitted, values, directory, source=RX_FIRMWARE,
                                     baseline=baseline,
                                     name="rx_base.elf" if baseline else "rx_size.elf",
                                     extra_defines={**lock_defines(emitted),
                                                    **(extra_defines or {})},
                                     extra_flags=GC_FLAGS)
        sizes.append(avr_flash_ram(section_sizes(avr_run.AVR_SIZE, elf)))
    return sizes[0][0] - sizes[1][0], sizes[0][1] - sizes[1][1]
