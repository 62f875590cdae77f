"""Argument checks for the public API: a TypeError naming the parameter, raised at the entry.

Public functions call these first, so a wrong argument (a list for a ``PulseTrain``, a
path for a ``FrameSpec``, ``None`` for a channel) fails with one clear message instead of
an AttributeError from deep inside. They return the argument, checked.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import Any, TypeVar

import numpy as np

from .pulses import PulseTrain
from .spec.model import FrameSpec

T = TypeVar("T")

#: how to get the right type, for the common mistakes
_HINTS: dict[type, str] = {
    FrameSpec: "load one with ookframe.load_spec(path) or ookframe.spec_from_dict(doc)",
    PulseTrain: "build one with ookframe.PulseTrain(levels, durations_us) or "
    "ookframe.read_capture(path)",
    np.random.Generator: "make one with numpy.random.default_rng(seed)",
}


def _type_name(t: type | tuple[type, ...]) -> str:
    """Return 'a FrameSpec', 'an int', 'a str or PathLike' (numpy integers count as int)."""
    names = [x.__name__ for x in (t if isinstance(t, tuple) else (t,)) if x is not np.integer]
    text = " or ".join(names)
    return ("an " if text[0].lower() in "aeiou" else "a ") + text


def require(value: Any, expected: type[T] | tuple[type, ...], name: str,
            hint: str = "") -> T:
    """Return ``value`` if it is an instance of ``expected``; else TypeError naming ``name``."""
    allowed = expected if isinstance(expected, tuple) else (expected,)
    if isinstance(value, allowed) and (bool in allowed or not isinstance(value, bool)):
        return value  # type: ignore[return-value]
    hint = hint or (_HINTS.get(expected, "") if isinstance(expected, type) else "")
    got = "None" if value is None else type(value).__name__
    raise TypeError(f"{name} must be {_type_name(expected)}, got {got}"
                    + (f"; {hint}" if hint else ""))


def require_spec(spec: Any, name: str = "spec") -> FrameSpec:
    """Return ``spec`` if it is a FrameSpec; TypeError naming ``name`` otherwise."""
    if isinstance(spec, str | os.PathLike):
        raise TypeError(f"{name} must be a FrameSpec, got the path {os.fspath(spec)[:60]!r}; "
                        f"{_HINTS[FrameSpec]}")
    return require(spec, FrameSpec, name)


def require_train(train: Any, name: str = "train") -> PulseTrain:
    """Return ``train`` if it is a PulseTrain; TypeError naming ``name`` otherwise."""
    return require(train, PulseTrain, name)


def require_values(values: Any, name: str = "values") -> Mapping[str, object]:
    """Return ``values`` if it is a mapping of field name -> value; TypeError otherwise."""
    return require(values, Mapping, name, "give a dict of field name -> value, e.g. "
                   "{'hive': 3}")


def require_rng(rng: Any, name: str = "rng") -> np.random.Generator:
    """Return ``rng`` if it is a numpy Generator; TypeError naming ``name`` otherwise."""
    return require(rng, np.random.Generator, name)


def require_int(value: Any, name: str, lo: int = 0) -> int:
    """Return ``value`` if it is an integer (int or numpy, not bool) >= ``lo``; TypeError or
    ValueError naming ``name``."""
    v = require(value, (int, np.integer), name)
    if v < lo:
        raise ValueError(f"{name} must be >= {lo}, got {v}")
    return v


def require_path(path: Any, name: str = "path") -> str | os.PathLike[str]:
    """Return ``path`` if it is a str or os.PathLike; TypeError naming ``name`` otherwise."""
    return require(path, (str, os.PathLike), name)
