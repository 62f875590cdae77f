"""Parse a frame spec from TOML (``tomllib``) into the frozen model.

Every error is a :class:`~ookframe.errors.SpecError` carrying the key path, what is wrong
and what is allowed; unknown keys get a close-match suggestion. This module checks keys,
types and ranges; what needs a later stage (line codes, CRCs, whitening, the field layout)
is checked by :func:`ookframe.plan.compile_plan`. The public loaders that do both are in
:mod:`ookframe.spec_io`; the few facts parsing needs from later stages come in as
:class:`Lookups`, so this package imports nothing after the model.
"""

from __future__ import annotations

import difflib
import math
import os
import sys
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import QUOTE_CHARS, SpecError, excerpt, require
from .model import (
    CheckSpec,
    CrcParams,
    DecoderSpec,
    FieldSpec,
    FrameSpec,
    LineCodeSpec,
    PreambleSpec,
    SyncSpec,
    WhiteningSpec,
)
from .names import name_problem, same_name

#: timing limits of the links this tool targets (bit rates ~0.3-10 kbit/s are usual)
MIN_UNIT_US = 1.0
MAX_UNIT_US = 1_000_000.0
MAX_REPEATS = 255
#: size limits (documented in README, "Spec reference"): frames for cheap OOK links are
#: tens of bytes; these keep every analysis fast and bounded in memory
MAX_FIELDS = 128
MAX_PREAMBLE_COUNT = 512
MAX_FRAME_BITS = 4096  # preamble + sync + fields (longest) + check, before the line code
MAX_TRANSMISSION_BITS = 16384  # frame bits x repeats

TOP_KEYS = ("frame", "line_code", "preamble", "sync", "fields", "check", "whitening", "decoder")
FRAME_KEYS = (
    "name", "description", "bit_rate_bps", "unit_us", "bit_order", "byte_order",
    "repeats", "gap_us",
)
FIELD_KEYS = (
    "name", "width_bits", "signed", "scale", "offset", "role", "kind", "max_len_bytes",
    "unit", "description", "default",
)
CRC_KEYS = ("width", "poly", "init", "refin", "refout", "xorout")
CHECK_KEYS = ("kind", "model", "covers", "byte_order", *CRC_KEYS)
WHITENING_KEYS = ("kind", "width", "poly", "seed", "covers")
DECODER_KEYS = ("glitch_fraction", "tolerance", "loop_gain", "report_bad_check", "max_flips")
CHECK_KINDS = ("none", "crc", "sum8", "xor8", "fletcher16")


@dataclass(frozen=True)
class Lookups:
    """What parsing needs from later stages, handed in by the caller.

    line_codes: the line code names (for the "is required" message); units_per_bit: chips
    per data bit of a line code (to turn ``bit_rate_bps`` into ``unit_us``; SpecError for
    a bad line code); crc_model: the parameters of a catalogue CRC name (SpecError with
    path ``check.model`` when unknown or ambiguous).
    """

    line_codes: tuple[str, ...]
    units_per_bit: Callable[[LineCodeSpec], float]
    crc_model: Callable[[str], CrcParams]


def _suggest(key: str, allowed: tuple[str, ...] | list[str]) -> str:
    close = difflib.get_close_matches(key[:100], list(allowed), n=1)
    hint = f" (did you mean '{close[0]}'?)" if close else ""
    return f"unknown key{hint}; allowed: {', '.join(allowed)}"


def _table(d: object, path: str) -> Mapping[str, Any]:
    if not isinstance(d, Mapping):
        raise SpecError(path, f"must be a table, got {type(d).__name__}")
    return d


def _no_unknown(d: Mapping[str, Any], allowed: tuple[str, ...], path: str) -> None:
    for k in d:
        if k not in allowed:
            key = k if len(k) <= QUOTE_CHARS else excerpt(k)
            raise SpecError(f"{path}.{key}" if path else key, _suggest(k, allowed))


def _default(path: str, default: Any) -> Any:
    """The default of an absent key; SpecError when the key is required (no default)."""
    if default is None:
        raise SpecError(path, "is required")
    return default


