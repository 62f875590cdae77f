"""Helpers shared by the capture formats: validation and atomic writes."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import numpy as np

from ..errors import CaptureError


def bad_duration(durations_us: np.ndarray) -> int | None:
    """Return the index of the first duration that is NaN, infinite or <= 0, else None."""
    bad = ~(np.isfinite(durations_us) & (durations_us > 0))
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
