"""Load a frame spec: parse TOML into the model (:mod:`ookframe.spec.load`), then validate
it through :func:`ookframe.plan.compile_plan` and check the default field values.

Every problem is a :class:`~ookframe.errors.SpecError` with the key path.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ._require import require
from .bits import to_blob, to_raw
from .checks import CATALOGUE, Crc
from .errors import SpecError, excerpt
from .linecodes import LINE_CODES, get_line_code
from .plan import FramePlan, compile_plan
from .spec.load import Lookups, parse_spec_dict, read_spec_file
from .spec.model import CrcParams, FrameSpec, LineCodeSpec


def _units_per_bit(line_code: LineCodeSpec) -> float:
    return get_line_code(line_code).units_per_bit


def _crc_model(name: str) -> CrcParams:
    try:
        return Crc.named(name).params
    except (KeyError, SpecError) as e:
        if isinstance(e, SpecError) and "ambiguous" in e.message:
            raise SpecError("check.model", e.message) from None
        close = difflib.get_close_matches(name[:100].upper(), list(CATALOGUE), n=3)
        hint = f"; close matches: {', '.join(close)}" if close else ""
        raise SpecError("check.model", f"unknown CRC model {excerpt(name)}{hint}") from None


LOOKUPS = Lookups(line_codes=tuple(LINE_CODES), units_per_bit=_units_per_bit,
                  crc_model=_crc_model)


def plan_and_defaults_from_dict(doc: Mapping[str, Any]) -> tuple[FramePlan, dict[str, object]]:
    """Return (compiled plan, default field values) from a parsed TOML document."""
    require(doc, Mapping, "doc", "give the dict tomllib.loads returns")
    spec, defaults = parse_spec_dict(doc, LOOKUPS)
    plan = compile_plan(spec)
    for i, f in enumerate(spec.fields):
        if f.name not in defaults:
            continue
        try:
            if f.kind == "bytes":
                to_blob(f, defaults[f.name])
            else:
                to_raw(f, defaults[f.name])
        except Exception as e:  # noqa: BLE001 - turn any conversion problem into a spec error
            raise SpecError(f"fields[{i}].default", str(e)) from None
    return plan, defaults


def spec_and_defaults_from_dict(doc: Mapping[str, Any]) -> tuple[FrameSpec, dict[str, object]]:
    """Return (validated FrameSpec, default field values given in the spec)."""
    plan, defaults = plan_and_defaults_from_dict(doc)
    return plan.spec, defaults


def spec_from_dict(doc: Mapping[str, Any]) -> FrameSpec:
    """Return a validated FrameSpec from a parsed TOML document (dict)."""
    return spec_and_defaults_from_dict(doc)[0]


def load_spec_and_defaults(path: str | Path) -> tuple[FrameSpec, dict[str, object]]:
    """Return (FrameSpec, defaults) from a TOML file; SpecError on any problem."""
    return spec_and_defaults_from_dict(read_spec_file(path))


def load_spec(path: str | Path) -> FrameSpec:
    """Return the validated FrameSpec in a TOML file."""
    return load_spec_and_defaults(path)[0]


def load_plan(path: str | Path) -> FramePlan:
    """Return the compiled plan of the spec in a TOML file."""
    return plan_and_defaults_from_dict(read_spec_file(path))[0]