def _int(d: Mapping[str, Any], key: str, path: str, default: int | None = None, *,
         lo: int | None = None, hi: int | None = None) -> int:
    p = f"{path}.{key}"
    if key not in d:
        return _default(p, default)
    v = d[key]
    if isinstance(v, bool) or not isinstance(v, int):
        hint = " (write it without quotes: 3, 0x2D, 0b101)" if isinstance(v, str) else ""
        raise SpecError(p, f"must be an integer, got {type(v).__name__} {excerpt(v)}{hint}")
    if lo is not None and v < lo or hi is not None and v > hi:
        allowed = f"{lo}..{hi}" if hi is not None else f">= {lo}"
        raise SpecError(p, f"{excerpt(v)} is out of range; allowed {allowed}")
    return v


def _float(d: Mapping[str, Any], key: str, path: str, default: float | None = None, *,
           lo: float | None = None, hi: float | None = None, lo_open: bool = False) -> float:
    p = f"{path}.{key}"
    if key not in d:
        return _default(p, default)
    v = d[key]
    if isinstance(v, bool) or not isinstance(v, int | float):
        raise SpecError(p, f"must be a number, got {type(v).__name__} {excerpt(v)}")
    try:
        v = float(v)
    except OverflowError:
        raise SpecError(p, f"{excerpt(v)} is too large") from None
    if not math.isfinite(v):
        raise SpecError(p, "must be finite")
    if lo is not None and (v < lo or (lo_open and v == lo)):
        raise SpecError(p, f"{v:g} is out of range; must be {'>' if lo_open else '>='} {lo:g}"
                        + (f" and <= {hi:g}" if hi is not None else ""))
    if hi is not None and v > hi:
        raise SpecError(p, f"{v:g} is out of range; must be <= {hi:g}")
    return v


def _bool(d: Mapping[str, Any], key: str, path: str, default: bool) -> bool:
    v = d.get(key, default)
    if not isinstance(v, bool):
        raise SpecError(f"{path}.{key}", f"must be true or false, got {excerpt(v)}")
    return v


