"""3-out-of-6: the EN 13757-4 (wireless M-Bus mode T) nibble code, MSB-first nibbles.

Table from EN 13757-4:2013 (3-out-of-6 coding table), written from memory; every
codeword has weight 3.
"""

from __future__ import annotations

from ._block import BlockCode

CODEWORDS_3OF6: tuple[int, ...] = (
    0x16, 0x0D, 0x0E, 0x0B, 0x1C, 0x19, 0x1A, 0x13,
    0x2C, 0x25, 0x26, 0x23, 0x34, 0x31, 0x32, 0x29,
)


class Code3of6(BlockCode):
    """EN 13757-4 3-out-of-6 code: 4 data bits -> 6 chips, weight 3."""

    name = "3of6"
    DATA_BITS = 4
    CODE_CHIPS = 6
    CODEWORDS = CODEWORDS_3OF6
