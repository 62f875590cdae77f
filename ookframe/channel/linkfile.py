"""Channel files: a ``ChannelSpec`` in TOML, with the estimates it came from.

A channel file (``link.toml``) has one required table, ``[channel]``: any of the
``ChannelSpec`` parameters (an impairment not listed is off, its ``ChannelSpec`` default).
``ookframe calibrate`` writes the rest: ``[link]`` (format, version, warnings), one
``[estimates.NAME]`` table per measured figure (value, 95 % interval, method, how many
edges or pulses it rests on), ``[unknown]`` (what the capture could not tell, and why) and
``[source]`` (spec, capture, frame count). A hand-written file may hold ``[channel]`` only.

``load_link`` checks every key and value and raises ``ChannelFileError`` naming the file
and the key path (``channel.jitter_us``, ``estimates.clock_error_pct.ci95``).
"""

from __future__ import annotations

import difflib
import math
import os
import sys
import tomllib
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any

from ..errors import ChannelFileError, ValueRangeError, excerpt
from .model import ChannelSpec

#: ``[link] format`` of a channel file
LINK_FORMAT = "ookframe-channel"
#: the one ``[link] version`` this release reads and writes
LINK_VERSION = 1

_TOP_KEYS = ("link", "channel", "estimates", "unknown", "source")
_LINK_KEYS = ("format", "version", "warnings")
_ESTIMATE_KEYS = ("value", "ci95", "method", "n", "basis", "unit", "note", "tests")


@dataclass(frozen=True)
class Estimate:
    """One measured figure: ``value`` with its 95 % interval ``ci95`` (None when no interval
    applies, e.g. the jitter shape), the ``method`` of the interval, and ``n``, the number of
    edges, pulses or frames (``basis``) it rests on. ``tests`` holds named test statistics
    or p-values behind a choice (e.g. the jitter shape)."""

    name: str
    value: float | str
    ci95: tuple[float, float] | None
    method: str
    n: int
    basis: str
    unit: str = ""
    note: str = ""
    tests: tuple[tuple[str, float], ...] = ()

    def contains(self, x: float) -> bool:
        """True when ``x`` lies inside the 95 % interval (ends included)."""
        return self.ci95 is not None and self.ci95[0] <= x <= self.ci95[1]

    def to_dict(self) -> dict[str, Any]:
        """Return the estimate as a plain dict (JSON-ready)."""
        d: dict[str, Any] = {"value": self.value,
                             "ci95": list(self.ci95) if self.ci95 is not None else None,
                             "method": self.method, "n": self.n, "basis": self.basis}
        if self.unit:
            d["unit"] = self.unit
        if self.note:
            d["note"] = self.note
        if self.tests:
            d["tests"] = dict(self.tests)
        return d


@dataclass(frozen=True)
class LinkFile:
    """A loaded (or about to be written) channel file.

    ``channel``: the impairments; ``estimates``: the figures behind them, by name;
    ``unknown``: (name, reason) pairs for what the capture could not tell; ``warnings``:
    free-text cautions; ``source``: (key, value) pairs saying where it came from.
    """

    channel: ChannelSpec
    estimates: tuple[Estimate, ...] = ()
    unknown: tuple[tuple[str, str], ...] = ()
    warnings: tuple[str, ...] = ()
    source: tuple[tuple[str, str | int | float], ...] = ()
    path: str | None = field(default=None, compare=False)

    def estimate(self, name: str) -> Estimate | None:
        """Return the estimate called ``name``, or None."""
        return next((e for e in self.estimates if e.name == name), None)

    def to_dict(self) -> dict[str, Any]:
        """Return the whole file as a plain dict (JSON-ready)."""
        return {"format": LINK_FORMAT, "version": LINK_VERSION,
                "channel": self.channel.to_dict(),
                "estimates": {e.name: e.to_dict() for e in self.estimates},
                "unknown": dict(self.unknown), "warnings": list(self.warnings),
                "source": dict(self.source)}


# --- reading -------------------------------------------------------------------------------


def load_link(path: str | os.PathLike[str]) -> LinkFile:
    """Return the channel file at ``path``; ``ChannelFileError`` naming the key on any
    problem (unreadable, not TOML, unknown key, wrong type, value out of range)."""
    if not isinstance(path, str | os.PathLike):
        raise TypeError(f"path must be a str or os.PathLike, got {type(path).__name__}")
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as e:
        raise ChannelFileError(f"cannot read channel file {str(p)!r}: {e.strerror}") from None
    except UnicodeDecodeError:
        raise ChannelFileError(f"{p}: not a text (UTF-8) TOML file") from None
    return link_from_text(text, str(p))


