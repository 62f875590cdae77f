"""Check kinds -> constructors; ``make_check`` builds the check a CheckSpec asks for."""

from __future__ import annotations

from collections.abc import Callable

from .._require import require
from ..errors import SpecError
from ..spec.model import CheckSpec
from .base import Check
from .checksums import Fletcher16, NoCheck, Sum8, Xor8
from .crc import Crc


def _crc(spec: CheckSpec) -> Check:
    if spec.crc is None:
        raise SpecError("check.crc", "kind \"crc\" needs CRC parameters or a catalogue model")
    return Crc.from_params(spec.crc)


#: CheckSpec.kind -> constructor (one line per check family)
CHECKS: dict[str, Callable[[CheckSpec], Check]] = {
    NoCheck.kind: lambda spec: NoCheck(),
    Crc.kind: _crc,
    Sum8.kind: lambda spec: Sum8(),
    Xor8.kind: lambda spec: Xor8(),
    Fletcher16.kind: lambda spec: Fletcher16(),
}


def make_check(spec: CheckSpec) -> Check:
    """Return the Check object for ``spec`` (SpecError for an unknown kind)."""
    require(spec, CheckSpec, "spec")
    try:
        factory = CHECKS[spec.kind]
    except KeyError:
        raise SpecError("check.kind", f"unknown check kind {spec.kind!r}; allowed: "
                        f"{', '.join(CHECKS)}") from None
    return factory(spec)
