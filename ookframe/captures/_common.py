"""Helpers shared by the capture formats: validation and atomic writes."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import numpy as np

from ..errors import CaptureError

#: longest pulse a capture may hold (µs): 10^12 µs is about 11.6 days; a longer one is a
#: corrupt capture, and would overflow the decoder's whole-unit arithmetic
MAX_DURATION_US = 1e12


def bad_duration(durations_us: np.ndarray) -> int | None:
    """Return the index of the first duration that is NaN, infinite, <= 0 or above
    ``MAX_DURATION_US``, else None."""
    bad = ~((durations_us > 0) & (durations_us <= MAX_DURATION_US))  # NaN fails both
    return int(np.argmax(bad)) if bad.any() else None


def bad_level(levels: np.ndarray) -> int | None:
    """Return the index of the first level that is not exactly 0 or 1, else None."""
    bad = (levels != 0) & (levels != 1)
    return int(np.argmax(bad)) if bad.any() else None


def describe_duration(value: float) -> str:
    """Return why a duration is invalid (for error messages)."""
    if np.isnan(value):
        return "is NaN"
    if np.isinf(value):
        return "is infinite"
    if value > MAX_DURATION_US:
        return f"is {value:g}, longer than the {MAX_DURATION_US:g} µs allowed"
    return f"is {value:g}, must be > 0"


def check_train_for_write(path: str | os.PathLike[str], levels: np.ndarray,
                          durations_us: np.ndarray) -> None:
    """Raise CaptureError if a train cannot be written faithfully."""
    i = bad_duration(durations_us)
    if i is not None:
        raise CaptureError(f"{path}: pulse {i}: duration_us {describe_duration(durations_us[i])}")
    i = bad_level(levels)
    if i is not None:
        raise CaptureError(f"{path}: pulse {i}: level is {levels[i]}, must be 0 or 1")


def write_text_atomic(path: str | os.PathLike[str], text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file, so no half-written file is left."""
    target = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", dir=target.parent or ".")
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