def link_from_text(text: str, where: str = "channel file") -> LinkFile:
    """Return the channel file in TOML ``text`` (``where`` names it in messages)."""
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise ChannelFileError(f"{where}: not valid TOML: {e}") from None
    except RecursionError:
        raise ChannelFileError(f"{where}: arrays or tables nested too deeply to read") from None
    except ValueError:  # Python's int-digits limit, hit inside tomllib
        raise ChannelFileError(f"{where}: a number is too long to read (more than "
                               f"{sys.get_int_max_str_digits():,} digits)") from None
    return link_from_dict(doc, where)


def link_from_dict(doc: dict[str, Any], where: str = "channel file") -> LinkFile:
    """Return the channel file in a parsed TOML document (``where`` names it in messages)."""

    def fail(key: str, message: str) -> ChannelFileError:
        return ChannelFileError(f"{where}: {key}: {message}")

    _no_unknown_keys(doc, _TOP_KEYS, "", fail)
    warnings = _read_link_table(doc.get("link", {}), fail)
    if "channel" not in doc:
        raise ChannelFileError(f"{where}: no [channel] table; a channel file needs one with "
                               f"impairments such as jitter_us = 4.0 (allowed keys: "
                               f"{', '.join(f.name for f in fields(ChannelSpec))})")
    channel = _read_channel(doc["channel"], fail)
    estimates = _read_estimates(_table(doc.get("estimates", {}), "estimates", fail), fail)
    unknown = tuple((k, _string(v, f"unknown.{k}", fail))
                    for k, v in _table(doc.get("unknown", {}), "unknown", fail).items())
    source = tuple((k, _scalar(v, f"source.{k}", fail))
                   for k, v in _table(doc.get("source", {}), "source", fail).items())
    return LinkFile(channel, estimates, unknown, warnings, source, path=where)


def _read_link_table(t: Any, fail) -> tuple[str, ...]:
    t = _table(t, "link", fail)
    _no_unknown_keys(t, _LINK_KEYS, "link.", fail)
    if "format" in t and t["format"] != LINK_FORMAT:
        raise fail("link.format", f"expected {LINK_FORMAT!r}, got {excerpt(t['format'])}")
    if "version" in t and (type(t["version"]) is not int or t["version"] != LINK_VERSION):
        raise fail("link.version", f"this ookframe reads version {LINK_VERSION}, got "
                   f"{excerpt(t['version'])}")
    warnings = t.get("warnings", [])
    if not isinstance(warnings, list):
        raise fail("link.warnings", f"expected a list of strings, got {excerpt(warnings)}")
    return tuple(_string(w, f"link.warnings[{i}]", fail) for i, w in enumerate(warnings))


def _read_channel(t: Any, fail) -> ChannelSpec:
    t = _table(t, "channel", fail)
    names = [f.name for f in fields(ChannelSpec)]
    _no_unknown_keys(t, names, "channel.", fail)
    values: dict[str, Any] = {}
    for k, v in t.items():
        if k == "jitter_kind":
            if v not in ("gauss", "uniform"):
                raise fail("channel.jitter_kind", f"expected 'gauss' or 'uniform', got {excerpt(v)}")
        else:
            v = _number(v, f"channel.{k}", fail)
        values[k] = v
    try:
        return ChannelSpec(**values)
    except ValueRangeError as e:  # its message starts with the key path (channel.NAME: ...)
        key, _, message = str(e).partition(": ")
        raise fail(key, message) if key.startswith("channel.") else fail("channel", str(e)) \
            from None


def _read_estimates(t: dict[str, Any], fail) -> tuple[Estimate, ...]:
    out = []
    for name, e in t.items():
        key = f"estimates.{name}"
        e = _table(e, key, fail)
        _no_unknown_keys(e, _ESTIMATE_KEYS, key + ".", fail)
        for required in ("value", "method", "n"):
            if required not in e:
                raise fail(key, f"missing {required!r}")
        value = e["value"] if isinstance(e["value"], str) else _number(e["value"], key + ".value",
                                                                        fail)
        ci = e.get("ci95")
        if ci is not None:
            if not isinstance(ci, list) or len(ci) != 2:
                raise fail(key + ".ci95", f"expected [low, high], got {excerpt(ci)}")
            lo, hi = (_number(x, key + ".ci95", fail) for x in ci)
            if lo > hi:
                raise fail(key + ".ci95", f"low end {lo:g} is above the high end {hi:g}")
            ci = (lo, hi)
        n = e["n"]
        if type(n) is not int or n < 0:
            raise fail(key + ".n", f"expected a count (integer >= 0), got {excerpt(n)}")
        tests = _table(e.get("tests", {}), key + ".tests", fail)
        out.append(Estimate(
            name, value, ci, _string(e["method"], key + ".method", fail), n,
            _string(e.get("basis", ""), key + ".basis", fail),
            _string(e.get("unit", ""), key + ".unit", fail),
            _string(e.get("note", ""), key + ".note", fail),
            tuple((k, _number(v, f"{key}.tests.{k}", fail)) for k, v in tests.items())))
    return tuple(out)