def _choice(d: Mapping[str, Any], key: str, path: str, allowed: tuple[str, ...],
            default: str | None = None) -> str:
    p = f"{path}.{key}"
    if key not in d:
        if default is None:
            raise SpecError(p, f"is required; allowed: {', '.join(allowed)}")
        return default
    v = d[key]
    if not isinstance(v, str) or v.lower() not in allowed:
        close = difflib.get_close_matches(str(v)[:100].lower(), list(allowed), n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        raise SpecError(p, f"{excerpt(v)} is not allowed{hint}; allowed: {', '.join(allowed)}")
    return v.lower()


def _str(d: Mapping[str, Any], key: str, path: str, default: str = "") -> str:
    v = d.get(key, default)
    if not isinstance(v, str):
        raise SpecError(f"{path}.{key}", f"must be a string, got {type(v).__name__} {excerpt(v)}")
    return v


def _identifier(name: object, path: str, what: str, *, fold_case: bool = False) -> str:
    problem = name_problem(name, what, fold_case=fold_case)
    if problem:
        raise SpecError(path, problem)
    return name  # type: ignore[return-value] - name_problem checked it is a str


def _sections(d: Mapping[str, Any], path: str, allowed: tuple[str, ...],
              default: tuple[str, ...]) -> tuple[str, ...]:
    v = d.get("covers", list(default))
    if isinstance(v, str):
        v = [v]
    if not isinstance(v, list) or not v:
        raise SpecError(f"{path}.covers", f"must be a non-empty list; allowed: {', '.join(allowed)}")
    out = []
    for i, s in enumerate(v):
        if s not in allowed:
            raise SpecError(f"{path}.covers[{i}]", f"{excerpt(s)} is not allowed; allowed: "
                            f"{', '.join(allowed)}")
        if s in out:
            raise SpecError(f"{path}.covers[{i}]", f"{excerpt(s)} is listed twice")
        out.append(s)
    return tuple(sorted(out, key=allowed.index))


def _field(d: object, i: int) -> tuple[FieldSpec, object]:
    path = f"fields[{i}]"
    d = _table(d, path)
    _no_unknown(d, FIELD_KEYS, path)
    if "name" not in d:
        raise SpecError(f"{path}.name", "is required")
    name = _identifier(d["name"], f"{path}.name", "field name")
    kind = _choice(d, "kind", path, ("int", "bytes"), "int")
    role = _choice(d, "role", path, ("value", "length"), "value")
    if kind == "bytes":
        if "width_bits" in d and d["width_bits"] != 8:
            raise SpecError(f"{path}.width_bits", "a bytes field has 8-bit elements; omit width_bits")
        max_len = _int(d, "max_len_bytes", path, lo=1, hi=255)
        if role == "length":
            raise SpecError(f"{path}.role", "a bytes field cannot be the length field")
        f = FieldSpec(name=name, width_bits=8, kind="bytes", max_len_bytes=max_len,
                      unit=_str(d, "unit", path), description=_str(d, "description", path))
        return f, d.get("default")
    if "max_len_bytes" in d:
        raise SpecError(f"{path}.max_len_bytes", "only allowed with kind = \"bytes\"")
    width = _int(d, "width_bits", path, lo=1, hi=64)
    signed = _bool(d, "signed", path, False)
    scale = _float(d, "scale", path, 1.0)
    if scale == 0.0:
        raise SpecError(f"{path}.scale", "must not be 0")
    offset = _float(d, "offset", path, 0.0)
    if role == "length" and (signed or scale != 1.0 or offset != 0.0):
        raise SpecError(f"{path}.role", "a length field must be unsigned and unscaled")
    f = FieldSpec(name=name, width_bits=width, signed=signed, scale=scale, offset=offset,
                  role=role, unit=_str(d, "unit", path), description=_str(d, "description", path))
    return f, d.get("default")


def _crc_params(d: Mapping[str, Any], path: str, lookups: Lookups) -> CrcParams:
    if "model" in d:
        extra = [k for k in CRC_KEYS if k in d]
        if extra:
            raise SpecError(f"{path}.{extra[0]}", "give either model or explicit CRC parameters, not both")
        model = d["model"]
        if not isinstance(model, str):
            raise SpecError(f"{path}.model", "must be a catalogue name such as \"CRC-16/KERMIT\"")
        return lookups.crc_model(model)
    width = _int(d, "width", path, lo=3, hi=64)
    top = (1 << width) - 1
    params = CrcParams(
        width=width,
        poly=_int(d, "poly", path, lo=1, hi=top),
        init=_int(d, "init", path, 0, lo=0, hi=top),
        refin=_bool(d, "refin", path, False),
        refout=_bool(d, "refout", path, False),
        xorout=_int(d, "xorout", path, 0, lo=0, hi=top),
    )
    if params.poly & 1 == 0:
        raise SpecError(f"{path}.poly", "a CRC polynomial must have its x^0 term set (odd value)")
    return params


def _check(d: object, lookups: Lookups, frame_byte_order: str) -> CheckSpec:
    """Return the CheckSpec of a [check] table; ``byte_order`` defaults to the frame's
    (to "big" for no check or a width that is not a multiple of 8: byte order has no meaning
    there)."""
    path = "check"
    d = _table(d, path)
    _no_unknown(d, CHECK_KEYS, path)
    kind = _choice(d, "kind", path, CHECK_KINDS, "crc" if ("model" in d or "poly" in d) else None)
    covers = _sections(d, path, ("sync", "fields"), ("fields",))
    crc = _crc_params(d, path, lookups) if kind == "crc" else None
    if kind != "crc":
        for k in ("model", *CRC_KEYS):
            if k in d:
                raise SpecError(f"{path}.{k}", f"only allowed with kind = \"crc\" (kind is {kind!r})")
    width_bits = CheckSpec(kind=kind, crc=crc).width_bits
    byte_order = _choice(d, "byte_order", path, ("big", "little"),
                         frame_byte_order if width_bits and width_bits % 8 == 0 else "big")
    spec = CheckSpec(kind=kind, crc=crc, covers=covers, byte_order=byte_order)
    if byte_order == "little" and spec.width_bits % 8:
        raise SpecError(f"{path}.byte_order", f"little needs a check width that is a multiple of 8, "
                        f"this check is {spec.width_bits} bits")
    return spec


def _whitening(d: object) -> WhiteningSpec:
    path = "whitening"
    d = _table(d, path)
    _no_unknown(d, WHITENING_KEYS, path)
    kind = _choice(d, "kind", path, ("none", "pn9", "lfsr"), "pn9")
    covers = _sections(d, path, ("fields", "check"), ("fields", "check"))
    if kind == "none":
        return WhiteningSpec(kind="none", covers=covers)
    if kind == "pn9":
        for k in ("width", "poly"):
            if k in d:
                raise SpecError(f"{path}.{k}", "PN9 is fixed as x^9+x^5+1; use kind = \"lfsr\" to change it")
        width, poly = 9, 0x021
    else:
        width = _int(d, "width", path, lo=2, hi=32)
        poly = _int(d, "poly", path, lo=1, hi=(1 << width) - 1)
    seed = _int(d, "seed", path, (1 << width) - 1, lo=1, hi=(1 << width) - 1)
    return WhiteningSpec(kind="lfsr" if kind == "lfsr" else "pn9", width=width, poly=poly,
                         seed=seed, covers=covers)


def _line_code(d: object, lookups: Lookups) -> LineCodeSpec:
    path = "line_code"
    d = _table(d, path)
    if "name" not in d:
        raise SpecError(f"{path}.name", f"is required; allowed: {', '.join(lookups.line_codes)}")
    name = d["name"]
    if not isinstance(name, str):
        raise SpecError(f"{path}.name", f"must be a string, got {type(name).__name__} "
                        f"{excerpt(name)}")
    params = tuple(sorted((k, v) for k, v in d.items() if k != "name"))
    spec = LineCodeSpec(name=str(name).lower(), params=params)
    lookups.units_per_bit(spec)  # a bad name or parameter fails here, before the rest
    return spec


def _preamble(d: object) -> PreambleSpec:
    path = "preamble"
    d = _table(d, path)
    _no_unknown(d, ("pattern", "pattern_bits", "count"), path)
    bits = _int(d, "pattern_bits", path, 8, lo=1, hi=64)
    pattern = _int(d, "pattern", path, 0b10101010 & ((1 << bits) - 1), lo=0, hi=2**64 - 1)
    if pattern >> bits:
        raise SpecError(f"{path}.pattern", f"0x{pattern:X} is wider than pattern_bits = {bits}")
    count = _int(d, "count", path, 2, lo=0, hi=MAX_PREAMBLE_COUNT)
    return PreambleSpec(pattern=pattern, pattern_bits=bits, count=count)


def _sync(d: object) -> SyncSpec:
    path = "sync"
    d = _table(d, path)
    _no_unknown(d, ("value", "length_bits", "max_errors"), path)
    length = _int(d, "length_bits", path, lo=4, hi=64)
    value = _int(d, "value", path, lo=0, hi=2**64 - 1)
    if value >> length:
        raise SpecError(f"{path}.value", f"0x{value:X} is wider than length_bits = {length}")
    max_errors = _int(d, "max_errors", path, 0, lo=0, hi=max(0, (length - 1) // 4))
    return SyncSpec(value=value, length_bits=length, max_errors=max_errors)


def _decoder(d: object) -> DecoderSpec:
    path = "decoder"
    d = _table(d, path)
    _no_unknown(d, DECODER_KEYS, path)
    return DecoderSpec(
        glitch_fraction=_float(d, "glitch_fraction", path, 0.3, lo=0.0, hi=0.9),
        tolerance=_float(d, "tolerance", path, 0.35, lo=0.05, hi=0.49),
        loop_gain=_float(d, "loop_gain", path, 0.05, lo=0.0, hi=0.5),
        report_bad_check=_bool(d, "report_bad_check", path, True),
        max_flips=_int(d, "max_flips", path, 2, lo=0, hi=4),
    )


def parse_spec_dict(doc: Mapping[str, Any], lookups: Lookups
                    ) -> tuple[FrameSpec, dict[str, object]]:
    """Return (FrameSpec, default field values as written) from a parsed TOML document.

    Keys, types and ranges are checked here; :func:`ookframe.plan.compile_plan` checks the
    rest and :mod:`ookframe.spec_io` the defaults.
    """
    doc = _table(doc, "")
    _no_unknown(doc, TOP_KEYS, "")
    for req in ("frame", "line_code", "sync"):
        if req not in doc:
            inner = doc.get("frame")
            if isinstance(inner, Mapping) and req in inner:  # e.g. line_code = "nrz" in [frame]
                raise SpecError(f"frame.{req}", f"{req} is a section of its own: write a [{req}] "
                                "table (e.g. [line_code] with name = \"manchester\")")
            raise SpecError(req, "section is required")
    fr = _table(doc["frame"], "frame")
    _no_unknown(fr, FRAME_KEYS, "frame")
    if "name" not in fr:
        raise SpecError("frame.name", "is required (a C identifier, used as the prefix of generated C)")
    name = _identifier(fr["name"], "frame.name", "frame name (C prefix)", fold_case=True)
    line_code = _line_code(doc["line_code"], lookups)
    if ("bit_rate_bps" in fr) == ("unit_us" in fr):
        raise SpecError("frame", "give exactly one of bit_rate_bps or unit_us")
    if "unit_us" in fr:
        unit_us = _float(fr, "unit_us", "frame", lo=MIN_UNIT_US, hi=MAX_UNIT_US)
    else:
        rate = _float(fr, "bit_rate_bps", "frame", lo=0.0, lo_open=True)
        unit_us = 1e6 / (rate * lookups.units_per_bit(line_code))
        if not MIN_UNIT_US <= unit_us <= MAX_UNIT_US:
            raise SpecError("frame.bit_rate_bps", f"{rate:g} bit/s gives a symbol unit of {unit_us:g} µs "
                            f"with {line_code.name}; allowed units are {MIN_UNIT_US:g}..{MAX_UNIT_US:g} µs")
    raw_fields = doc.get("fields")
    if not isinstance(raw_fields, list) or not raw_fields:
        raise SpecError("fields", "at least one field is required ([[fields]] tables)")
    if len(raw_fields) > MAX_FIELDS:
        raise SpecError("fields", f"{len(raw_fields)} fields; allowed at most {MAX_FIELDS}")
    fields: list[FieldSpec] = []
    defaults: dict[str, object] = {}
    for i, fd in enumerate(raw_fields):
        f, default = _field(fd, i)
        fields.append(f)
        pair = same_name([g.name for g in fields])
        if pair:
            first = fields[pair[0]].name
            why = "" if first == f.name else f" (same as {first!r} in upper-case C macro names)"
            raise SpecError(f"fields[{i}].name", f"duplicate field name {f.name!r}{why}")
        if default is not None:
            defaults[f.name] = default
    byte_order = _choice(fr, "byte_order", "frame", ("big", "little"), "big")
    check = _check(doc["check"], lookups, byte_order) if "check" in doc else CheckSpec()
    spec = FrameSpec(
        name=name,
        description=_str(fr, "description", "frame"),
        unit_us=unit_us,
        line_code=line_code,
        preamble=_preamble(doc.get("preamble", {})),
        sync=_sync(doc["sync"]),
        fields=tuple(fields),
        check=check,
        whitening=_whitening(doc["whitening"]) if "whitening" in doc else WhiteningSpec(),
        bit_order=_choice(fr, "bit_order", "frame", ("msb", "lsb"), "msb"),
        byte_order=byte_order,
        repeats=_int(fr, "repeats", "frame", 1, lo=1, hi=MAX_REPEATS),
        gap_us=_float(fr, "gap_us", "frame", 10000.0, lo=0.0, hi=10_000_000.0),
        decoder=_decoder(doc.get("decoder", {})),
    )
    _check_size(spec)
    return spec, defaults


def _check_size(spec: FrameSpec) -> None:
    """Raise SpecError when the frame is longer than the documented size limits."""
    bits = spec.max_frame_bits
    if bits > MAX_FRAME_BITS:
        raise SpecError("frame", f"the frame is up to {bits} bits long (preamble, sync, fields, "
                        f"check); allowed at most {MAX_FRAME_BITS}")
    if bits * spec.repeats > MAX_TRANSMISSION_BITS:
        raise SpecError("frame.repeats", f"{spec.repeats} repeats of a {bits}-bit frame are "
                        f"{bits * spec.repeats} bits; allowed at most {MAX_TRANSMISSION_BITS} "
                        "bits a transmission")


def read_spec_file(path: str | Path) -> dict[str, Any]:
    """Return the TOML document in a spec file; SpecError when unreadable or not TOML."""
    require(path, (str, os.PathLike), "path")
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as e:
        raise SpecError("", f"cannot read spec file {str(p)!r}: {e.strerror}") from None
    except UnicodeDecodeError:
        raise SpecError("", f"{p}: not a text (UTF-8) TOML file") from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise SpecError("", f"{p}: not valid TOML: {e}") from None
    except RecursionError:
        raise SpecError("", f"{p}: arrays or tables nested too deeply to read") from None
    except ValueError:  # Python's int-digits limit, hit inside tomllib
        raise SpecError("", f"{p}: a number is too long to read (more than "
                        f"{sys.get_int_max_str_digits():,} digits)") from None
    return doc
