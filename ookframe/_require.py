"""Argument checks for the public API: a TypeError naming the parameter, raised at the entry.

Public functions call these first, so a wrong argument (a list for a ``PulseTrain``, a
path for a ``FrameSpec``, ``None`` for a channel) fails with one clear message instead of
an AttributeError from deep inside. They return the argument, checked.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import Any

import numpy as np

from .errors import require
from .pulses import PulseTrain
from .spec.model import FrameSpec

#: how to get the right type, for the common mistakes
SPEC_HINT = "load one with ookframe.load_spec(path) or ookframe.spec_from_dict(doc)"
TRAIN_HINT = "build one with ookframe.PulseTrain(levels, durations_us) or ookframe.read_capture(path)"
RNG_HINT = "make one with numpy.random.default_rng(seed)"


def require_spec(spec: Any, name: str = "spec") -> Any:
    """Return ``spec`` if it is a FrameSpec (or a compiled FramePlan); TypeError naming
    ``name`` otherwise."""
    if isinstance(spec, str | os.PathLike):
        raise TypeError(f"{name} must be a FrameSpec, got the path {os.fspath(spec)[:60]!r}; "
                        f"{SPEC_HINT}")
    from .plan import FramePlan  # here: the plan's own stages (line codes, checks) use this module

    if isinstance(spec, FramePlan):
        return spec
    return require(spec, FrameSpec, name, SPEC_HINT)


def require_train(train: Any, name: str = "train") -> PulseTrain:
    """Return ``train`` if it is a PulseTrain; TypeError naming ``name`` otherwise."""
    return require(train, PulseTrain, name, TRAIN_HINT)


def require_values(values: Any, name: str = "values") -> Mapping[str, object]:
    """Return ``values`` if it is a mapping of field name -> value; TypeError otherwise."""
    return require(values, Mapping, name, "give a dict of field name -> value, e.g. "
                   "{'hive': 3}")


def require_rng(rng: Any, name: str = "rng") -> np.random.Generator:
    """Return ``rng`` if it is a numpy Generator; TypeError naming ``name`` otherwise."""
    return require(rng, np.random.Generator, name, RNG_HINT)


def require_int(value: Any, name: str, lo: int = 0) -> int:
    """Return ``value`` if it is an integer (int or numpy, not bool) >= ``lo``; TypeError or
    ValueError naming ``name``."""
    v = require(value, (int, np.integer), name, what="an int")
    if v < lo:
        raise ValueError(f"{name} must be >= {lo}, got {v}")
    return v


def require_path(path: Any, name: str = "path") -> str | os.PathLike[str]:
    """Return ``path`` if it is a str or os.PathLike; TypeError naming ``name`` otherwise."""
    return require(path, (str, os.PathLike), name)


__all__ = ["require", "require_int", "require_path", "require_rng", "require_spec",
           "require_train", "require_values"]
