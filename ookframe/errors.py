"""Exceptions raised by ookframe; the CLI turns each into a one-line message and an exit code."""

from __future__ import annotations


class OokframeError(Exception):
    """Base class of every error ookframe raises on purpose."""


class SpecError(OokframeError):
    """A frame spec is invalid; `path` is the key path (e.g. ``fields[2].width_bits``)."""

    def __init__(self, path: str, message: str) -> None:
        self.path = path
        self.message = message
        super().__init__(f"{path}: {message}" if path else message)


class ValueRangeError(OokframeError):
    """A field value given for encoding does not fit its field."""


class CaptureError(OokframeError):
    """A pulse capture file cannot be read (bad header, NaN or non-positive durations...)."""


class CodegenError(OokframeError):
    """C code cannot be generated for this spec/target (timing does not fit, bad name...)."""


class ClusterError(OokframeError):
    """A Dask cluster cannot be used (extra not installed, scheduler unreachable, no worker,
    another ookframe version on a worker)."""
