"""Pulse captures on disk: CSV (``level,duration_us``), JSON and VCD (IEEE 1364).

Every format is a small module with the same trio: ``NAME``, ``EXTENSIONS``,
``read(path, **options) -> PulseTrain`` and ``write(path, train, **options)``; adding a
format is adding a file and one line in ``FORMATS``.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType

from .._require import require_path, require_train
from ..errors import CaptureError
from ..pulses import PulseTrain
from . import csv_format, json_format, vcd_format

FORMATS: dict[str, ModuleType] = {m.NAME: m for m in (csv_format, json_format, vcd_format)}


def capture_format(path: str | os.PathLike[str], fmt: str | None = None) -> str:
    """Return the format name for ``path`` (``fmt`` if given, else from the file extension)."""
    if fmt is not None:
        if fmt not in FORMATS:
            raise CaptureError(f"unknown capture format {fmt!r}; allowed: {', '.join(FORMATS)}")
        return fmt
    suffix = Path(path).suffix.lower()
    for name, mod in FORMATS.items():
        if suffix in mod.EXTENSIONS:
            return name
    from .sampled import SAMPLED_FORMATS

    allowed = ", ".join(ext for m in FORMATS.values() for ext in m.EXTENSIONS)
    sampled = ", ".join(ext for m in SAMPLED_FORMATS.values() for ext in m.EXTENSIONS)
    raise CaptureError(f"{path}: cannot tell the capture format from {suffix or 'no'} extension; "
                       f"allowed: {allowed} (pulses), {sampled} (samples)")


def read_capture(
    path: str | os.PathLike[str],
    *,
    signal: str | None = None,
    fmt: str | None = None,
    xz: str = "space",
) -> PulseTrain:
    """Return the pulse train stored in ``path`` (durations in µs).

    ``signal`` (VCD only) names the 1-bit signal to read; ``xz`` (VCD only) says what an
    ``x``/``z`` value means: ``"space"`` (carrier off) or ``"error"``.
    """
    require_path(path, "path")
    name = capture_format(path, fmt)
    if name != "vcd" and signal is not None:
        raise CaptureError(f"{path}: --signal applies to VCD captures only, not {name}")
    if name == "vcd":
        return vcd_format.read(path, signal=signal, xz=xz)
    return FORMATS[name].read(path)


def iter_capture(
    path: str | os.PathLike[str],
    *,
    chunk_pulses: int = 1_000_000,
    signal: str | None = None,
    fmt: str | None = None,
    xz: str = "space",
) -> Iterator[PulseTrain]:
    """Yield the pulse train stored in ``path`` in consecutive pieces of at most about
    ``chunk_pulses`` pulses, so a big capture is never held whole (see
    ``ookframe.decode.decode_stream``). Joined, the pieces are :func:`read_capture`'s train
    (a run of equal levels may be split between two pieces); errors and leniency are the
    same, an error names the line. CSV is read line by line, VCD token by token; JSON is parsed whole (one document) and
    then yielded in pieces.
    """
    require_path(path, "path")
    if isinstance(chunk_pulses, bool) or not isinstance(chunk_pulses, int) or chunk_pulses < 1:
        raise TypeError(f"chunk_pulses must be a positive int, got {chunk_pulses!r}")
    name = capture_format(path, fmt)
    if name != "vcd" and signal is not None:
        raise CaptureError(f"{path}: --signal applies to VCD captures only, not {name}")
    if name == "csv":
        yield from csv_format.iter_read(path, chunk_pulses)
        return
    if name == "vcd":
        yield from vcd_format.iter_read(path, signal=signal, xz=xz, chunk_pulses=chunk_pulses)
        return
    train = FORMATS[name].read(path)
    for i in range(0, len(train), chunk_pulses):
        yield PulseTrain(train.levels[i:i + chunk_pulses], train.durations_us[i:i + chunk_pulses])


def write_capture(
    path: str | os.PathLike[str], train: PulseTrain, fmt: str | None = None, **options: object
) -> None:
    """Write ``train`` to ``path`` in ``fmt`` (default: from the extension); atomic replace."""
    require_path(path, "path")
    require_train(train, "train")
    FORMATS[capture_format(path, fmt)].write(path, train, **options)


__all__ = ["FORMATS", "capture_format", "iter_capture", "read_capture", "write_capture"]
