"""4B6B: the IEEE 802.15.7 run-length-limited 4B6B code (VPPM PHY I, clause 10.5.1).

Every nibble is sent MSB first (the first data bit is the table's leftmost input bit) as one
6-chip codeword of weight 3 (DC balanced), leftmost chip first. The 16 codewords are the 20
weight-3 words of 6 chips without 000111, 111000 (runs of 3 at both ends), 001011 and
110100. Longest run inside a codeword: 3; across two: 4.
"""

from __future__ import annotations

from ._block import BlockCode

#: IEEE 802.15.7 4B6B table: codeword of nibble 0x0 .. 0xF
CODEWORDS_4B6B: tuple[int, ...] = (
    0b001110, 0b001101, 0b010011, 0b010110, 0b010101, 0b100011, 0b100110, 0b100101,
    0b011001, 0b011010, 0b011100, 0b110001, 0b110010, 0b101001, 0b101010, 0b101100,
)


class Code4b6b(BlockCode):
    """IEEE 802.15.7 4B6B block code: 4 data bits -> 6 chips, weight 3; longest run 4 units."""

    name = "4b6b"
    DATA_BITS = 4
    CODE_CHIPS = 6
    CODEWORDS = CODEWORDS_4B6B
