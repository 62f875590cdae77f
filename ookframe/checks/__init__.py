"""Error checks: CRCs (Rocksoft model, catalogue of published models) and checksums.

``make_check(CheckSpec)`` returns an object with ``kind``, ``width_bits``,
``compute(data: bytes) -> int`` and ``compute_rows(rows) -> uint64 array`` (every row of a
frames x bytes array at once; ``base.check_rows`` handles rows of several lengths). Adding
a check: one class in its own module with those four members, plus one line in
``registry.CHECKS``.
"""

from .base import Check
from .catalogue import ALIASES, CATALOGUE, CatalogueEntry, resolve_name
from .checksums import Fletcher16, NoCheck, Sum8, Xor8
from .crc import CHECK_INPUT, CRCMOD_C_EXTENSION, Crc, reflect
from .registry import CHECKS, make_check

__all__ = [
    "ALIASES",
    "CATALOGUE",
    "CHECKS",
    "CHECK_INPUT",
    "CRCMOD_C_EXTENSION",
    "CatalogueEntry",
    "Check",
    "Crc",
    "Fletcher16",
    "NoCheck",
    "Sum8",
    "Xor8",
    "make_check",
    "reflect",
    "resolve_name",
]
