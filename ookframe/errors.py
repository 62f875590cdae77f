"""Exceptions raised by ookframe; the CLI turns each into a one-line message and an exit code."""

from __future__ import annotations

import reprlib
from typing import Any, TypeVar


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


class ChannelFileError(OokframeError):
    """A channel file (TOML, ``--channel FILE``) cannot be used; the message names the file
    and the key (e.g. ``link.toml: channel.jitter_us: expected a number``)."""


class CodegenError(OokframeError):
    """C code cannot be generated for this spec/target (timing does not fit, bad name...)."""


class ClusterError(OokframeError):
    """A Dask cluster cannot be used (extra not installed, scheduler unreachable, no worker,
    another ookframe version on a worker)."""


#: longest quotation of user input in an error message (characters, before "...")
QUOTE_CHARS = 40


class _ShortRepr(reprlib.Repr):
    """reprlib with integers of any size (Python refuses str() beyond 4,300 digits)."""

    def repr_int(self, x: int, level: int) -> str:
        if x.bit_length() <= 128:
            return repr(x)
        return f"<an integer of about {int(x.bit_length() * 0.30103) + 1:,} digits>"

    def repr_str(self, x: str, level: int) -> str:
        if len(x) <= self.maxstring:
            return repr(x)
        return f"{repr(x[:self.maxstring])}... ({len(x):,} characters)"


_SHORT = _ShortRepr()
_SHORT.maxstring = _SHORT.maxother = QUOTE_CHARS
_SHORT.maxlist = _SHORT.maxtuple = _SHORT.maxdict = _SHORT.maxset = 6
_SHORT.maxlevel = 3


def excerpt(value: object) -> str:
    """Return a short ``repr`` of ``value`` for quoting user input in an error message.

    Strings longer than ``QUOTE_CHARS`` are cut (``'abc'... (10,485,760 characters)``),
    containers show their first few items and huge integers their digit count, so a 10 MB
    line or a 5,000-digit number never comes back whole. Every message that quotes input
    uses this helper.
    """
    return _SHORT.repr(value)


T = TypeVar("T")


def require(value: Any, expected: type[T] | tuple[type, ...], name: str, hint: str = "",
            what: str = "") -> T:
    """Return ``value`` if it is an instance of ``expected`` (a bool only when bool is
    expected); else TypeError naming the parameter ``name``, what it must be (``what``, by
    default the type names) and ``hint`` (how to get one). Public functions call it first."""
    allowed = expected if isinstance(expected, tuple) else (expected,)
    if isinstance(value, allowed) and (bool in allowed or not isinstance(value, bool)):
        return value  # type: ignore[return-value]
    if not what:
        text = " or ".join(t.__name__ for t in allowed)
        what = ("an " if text[0].lower() in "aeiou" else "a ") + text
    got = "None" if value is None else type(value).__name__
    raise TypeError(f"{name} must be {what}, got {got}" + (f"; {hint}" if hint else ""))
