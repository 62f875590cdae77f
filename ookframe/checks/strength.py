"""Strength of a frame's check (CRC or checksum) at the length it covers, and alternatives.

CRCs: :mod:`.crc_strength` (exact HD and pattern count). Checksums, by direct reasoning
on their arithmetic (tests confirm each claim by search):

* ``xor8`` (column parity, linear): HD 2 — flipping the same bit in two of the B bytes
  (data bytes + the check byte) cancels; exactly 8 * C(B, 2) undetected 2-bit patterns.
* ``sum8``: HD 2 — a 0->1 and a 1->0 flip of the same bit in two bytes cancel (which
  patterns are undetected depends on the data, so the probability is a bound).
* ``fletcher16`` (sums mod 255): a single data flip changes sum1, so two flips must be the
  same bit in opposite directions, and then sum2 changes by 2^i (k - j) mod 255: HD 3 up
  to 255 covered bytes, HD 2 from 256 bytes (flips 255 bytes apart); data dependent.

Error patterns are counted over the covered bits plus the check bits as sent; bit order,
reflection and whitening only permute or XOR positions and do not change the figures. A
covered length that is not whole bytes is rounded up (pad bits only remove error
positions, so the HD given is a lower bound there).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import ValueRangeError
from ..spec.model import CheckSpec, FrameSpec
from .catalogue import CATALOGUE
from .crc_strength import crc_strength, undetected_probability

#: bit-error rate at which the design report states the undetected-frame probability
DEFAULT_BER = 1e-4
CHECKSUM_WIDTH_BITS = {"sum8": 8, "xor8": 8, "fletcher16": 16}


@dataclass(frozen=True)
class CheckStrength:
    """HD of one check at ``data_bits`` covered bits and P(undetected) at ``ber``.

    hd_exact False: ``hd`` is a lower bound. count: undetected patterns of weight hd
    (None when unknown; then the probability is the bound C(n, hd) p^hd (1-p)^(n-hd)).
    """

    kind: str
    name: str
    width_bits: int
    data_bits: int
    hd: int
    hd_exact: bool
    count: int | None
    ber: float
    undetected_per_frame_at_ber: float
    poly: int | None = None

    def key(self) -> tuple[int, float]:
        """Ranking key: larger HD first, then smaller undetected probability."""
        return (self.hd, -self.undetected_per_frame_at_ber)

    def as_dict(self) -> dict[str, object]:
        d = dict(self.__dict__)
        d["poly"] = None if self.poly is None else f"0x{self.poly:0{(self.width_bits + 3) // 4}X}"
        return d


def covered_bits(spec: FrameSpec) -> int:
    """Return the most bits the spec's check covers (sync and/or the longest fields)."""
    n = 0
    if "sync" in spec.check.covers:
        n += spec.sync.length_bits
    if "fields" in spec.check.covers:
        n += sum(f.width_bits if f.kind == "int" else 8 * f.max_len_bytes for f in spec.fields)
    return n


def checksum_strength(kind: str, data_bits: int, ber: float = DEFAULT_BER) -> CheckStrength:
    """Return the :class:`CheckStrength` of a checksum (see the module docstring)."""
    if kind not in CHECKSUM_WIDTH_BITS:
        raise ValueRangeError(f"unknown checksum {kind!r}; allowed: {', '.join(CHECKSUM_WIDTH_BITS)}")
    w = CHECKSUM_WIDTH_BITS[kind]
    data_bytes = -(-data_bits // 8)
    n = 8 * data_bytes + w
    count: int | None = None
    if kind == "xor8":
        hd, count = 2, 8 * math.comb(data_bytes + 1, 2)
    elif kind == "sum8":
        hd = 2
    else:
        hd = 3 if data_bytes <= 255 else 2
    return CheckStrength(kind, kind, w, data_bits, hd, True, count, ber,
                         undetected_probability(n, hd, count, ber))


def crc_check_strength(width: int, poly: int, data_bits: int, ber: float = DEFAULT_BER,
                       name: str = "") -> CheckStrength:
    """Return the :class:`CheckStrength` of a CRC generator at ``data_bits`` covered bits."""
    s = crc_strength(width, poly, 8 * -(-data_bits // 8), reach=False)
    return CheckStrength("crc", name or f"CRC-{width} poly 0x{poly:X}", width, data_bits, s.hd,
                         s.hd_exact, s.undetected, ber, s.undetected_probability(ber), poly)


def no_check_strength(data_bits: int, ber: float = DEFAULT_BER) -> CheckStrength:
    """No check: every error goes undetected (HD 1); probability of any bit error."""
    return CheckStrength("none", "none", 0, data_bits, 1, True, None, ber,
                         1.0 - (1.0 - ber) ** data_bits)


def check_strength(check: CheckSpec, data_bits: int, ber: float = DEFAULT_BER) -> CheckStrength:
    """Return the :class:`CheckStrength` of the check a :class:`CheckSpec` describes."""
    if check.kind == "none":
        return no_check_strength(data_bits, ber)
    if check.kind == "crc":
        assert check.crc is not None
        return crc_check_strength(check.crc.width, check.crc.poly, data_bits, ber,
                                  check.crc.name)
    return checksum_strength(check.kind, data_bits, ber)


def alternatives(width_bits: int, data_bits: int, ber: float = DEFAULT_BER
                 ) -> list[CheckStrength]:
    """Return every catalogue CRC (one per distinct poly) and checksum of ``width_bits``,
    strongest first."""
    polys: dict[int, str] = {}
    for name, entry in CATALOGUE.items():
        if entry.params.width == width_bits:
            polys.setdefault(entry.params.poly, name)
    out = [crc_check_strength(width_bits, p, data_bits, ber, n) for p, n in sorted(polys.items())]
    out += [checksum_strength(k, data_bits, ber) for k, w in CHECKSUM_WIDTH_BITS.items()
            if w == width_bits]
    return sorted(out, key=lambda s: (s.key(), s.name), reverse=True)


def stronger_alternative(chosen: CheckStrength, others: list[CheckStrength]
                         ) -> CheckStrength | None:
    """Return the strongest alternative when it beats ``chosen`` (higher HD, or the same
    HD with under half the undetected probability); None otherwise."""
    for alt in others:
        if alt.kind == chosen.kind and (alt.poly, alt.name) == (chosen.poly, chosen.name) or \
                alt.kind == "crc" == chosen.kind and alt.poly == chosen.poly:
            continue
        better_hd = alt.hd > chosen.hd and (alt.hd_exact or alt.hd > chosen.hd)
        same_hd = alt.hd == chosen.hd and \
            alt.undetected_per_frame_at_ber < 0.5 * chosen.undetected_per_frame_at_ber
        if better_hd or same_hd:
            return alt
        return None
    return None