def _table(t: Any, key: str, fail) -> dict[str, Any]:
    if not isinstance(t, dict):
        raise fail(key, f"expected a table ([{key}]), got {excerpt(t)}")
    return t


def _no_unknown_keys(t: dict[str, Any], allowed, prefix: str, fail) -> None:
    for k in t:
        if k not in allowed:
            close = difflib.get_close_matches(k, list(allowed), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise fail(prefix + k, f"unknown key{hint}; allowed: {', '.join(allowed)}")


def _number(v: Any, key: str, fail) -> float:
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise fail(key, f"expected a number, got {excerpt(v)}")
    if not math.isfinite(v):
        raise fail(key, f"must be finite, got {v!r}")
    return float(v)


def _string(v: Any, key: str, fail) -> str:
    if not isinstance(v, str):
        raise fail(key, f"expected a string, got {excerpt(v)}")
    return v


def _scalar(v: Any, key: str, fail) -> str | int | float:
    if isinstance(v, bool) or not isinstance(v, str | int | float):
        raise fail(key, f"expected a string or a number, got {excerpt(v)}")
    return v


# --- writing -------------------------------------------------------------------------------


def link_to_toml(link: LinkFile, header: tuple[str, ...] = ()) -> str:
    """Return the TOML text of ``link`` (``header``: comment lines placed first); reading it
    back with ``link_from_text`` gives ``link`` again."""
    lines = [f"# {h}" if h else "#" for h in header]
    lines += ["", "[link]", f"format = {_toml(LINK_FORMAT)}", f"version = {LINK_VERSION}",
              f"warnings = {_toml(list(link.warnings))}", "", "[channel]"]
    base = ChannelSpec()
    for f in fields(ChannelSpec):
        v = getattr(link.channel, f.name)
        e = link.estimate(f.name)
        why = dict(link.unknown).get(f.name)
        if e is not None and e.value != v:
            note = f"  # not the measured value, see [estimates.{f.name}] and [link] warnings"
        elif e is not None:
            note = f"  # measured, see [estimates.{f.name}]"
        else:
            note = "  # not measured: see [unknown]" if why is not None else \
                ("  # model default" if v == getattr(base, f.name) else "")
        lines.append(f"{f.name} = {_toml(v)}{note}")
    for e in link.estimates:
        lines += ["", f"[estimates.{e.name}]", f"value = {_toml(e.value)}"]
        if e.ci95 is not None:
            lines.append(f"ci95 = {_toml(list(e.ci95))}")
        lines += [f"method = {_toml(e.method)}", f"n = {e.n}", f"basis = {_toml(e.basis)}"]
        for k in ("unit", "note"):
            if getattr(e, k):
                lines.append(f"{k} = {_toml(getattr(e, k))}")
        if e.tests:
            lines.append("tests = {" + ", ".join(f"{k} = {_toml(v)}" for k, v in e.tests) + "}")
    lines += ["", "# what this capture cannot tell (the [channel] value there is a default)",
              "[unknown]"]
    lines += [f"{k} = {_toml(v)}" for k, v in link.unknown]
    lines += ["", "[source]"] + [f"{k} = {_toml(v)}" for k, v in link.source]
    return "\n".join(lines) + "\n"


def _toml(v: Any) -> str:
    """TOML text of a string, finite number, bool or list of them."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if not math.isfinite(v):
            raise ValueRangeError(f"cannot write {v!r} to a channel file (finite numbers only)")
        return repr(v)
    if isinstance(v, str):
        return '"' + "".join(_ESC.get(c, c if c >= " " else f"\\u{ord(c):04x}") for c in v) + '"'
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_toml(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


_ESC = {'"': '\\"', "\\": "\\\\", "\n": "\\n", "\t": "\\t", "\r": "\\r"}


__all__ = ["LINK_FORMAT", "LINK_VERSION", "Estimate", "LinkFile", "link_from_dict",
           "link_from_text", "link_to_toml", "load_link"]
