"""CSV captures: a header line ``level,duration_us`` then one ``level,duration_us`` per pulse.

Blank lines and lines starting with ``#`` are ignored. A level is a number equal to 0 or 1
(``1``, ``1.0`` and ``1e0`` are all read as 1); durations are numbers in µs, > 0 and at
most ``MAX_DURATION_US``. Errors name the file and the line number and quote at most a
short excerpt of the line.
"""

from __future__ import annotations

import os
import warnings
from collections.abc import Iterator

import numpy as np

from ..errors import CaptureError, excerpt
from ..pulses import PulseTrain
from ._common import (
    bad_duration,
    bad_level,
    check_train_for_write,
    describe_duration,
    write_text_atomic,
)

NAME = "csv"
EXTENSIONS = (".csv",)
HEADER = "level,duration_us"


def _is_skipped(line: str) -> bool:
    s = line.strip()
    return not s or s.startswith("#")


def _number(cell: str) -> float | None:
    """Return the number written in ``cell`` (as numpy's text reader reads it), or None."""
    try:
        return float(cell)
    except ValueError:
        return None


def _scan_for_error(path: str | os.PathLike[str], lines: list[str], start: int = 1) -> None:
    """Raise CaptureError for the first invalid line (slow path, only on bad input);
    ``lines[0]`` is line ``start`` of the file (line 1 is the header)."""
    for lineno, line in enumerate(lines, start):
        if lineno == 1 or _is_skipped(line):
            continue
        cells = [c.strip() for c in line.split(",")]
        if len(cells) != 2:
            raise CaptureError(f"{path}:{lineno}: expected 2 values 'level,duration_us', "
                               f"got {len(cells)}: {excerpt(line.strip())}")
        if _number(cells[0]) not in (0.0, 1.0):
            raise CaptureError(f"{path}:{lineno}: level {excerpt(cells[0])} must be 0 or 1")
        d = _number(cells[1])
        if d is None:
            raise CaptureError(
                f"{path}:{lineno}: duration_us {excerpt(cells[1])} is not a number")
        if bad_duration(np.array([d])) is not None:
            raise CaptureError(f"{path}:{lineno}: duration_us {describe_duration(d)}")
    raise CaptureError(f"{path}: cannot parse as '{HEADER}' CSV")


def read(path: str | os.PathLike[str]) -> PulseTrain:
    """Return the pulse train in a CSV capture (durations in µs)."""
    try:
        with open(path, encoding="utf-8") as fh:
            text = fh.read()
    except OSError as exc:
        raise CaptureError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    except UnicodeDecodeError as exc:
        raise CaptureError(f"{path}: not a UTF-8 text file") from exc
    lines = text.splitlines()
    check_header(path, lines[0] if lines else "")
    return parse_lines(path, lines, 1)


def check_header(path: str | os.PathLike[str], line: str) -> None:
    """Raise CaptureError unless ``line`` (line 1) is the ``level,duration_us`` header."""
    header = line.strip().replace(" ", "").lstrip("\ufeff")
    if header != HEADER:
        raise CaptureError(f"{path}:1: expected header {HEADER!r}, got {excerpt(header)}")


def parse_lines(path: str | os.PathLike[str], lines: list[str], start: int) -> PulseTrain:
    """Return the pulses written in ``lines``, the file's lines from line ``start`` on (line
    1, the header, is skipped); CaptureError naming the first invalid line."""
    body = [ln for ln in (lines[1:] if start == 1 else lines) if not _is_skipped(ln)]
    if not body:
        return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            table = np.loadtxt(body, delimiter=",", dtype=np.float64, ndmin=2)
    except ValueError:
        _scan_for_error(path, lines, start)
        raise  # pragma: no cover - _scan_for_error always raises
    if table.shape[1] != 2 or bad_level(table[:, 0]) is not None or \
            bad_duration(table[:, 1]) is not None:
        _scan_for_error(path, lines, start)
    return PulseTrain(table[:, 0].astype(np.uint8), table[:, 1])


def iter_read(path: str | os.PathLike[str], chunk_pulses: int) -> Iterator[PulseTrain]:
    """Yield the pulse train of a CSV capture in pieces of about ``chunk_pulses`` pulses,
    reading the file line by line (memory bounded by the piece, not the file); the same
    validation, leniency and messages as :func:`read`."""
    try:
        fh = open(path, encoding="utf-8")
    except OSError as exc:
        raise CaptureError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    with fh:
        try:
            lineno = 1
            check_header(path, fh.readline())
            block: list[str] = []
            start = 2
            for line in fh:
                lineno += 1
                block.append(line)
                if len(block) >= chunk_pulses:
                    yield parse_lines(path, block, start)
                    start, block = lineno + 1, []
            if block:
                yield parse_lines(path, block, start)
        except UnicodeDecodeError as exc:
            raise CaptureError(f"{path}: not a UTF-8 text file") from exc


def write(path: str | os.PathLike[str], train: PulseTrain) -> None:
    """Write ``train`` as CSV; durations use the shortest text that reads back exactly."""
    check_train_for_write(path, train.levels, train.durations_us)
    rows = map("{},{!r}".format, train.levels.tolist(), train.durations_us.tolist())
    write_text_atomic(path, HEADER + "\n" + "".join(r + "\n" for r in rows))
