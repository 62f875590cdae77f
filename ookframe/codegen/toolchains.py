"""C toolchains on this machine: find them, compile with the project's strict flags,
read section sizes. Used by the tests and benchmarks that build the generated C."""

from __future__ import annotations

import os
import shutil
import subprocess
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path

from ..errors import CodegenError

#: the warning set the generated C must pass on every compiler
STRICT_FLAGS: tuple[str, ...] = ("-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Wconversion",
                                 "-Wshadow", "-Werror")
#: ATmega328P build (avr-gcc), size-optimised
AVR_FLAGS: tuple[str, ...] = ("-mmcu=atmega328p", "-Os")
#: Cortex-M0+ compile-only build (arm-none-eabi-gcc)
CORTEX_M0PLUS_FLAGS: tuple[str, ...] = ("-mcpu=cortex-m0plus", "-mthumb", "-Os", "-ffreestanding",
                                        "-c")


def find_tool(name: str) -> str | None:
    """Return the path of executable ``name`` on PATH, or None when it is absent."""
    return shutil.which(name)


def compile_c(cc: str, sources: Sequence[str | os.PathLike[str]], output: str | os.PathLike[str],
              *, flags: Iterable[str] = (), include_dirs: Iterable[str | os.PathLike[str]] = (),
              defines: Mapping[str, str | None] | None = None, timeout_s: float = 120.0) -> Path:
    """Compile/link ``sources`` with ``cc`` into ``output``; CodegenError with the compiler's
    messages when it fails. ``defines`` maps NAME -> value (None for a bare -DNAME)."""
    cmd = [cc, *flags]
    cmd += [f"-I{d}" for d in include_dirs]
    for k, v in (defines or {}).items():
        cmd.append(f"-D{k}" if v is None else f"-D{k}={v}")
    cmd += [str(s) for s in sources] + ["-o", str(output)]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout_s)
    if proc.returncode != 0:
        raise CodegenError(f"{Path(cc).name} failed ({proc.returncode}):\n{proc.stderr.strip()}")
    if proc.stderr.strip():
        raise CodegenError(f"{Path(cc).name} printed warnings:\n{proc.stderr.strip()}")
    return Path(output)


def section_sizes(size_tool: str, path: str | os.PathLike[str]) -> dict[str, int]:
    """Return section name -> size in bytes from ``size -A`` (binutils) for an object/ELF."""
    proc = subprocess.run([size_tool, "-A", str(path)], capture_output=True, text=True,
                          check=True)
    out: dict[str, int] = {}
    for line in proc.stdout.splitlines():
        parts = line.split()
        if len(parts) >= 2 and parts[0].startswith(".") and parts[1].isdigit():
            out[parts[0]] = int(parts[1])
    return out


def avr_flash_ram(sizes: Mapping[str, int]) -> tuple[int, int]:
    """Return (flash bytes, static RAM bytes) of an AVR ELF from its section sizes."""
    flash = sizes.get(".text", 0) + sizes.get(".data", 0)
    ram = sizes.get(".data", 0) + sizes.get(".bss", 0) + sizes.get(".noinit", 0)
    return flash, ram
