"""Manchester (biphase-level): every bit is two chips with a transition in the middle.

Conventions (parameter ``convention``):

- ``"ieee"`` — IEEE 802.3 clause 7.3.1.1 / ISO/IEC 8802-3: 0 = high->low (chips 1,0),
  1 = low->high (chips 0,1).
- ``"thomas"`` — G. E. Thomas: 0 = low->high (chips 0,1), 1 = high->low (chips 1,0).
"""

from __future__ import annotations

from typing import ClassVar

from ..spec.model import LineCodeSpec
from ._block import BlockCode

CONVENTIONS: dict[str, tuple[int, int]] = {
    # data bit value -> 2-chip codeword (first chip is the MSB)
    "ieee": (0b10, 0b01),
    "thomas": (0b01, 0b10),
}


class Manchester(BlockCode):
    """Manchester code, 2 chips per bit, either convention; runs are at most 2 units."""

    name = "manchester"
    DATA_BITS = 1
    CODE_CHIPS = 2
    DEFAULTS: ClassVar[dict[str, object]] = {"convention": "ieee"}
    PARAMS: ClassVar[dict[str, str]] = {
        "convention": '"ieee" (IEEE 802.3: 1 = low->high) or "thomas" (1 = high->low); '
        'default "ieee"',
    }

    def __init__(self, spec: LineCodeSpec) -> None:
        super().__init__(spec)
        self.convention = self.params.choice("convention", tuple(CONVENTIONS))

    @property
    def codewords(self) -> tuple[int, ...]:
        return CONVENTIONS[self.convention]
