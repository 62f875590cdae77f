"""Line codes: bits <-> chips (one chip = one symbol unit). One module per code.

Adding a code: write a module with a ``LineCode`` subclass (``name``, ``PARAMS``,
``DEFAULTS``, the properties and ``encode``/``decode``) and add one line to ``LINE_CODES``.
"""

from __future__ import annotations

from .._require import require
from ..errors import SpecError, excerpt
from ..spec.model import LineCodeSpec
from ._params import suggestion
from .base import DecodedBits, LineCode
from .biphase_mark import BiphaseMark
from .code3of6 import Code3of6
from .code4b6b import Code4b6b
from .diff_manchester import DiffManchester
from .manchester import Manchester
from .nrz import Nrz
from .pulse_distance import PulseDistance
from .pwm import Pwm

LINE_CODES: dict[str, type[LineCode]] = {
    cls.name: cls
    for cls in (Nrz, Manchester, DiffManchester, BiphaseMark, Pwm, PulseDistance, Code4b6b,
                Code3of6)
}


def get_line_code(spec: LineCodeSpec) -> LineCode:
    """Return the line code named by ``spec``, its parameters validated (SpecError if not)."""
    require(spec, LineCodeSpec, "spec", "e.g. frame_spec.line_code")
    cls = LINE_CODES.get(spec.name)
    if cls is None:
        names = list(LINE_CODES)
        raise SpecError("line_code.name", f"unknown line code {excerpt(spec.name)}; allowed: "
                        f"{', '.join(names)}{suggestion(str(spec.name)[:100], names)}")
    return cls(spec)


__all__ = ["LINE_CODES", "DecodedBits", "LineCode", "get_line_code"]
