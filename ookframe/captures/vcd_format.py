"""VCD captures (IEEE 1364-2005 clause 18, value change dump) of one 1-bit signal.

Reading streams the file line by line (memory grows with the selected signal's changes,
not with the file), honours ``$timescale`` and selects a 1-bit variable by name: its full
dotted path (``top.radio.tx``), its reference name when unique (``tx``) or with its bit
index (``data[0]``). When ``signal`` is None the file must hold exactly one 1-bit
signal. IEEE 1364 allows ``$timescale`` magnitudes 1, 10 and 100; any whole magnitude
1..1000 is accepted and read exactly (``7 ps``, ``1000 ns`` = 1 µs), others are refused.
Timestamps are whole numbers up to 2^63 - 1; a pulse longer than ``MAX_DURATION_US`` is
refused. Error messages quote at most a short excerpt of the file.

x and z: values before the signal's first 0/1 (power-up "unknown") are skipped and the
train starts at the first 0/1 change. After that, ``xz="space"`` (default) reads x/z as
level 0 (carrier off, what a receiver sees from an undriven transmitter); ``xz="error"``
raises CaptureError naming the line. The last pulse lasts until the file's last timestamp.

Writing produces ``$timescale 1 ns``, one ``wire`` named ``signal`` (default ``ook``) and
edge times rounded to the nearest nanosecond (from cumulative time, so no drift).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .. import __version__ as version
from ..errors import CaptureError, excerpt
from ..pulses import PulseTrain, merge_runs
from ._common import (
    bad_duration,
    check_train_for_write,
    describe_duration,
    write_text_atomic,
)

NAME = "vcd"
EXTENSIONS = (".vcd",)
XZ_MODES = ("space", "error")

#: timescale unit -> length in µs (exact)
_UNITS_US: dict[str, Fraction] = {
    "s": Fraction(10**6), "ms": Fraction(10**3), "us": Fraction(1),
    "ns": Fraction(1, 10**3), "ps": Fraction(1, 10**6), "fs": Fraction(1, 10**9),
}
MAX_MAGNITUDE = 1000
MAX_TIME = 2**63 - 1
_SCALAR_VALUES = {"0": 0, "1": 1, "x": 2, "X": 2, "z": 2, "Z": 2}


@dataclass(frozen=True)
class VcdVar:
    """One ``$var`` declaration: full dotted name, identifier code and width in bits."""

    name: str
    reference: str
    ident: str
    size: int
    var_type: str


def _tokens(fh) -> Iterator[tuple[int, str]]:
    for lineno, line in enumerate(fh, 1):
        for tok in line.split():
            yield lineno, tok


def _until_end(path, toks: Iterator[tuple[int, str]], keyword: str, start_line: int) -> list[str]:
    out: list[str] = []
    for _, tok in toks:
        if tok == "$end":
            return out
        out.append(tok)
    raise CaptureError(f"{path}:{start_line}: {keyword} has no matching $end")


def _parse_timescale(path, words: list[str], lineno: int) -> Fraction:
    text = "".join(words)
    digits = text.rstrip("abcdefghijklmnopqrstuvwxyz")
    unit = text[len(digits):]
    if not digits.isdigit() or len(digits) > 4 or not 1 <= int(digits) <= MAX_MAGNITUDE \
            or unit not in _UNITS_US:
        raise CaptureError(f"{path}:{lineno}: $timescale {excerpt(' '.join(words))} not "
                           f"understood; expected a magnitude 1..{MAX_MAGNITUDE} (standard: 1, "
                           "10, 100) and a unit s|ms|us|ns|ps|fs")
    return int(digits) * _UNITS_US[unit]


def _read_header(path, toks) -> tuple[Fraction | None, list[VcdVar], int]:
    timescale: Fraction | None = None
    scopes: list[str] = []
    variables: list[VcdVar] = []
    for lineno, tok in toks:
        if tok == "$enddefinitions":
            _until_end(path, toks, tok, lineno)
            return timescale, variables, lineno
        if tok == "$timescale":
            timescale = _parse_timescale(path, _until_end(path, toks, tok, lineno), lineno)
        elif tok == "$scope":
            words = _until_end(path, toks, tok, lineno)
            scopes.append(words[-1] if words else "")
        elif tok == "$upscope":
            _until_end(path, toks, tok, lineno)
            if scopes:
                scopes.pop()
        elif tok == "$var":
            words = _until_end(path, toks, tok, lineno)
            if len(words) < 4 or not words[1].isdigit() or len(words[1]) > 9:
                raise CaptureError(f"{path}:{lineno}: malformed $var {excerpt(' '.join(words))}"
                                   "; expected 'type size identifier reference [index]' with a "
                                   "size of at most 9 digits")
            ref = words[3] + "".join(words[4:])
            variables.append(VcdVar(".".join([*scopes, ref]), ref, words[2], int(words[1]),
                                    words[0]))
        elif tok.startswith("$"):
            _until_end(path, toks, tok, lineno)
        else:
            raise CaptureError(f"{path}:{lineno}: unexpected {excerpt(tok)} in the VCD header")
    raise CaptureError(f"{path}: no $enddefinitions; not a VCD file or truncated header")


def _select(path, variables: list[VcdVar], signal: str | None) -> VcdVar:
    one_bit = [v for v in variables if v.size == 1]
    listing = _listing(sorted({v.name for v in one_bit}))
    if signal is None:
        idents = {v.ident for v in one_bit}
        if len(idents) == 1:
            return one_bit[0]
        raise CaptureError(f"{path}: holds {len(idents)} 1-bit signals; choose one by name "
                           f"(--signal NAME; signal=NAME in Python; available: {listing})")
    matches = [v for v in variables if v.name == signal]
    if not matches:
        matches = [v for v in variables if v.reference == signal
                   or v.reference.split("[")[0] == signal]
    if len({v.ident for v in matches}) > 1:
        names = _listing(sorted(v.name for v in matches))
        raise CaptureError(f"{path}: signal {excerpt(signal)} is ambiguous ({names}); use the "
                           "full name")
    if not matches:
        raise CaptureError(f"{path}: no signal named {excerpt(signal)}; available 1-bit "
                           f"signals: {listing}")
    if matches[0].size != 1:
        raise CaptureError(f"{path}: signal {excerpt(signal)} is {matches[0].size} bits wide; only "
                           f"1-bit signals can be read as a pulse train (available: {listing})")
    return matches[0]


def _listing(names: list[str], most: int = 8) -> str:
    """Return up to ``most`` names (each cut short) for a message, and how many in all."""
    if not names:
        return "none"
    shown = ", ".join(n if len(n) <= 40 else excerpt(n) for n in names[:most])
    return shown if len(names) <= most else f"{shown}, ... ({len(names)} in all)"


def list_signals(path: str | os.PathLike[str]) -> list[VcdVar]:
    """Return every variable declared in the VCD header (the body is not read)."""
    with _open(path) as fh:
        return _read_header(path, _tokens(fh))[1]


def _open(path):
    try:
        return open(path, encoding="utf-8", errors="replace")
    except OSError as exc:
        raise CaptureError(f"{path}: cannot read: {exc.strerror or exc}") from exc


def _open_body(path, signal: str | None, xz: str):
    """Return (open file, token iterator positioned at the body, timescale, target ident)."""
    if xz not in XZ_MODES:
        raise CaptureError(f"xz={xz!r} not allowed; allowed: {', '.join(XZ_MODES)}")
    fh = _open(path)
    try:
        toks = _tokens(fh)
        timescale, variables, _ = _read_header(path, toks)
        if timescale is None:
            raise CaptureError(f"{path}: no $timescale in the header; cannot convert times to µs")
        target = _select(path, variables, signal).ident
    except BaseException:
        fh.close()
        raise
    return fh, toks, timescale, target


def _body_blocks(path, toks, target: str, block: int
                 ) -> Iterator[tuple[list[int], list[int], dict[int, int], int]]:
    """Yield the target signal's changes in blocks of ``block``: (times, values (0, 1, 2 for
    x/z), line of every x/z by index in the block, last timestamp so far); the last block
    (possibly empty) comes at the end of the file."""
    times: list[int] = []
    values: list[int] = []
    xz_lines: dict[int, int] = {}  # index in values -> line number
    now = 0
    last_time = 0
    for lineno, tok in toks:
        head = tok[0]
        if head == "#":
            digits = tok[1:]
            if not digits.isdigit() or not digits.isascii():
                raise CaptureError(f"{path}:{lineno}: bad timestamp {excerpt(tok)}")
            if len(digits) > 19 or int(digits) > MAX_TIME:
                raise CaptureError(f"{path}:{lineno}: timestamp {excerpt(tok)} is above "
                                   "2^63 - 1 time units")
            t = int(digits)
            if t < now:
                raise CaptureError(f"{path}:{lineno}: time goes backwards ({t} after {now})")
            now = last_time = t
        elif head in _SCALAR_VALUES:
            if tok[1:] == target:
                v = _SCALAR_VALUES[head]
                if v == 2:
                    xz_lines[len(values)] = lineno
                times.append(now)
                values.append(v)
        elif head in "bBrRsS":
            try:
                ident = next(toks)[1]
            except StopIteration:
                raise CaptureError(f"{path}:{lineno}: value {excerpt(tok)} has no identifier") \
                    from None
            if ident == target:
                bits = tok[1:].lstrip("0") or "0"
                if head in "rRsS" or len(bits) != 1 or bits not in _SCALAR_VALUES:
                    raise CaptureError(f"{path}:{lineno}: value {excerpt(tok)} for a 1-bit "
                                       "signal")
                v = _SCALAR_VALUES[bits]
                if v == 2:
                    xz_lines[len(values)] = lineno
                times.append(now)
                values.append(v)
        elif tok == "$comment":
            _until_end(path, toks, tok, lineno)
        elif tok in ("$dumpvars", "$dumpall", "$dumpon", "$dumpoff", "$end"):
            continue
        else:
            raise CaptureError(f"{path}:{lineno}: unexpected {excerpt(tok)} in the VCD body")
        if len(values) >= block:
            yield times, values, xz_lines, last_time
            times, values, xz_lines = [], [], {}
    yield times, values, xz_lines, last_time


def read(path: str | os.PathLike[str], *, signal: str | None = None,
         xz: str = "space") -> PulseTrain:
    """Return the pulse train of one 1-bit signal in a VCD file (durations in µs)."""
    fh, toks, timescale, target = _open_body(path, signal, xz)
    with fh:
        ((times, values, xz_lines, last_time),) = _body_blocks(path, toks, target, 2**62)
    return _to_train(path, times, values, xz_lines, last_time, timescale, xz)


def iter_read(path: str | os.PathLike[str], *, signal: str | None = None, xz: str = "space",
              chunk_pulses: int = 1_000_000) -> Iterator[PulseTrain]:
    """Yield the train :func:`read` returns in pieces of at most ``chunk_pulses`` pulses,
    reading the file token by token (memory bounded by the piece); the same validation
    and messages. Joined, the pieces are :func:`read`'s train (runs of equal levels
    merged across pieces too)."""
    fh, toks, timescale, target = _open_body(path, signal, xz)
    num, den = timescale.numerator, timescale.denominator
    started = False
    pend: tuple[int, int] | None = None  # last change: (time, level), duration not yet known
    carry = (np.zeros(0, np.uint8), np.zeros(0))  # last merged pulse, may still grow
    count = 0  # pulses before merging, for messages
    last_time = 0
    with fh:
        for block in _body_blocks(path, toks, target, chunk_pulses):
            times, values, xz_lines, last_time = block
            v = np.asarray(values, np.uint8)
            t = np.asarray(times, np.int64)
            first = 0
            if not started:
                known = np.flatnonzero(v != 2)
                if known.size == 0:
                    continue
                first, started = int(known[0]), True
            if xz == "error":
                later = [i for i in xz_lines if i >= first]
                if later:
                    raise CaptureError(f"{path}:{xz_lines[min(later)]}: signal is x/z "
                                       "(unknown); read with xz='space' to treat it as "
                                       "carrier off")
            v, t = v[first:], t[first:]
            v[v == 2] = 0
            if pend is not None:
                t = np.concatenate(([pend[0]], t))
                v = np.concatenate(([pend[1]], v))
            if t.size == 0:
                continue
            pend = (int(t[-1]), int(v[-1]))
            lv, du, count = _pulses(path, t, v, count, num, den, timescale)
            merged = merge_runs(np.concatenate((carry[0], lv)), np.concatenate((carry[1], du)))
            if len(merged) > 1:
                yield PulseTrain(merged.levels[:-1], merged.durations_us[:-1])
            carry = (merged.levels[-1:], merged.durations_us[-1:])
    if pend is None:
        return
    t = np.array([pend[0], max(last_time, pend[0])], np.int64)
    lv, du, count = _pulses(path, t, np.array([pend[1], 0], np.uint8), count, num, den,
                            timescale)
    merged = merge_runs(np.concatenate((carry[0], lv)), np.concatenate((carry[1], du)))
    for i in range(0, len(merged), chunk_pulses):
        yield PulseTrain(merged.levels[i:i + chunk_pulses],
                         merged.durations_us[i:i + chunk_pulses])


def _pulses(path, t: np.ndarray, v: np.ndarray, count: int, num: int, den: int,
            timescale: Fraction) -> tuple[np.ndarray, np.ndarray, int]:
    """Return (levels, durations_us, pulses so far) of the changes ``t``/``v`` but the last
    (its length is not known yet); zero-length pulses dropped."""
    ticks = np.diff(t)
    keep = ticks > 0
    durations_us = ticks[keep].astype(np.float64) * num / den
    i = bad_duration(durations_us)
    if i is not None:
        raise CaptureError(f"{path}: pulse {count + i} (from #{int(t[:-1][keep][i])}) "
                           f"{describe_duration(float(durations_us[i]))} at $timescale "
                           f"{float(timescale):g} µs")
    return v[:-1][keep], durations_us, count + int(keep.sum())


def _to_train(path, times: list[int], values: list[int], xz_lines: dict[int, int],
              end_time: int, timescale: Fraction, xz: str) -> PulseTrain:
    v = np.asarray(values, np.uint8)
    known = np.flatnonzero(v != 2)
    if known.size == 0:
        return PulseTrain(np.zeros(0, np.uint8), np.zeros(0))
    first = int(known[0])
    if xz == "error":
        later = [i for i in xz_lines if i > first]
        if later:
            raise CaptureError(f"{path}:{xz_lines[min(later)]}: signal is x/z (unknown); "
                               "read with xz='space' to treat it as carrier off")
    t = np.asarray(times, np.int64)[first:]
    v = v[first:]
    v[v == 2] = 0
    ticks = np.diff(np.append(t, max(end_time, int(t[-1]))))
    keep = ticks > 0
    num, den = timescale.numerator, timescale.denominator
    durations_us = ticks[keep].astype(np.float64) * num / den
    i = bad_duration(durations_us)
    if i is not None:
        raise CaptureError(f"{path}: pulse {i} (from #{int(t[keep][i])}) "
                           f"{describe_duration(float(durations_us[i]))} at $timescale "
                           f"{float(timescale):g} µs")
    return merge_runs(v[keep], durations_us)


def write(path: str | os.PathLike[str], train: PulseTrain, *, signal: str = "ook",
          scope: str = "ookframe") -> None:
    """Write ``train`` as a VCD (1 ns timescale) with one 1-bit wire named ``signal``."""
    check_train_for_write(path, train.levels, train.durations_us)
    if not signal.isidentifier() or not scope.isidentifier():
        raise CaptureError(f"{path}: signal and scope names must be identifiers, got "
                           f"{signal!r}, {scope!r}")
    edges_ns = np.rint(np.concatenate(([0.0], np.cumsum(train.durations_us))) * 1000.0)
    edges_ns = edges_ns.astype(np.int64)
    if train.levels.size and np.any(np.diff(edges_ns) <= 0):
        raise CaptureError(f"{path}: a pulse is shorter than the 1 ns VCD resolution")
    header = (f"$version ookframe {version} $end\n$timescale 1 ns $end\n"
              f"$scope module {scope} $end\n$var wire 1 ! {signal} $end\n$upscope $end\n"
              "$enddefinitions $end\n")
    if train.levels.size == 0:
        write_text_atomic(path, header + "#0\n$dumpvars\nx!\n$end\n")
        return
    changes = "".join(map("#{}\n{}!\n".format, edges_ns[1:-1].tolist(),
                          train.levels[1:].tolist()))
    body = f"#0\n$dumpvars\n{int(train.levels[0])}!\n$end\n{changes}#{int(edges_ns[-1])}\n"
    write_text_atomic(path, header + body)
