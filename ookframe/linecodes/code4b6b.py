"""4B6B: every nibble (MSB first) -> one 6-chip codeword of weight 3 (DC balanced).

Of the 20 weight-3 words of 6 chips, 000111 and 111000 are left out (runs of 3 at both
ends), then 001011 and 110100: among all 153 ways to drop two more words, this one is the
only choice that keeps the longest run over any codeword sequence at 4 chips with the
fewest codeword pairs (8 of 256 ordered pairs) reaching it. The 16 words left are given
to nibbles 0..F in ascending order. Longest run inside a codeword: 3; across two: 4.
"""

from __future__ import annotations

from ._block import BlockCode

CODEWORDS_4B6B: tuple[int, ...] = (
    0b001101, 0b001110, 0b010011, 0b010101, 0b010110, 0b011001, 0b011010, 0b011100,
    0b100011, 0b100101, 0b100110, 0b101001, 0b101010, 0b101100, 0b110001, 0b110010,
)


class Code4b6b(BlockCode):
    """4B6B block code: 4 data bits -> 6 chips, weight 3; longest run 4 units."""

    name = "4b6b"
    DATA_BITS = 4
    CODE_CHIPS = 6
    CODEWORDS = CODEWORDS_4B6B
