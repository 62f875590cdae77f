"""JSON captures: ``{"format": "ookframe-pulses", "version": 1, "levels": [...],
"durations_us": [...]}`` — two equal-length arrays, levels 0/1, durations finite > 0 (µs)."""

from __future__ import annotations

import json
import os

import numpy as np

from ..errors import CaptureError
from ..pulses import PulseTrain
from ._common import (
    bad_duration,
    bad_level,
    check_train_for_write,
    describe_duration,
    write_text_atomic,
)

NAME = "json"
EXTENSIONS = (".json",)
FORMAT_TAG = "ookframe-pulses"
VERSION = 1


def _array(path: str | os.PathLike[str], doc: dict, key: str) -> list:
    value = doc.get(key)
    if not isinstance(value, list):
        raise CaptureError(f"{path}: key {key!r} must be a list, got {type(value).__name__}")
    return value


def read(path: str | os.PathLike[str]) -> PulseTrain:
    """Return the pulse train in a JSON capture (durations in µs)."""
    try:
        with open(path, encoding="utf-8") as fh:
            doc = json.load(fh, parse_constant=lambda c: float(c))
    except OSError as exc:
        raise CaptureError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    except UnicodeDecodeError as exc:
        raise CaptureError(f"{path}: not a UTF-8 text file") from exc
    except json.JSONDecodeError as exc:
        raise CaptureError(f"{path}:{exc.lineno}: invalid JSON: {exc.msg}") from exc
    if not isinstance(doc, dict):
        raise CaptureError(f"{path}: expected a JSON object with 'levels' and 'durations_us'")
    if doc.get("format", FORMAT_TAG) != FORMAT_TAG:
        raise CaptureError(f"{path}: 'format' is {doc.get('format')!r}, expected {FORMAT_TAG!r}")
    if doc.get("version", VERSION) != VERSION:
        raise CaptureError(f"{path}: 'version' is {doc.get('version')!r}; this reader knows "
                           f"version {VERSION}")
    unknown = sorted(set(doc) - {"format", "version", "levels", "durations_us", "comment"})
    if unknown:
        raise CaptureError(f"{path}: unknown key(s) {', '.join(unknown)}; allowed: format, "
                           "version, levels, durations_us, comment")
    levels = _array(path, doc, "levels")
    durations = _array(path, doc, "durations_us")
    if len(levels) != len(durations):
        raise CaptureError(f"{path}: 'levels' has {len(levels)} entries but 'durations_us' has "
                           f"{len(durations)}")
    lv = np.asarray(levels) if levels else np.zeros(0, np.int64)
    du = np.asarray(durations) if durations else np.zeros(0, np.float64)
    if lv.dtype.kind not in "iu" or bad_level(lv) is not None or \
            not all(type(v) is int for v in levels):
        i = next(i for i, v in enumerate(levels) if type(v) is not int or v not in (0, 1))
        raise CaptureError(f"{path}: levels[{i}] is {levels[i]!r}, must be 0 or 1")
    if du.dtype.kind not in "iuf" or any(type(v) is bool for v in durations):
        i = next(i for i, v in enumerate(durations)
                 if isinstance(v, bool) or not isinstance(v, int | float))
        raise CaptureError(f"{path}: durations_us[{i}] is {durations[i]!r}, must be a number")
    du = du.astype(np.float64)
    i = bad_duration(du)
    if i is not None:
        raise CaptureError(f"{path}: durations_us[{i}] {describe_duration(float(du[i]))}")
    return PulseTrain(lv.astype(np.uint8), du)


def write(path: str | os.PathLike[str], train: PulseTrain) -> None:
    """Write ``train`` as a JSON capture (exact float round trip)."""
    check_train_for_write(path, train.levels, train.durations_us)
    doc = {"format": FORMAT_TAG, "version": VERSION, "levels": train.levels.tolist(),
           "durations_us": train.durations_us.tolist()}
    write_text_atomic(path, json.dumps(doc, separators=(",", ":")) + "\n")
