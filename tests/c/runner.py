"""Build the C harness for a generated header, stream cases through it, and compute the
expected output from the Python model (shared by the codegen test files)."""

from __future__ import annotations

import subprocess
from collections.abc import Iterable, Mapping
from pathlib import Path

import numpy as np

from ookframe.codegen import Emitted, schedule_from_bits, tx_schedule
from ookframe.codegen.toolchains import STRICT_FLAGS, compile_c
from ookframe.frame import frame_bits, raw_values
from ookframe.spec.model import FrameSpec

C_DIR = Path(__file__).resolve().parent
HARNESS = C_DIR / "harness.c"


def write_header(emitted: Emitted, directory: Path) -> Path:
    """Write the header into ``directory`` and return its path."""
    path = directory / emitted.filename
    path.write_text(emitted.text)
    return path


def build_harness(emitted: Emitted, directory: Path, cc: str, *, extra_flags: Iterable[str] = (),
                  name: str = "harness") -> Path:
    """Compile the harness against ``emitted`` with the strict flags; return the program."""
    write_header(emitted, directory)
    m = emitted.model
    return compile_c(
        cc, [HARNESS], directory / name, flags=[*STRICT_FLAGS, "-O2", *extra_flags],
        include_dirs=[directory],
        defines={"OOK_HEADER": f'"{emitted.filename}"', "OOK_PREFIX": m.prefix,
                 "OOK_UPREFIX": m.PREFIX, f"{m.PREFIX}_IMPLEMENTATION": None,
                 f"{m.PREFIX}_SELF_TEST": None, "OOK_SELF_TEST": None})


def pack_case(spec: FrameSpec, raw: Mapping[str, object], cap: int) -> str:
    """Return a harness 'P' line for raw field values (ints; bytes for the bytes field)."""
    parts = ["P", str(cap)]
    for f in spec.fields:
        v = raw[f.name]
        if f.kind == "bytes":
            assert isinstance(v, bytes | bytearray)
            parts.append(bytes(v).hex() or "-")
        else:
            parts.append(str(int(v)))  # type: ignore[call-overload]
    return " ".join(parts)


def bits_case(bits: np.ndarray) -> str:
    """Return a harness 'T' line transmitting ``bits`` as is."""
    return f"T {bits.size} {np.packbits(bits).tobytes().hex() or '00'}"


def pulses_line(levels: np.ndarray, ticks: np.ndarray) -> str:
    """Return the harness 'L' line for a pulse sequence."""
    return "L" + "".join(f" {int(lv)}:{int(t)}" for lv, t in zip(levels, ticks, strict=True))


def expected_pack(emitted: Emitted, values: Mapping[str, object]) -> list[str]:
    """Return the two output lines the harness must print for a valid 'P' case."""
    bits = frame_bits(emitted.model.spec, values)
    s = tx_schedule(emitted.model, values)
    return [f"{bits.size} {np.packbits(bits).tobytes().hex()}", pulses_line(s.levels, s.ticks)]


def expected_bits(emitted: Emitted, bits: np.ndarray) -> list[str]:
    """Return the output line for a 'T' case."""
    s = schedule_from_bits(emitted.model, bits)
    return [pulses_line(s.levels, s.ticks)]


def raw_for(spec: FrameSpec, values: Mapping[str, object]) -> dict[str, object]:
    """Return the raw values (length field included) for physical ``values``."""
    return raw_values(spec, values)


def run_harness(program: Path, lines: list[str], *, env: Mapping[str, str] | None = None,
                timeout_s: float = 120.0) -> tuple[list[str], str]:
    """Feed ``lines`` to the harness in one process; return (stdout lines, stderr)."""
    proc = subprocess.run([str(program)], input="\n".join(lines) + "\n", capture_output=True,
                          text=True, timeout=timeout_s, env=env)
    if proc.returncode != 0:
        raise AssertionError(f"harness exited {proc.returncode}: {proc.stdout[-500:]}"
                             f"{proc.stderr[-2000:]}")
    return proc.stdout.splitlines(), proc.stderr
