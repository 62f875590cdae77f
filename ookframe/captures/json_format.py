"""JSON captures: ``{"format": "ookframe-pulses", "version": 1, "levels": [...],
"durations_us": [...]}`` — two equal-length flat arrays, levels 0/1, durations in µs
(> 0, at most ``MAX_DURATION_US``).

Numbers are read by value, as JSON defines them (RFC 8259 section 6): ``1``, ``1.0`` and
``1e0`` are the same number, so a level or the version may be written either way; ``true``
and ``false`` are not numbers and are refused. A key given twice is refused (RFC 8259
section 4 leaves its meaning open). Nesting deeper than Python's parser allows is refused.
"""

from __future__ import annotations

import json
import os
import sys

import numpy as np

from ..errors import CaptureError, excerpt
from ..pulses import PulseTrain
from ._common import (
    MAX_DURATION_US,
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


KEYS = ("format", "version", "levels", "durations_us", "comment")


def _array(path: str | os.PathLike[str], doc: dict, key: str) -> list:
    value = doc.get(key)
    if not isinstance(value, list):
        raise CaptureError(f"{path}: key {key!r} must be a list, got {type(value).__name__}")
    return value


def _is_number(v: object) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def _no_duplicates(pairs: list[tuple[str, object]]) -> dict:
    doc: dict = {}
    for k, v in pairs:
        if k in doc:
            raise _Duplicate(k)
        doc[k] = v
    return doc


class _Duplicate(Exception):
    """A JSON object names a key twice (raised from the parser hook)."""


def _load(path: str | os.PathLike[str]) -> object:
    try:
        with open(path, encoding="utf-8") as fh:
            return json.load(fh, parse_constant=float, object_pairs_hook=_no_duplicates)
    except OSError as exc:
        raise CaptureError(f"{path}: cannot read: {exc.strerror or exc}") from exc
    except UnicodeDecodeError as exc:
        raise CaptureError(f"{path}: not a UTF-8 text file") from exc
    except json.JSONDecodeError as exc:
        raise CaptureError(f"{path}:{exc.lineno}: invalid JSON: {exc.msg}") from exc
    except _Duplicate as exc:
        raise CaptureError(f"{path}: key {excerpt(exc.args[0])} is given twice") from None
    except RecursionError:
        raise CaptureError(f"{path}: arrays or objects nested too deeply to read") from None
    except ValueError as exc:  # Python's int-digits limit (4,300 digits)
        raise CaptureError(f"{path}: a number is too long to read (more than "
                           f"{sys.get_int_max_str_digits():,} digits)") from exc


def _levels(path: str | os.PathLike[str], levels: list) -> np.ndarray:
    """Return the levels as uint8, or CaptureError naming the first that is not 0 or 1."""
    if set(map(type, levels)) <= {int, float}:
        lv = np.array(levels, dtype=np.float64) if levels else np.zeros(0)
        if bad_level(lv) is None:
            return lv.astype(np.uint8)
    i = next(i for i, v in enumerate(levels) if not _is_number(v) or v not in (0, 1))
    raise CaptureError(f"{path}: levels[{i}] is {excerpt(levels[i])}, must be 0 or 1")


def _durations(path: str | os.PathLike[str], durations: list) -> np.ndarray:
    """Return the durations (µs, float64), or CaptureError naming the first bad one."""
    du = None
    if set(map(type, durations)) <= {int, float}:
        try:
            du = np.array(durations, dtype=np.float64) if durations else np.zeros(0)
        except OverflowError:  # an integer beyond the float range
            du = None
    if du is None:
        for i, v in enumerate(durations):
            if not _is_number(v):
                raise CaptureError(f"{path}: durations_us[{i}] is {excerpt(v)}, must be a number")
            try:
                float(v)
            except OverflowError:
                raise CaptureError(f"{path}: durations_us[{i}] {excerpt(v)} is longer than the "
                                   f"{MAX_DURATION_US:g} µs allowed") from None
        raise AssertionError("unreachable")  # pragma: no cover
    i = bad_duration(du)
    if i is not None:
        raise CaptureError(f"{path}: durations_us[{i}] {describe_duration(float(du[i]))}")
    return du


def read(path: str | os.PathLike[str]) -> PulseTrain:
    """Return the pulse train in a JSON capture (durations in µs)."""
    doc = _load(path)
    if not isinstance(doc, dict):
        raise CaptureError(f"{path}: expected a JSON object with 'levels' and 'durations_us'")
    if doc.get("format", FORMAT_TAG) != FORMAT_TAG:
        raise CaptureError(f"{path}: 'format' is {excerpt(doc.get('format'))}, expected "
                           f"{FORMAT_TAG!r}")
    version = doc.get("version", VERSION)
    if not _is_number(version) or version != VERSION:
        raise CaptureError(f"{path}: 'version' is {excerpt(version)}; this reader knows "
                           f"version {VERSION}")
    unknown = sorted(set(doc) - set(KEYS))
    if unknown:
        shown = ", ".join(map(excerpt, unknown[:5])) + (", ..." if len(unknown) > 5 else "")
        raise CaptureError(f"{path}: unknown key(s) {shown}; allowed: {', '.join(KEYS)}")
    levels = _array(path, doc, "levels")
    durations = _array(path, doc, "durations_us")
    if len(levels) != len(durations):
        raise CaptureError(f"{path}: 'levels' has {len(levels)} entries but 'durations_us' has "
                           f"{len(durations)}")
    return PulseTrain(_levels(path, levels), _durations(path, durations))


def write(path: str | os.PathLike[str], train: PulseTrain) -> None:
    """Write ``train`` as a JSON capture (exact float round trip)."""
    check_train_for_write(path, train.levels, train.durations_us)
    doc = {"format": FORMAT_TAG, "version": VERSION, "levels": train.levels.tolist(),
           "durations_us": train.durations_us.tolist()}
    write_text_atomic(path, json.dumps(doc, separators=(",", ":")) + "\n")
