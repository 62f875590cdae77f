"""CRC model with Rocksoft/Williams parameters (widths 3..64) and its algorithms.

Model (Williams, "A Painless Guide to CRC Error Detection Algorithms"): the register
starts at ``init``; each input byte is bit-reflected first when ``refin``; bits are fed
MSB-first through a left-shifting register with ``poly`` (x^width term implied); the
final register is reflected when ``refout`` and XORed with ``xorout``.

``compute`` goes through crcmod (its C extension when present) for widths 8/16/24/32/64
with refin == refout, the cases crcmod can express; every other model uses the
table-driven algorithm below. The table-driven algorithms (``compute_table256``,
``compute_table16``) are the ones the C generator emits, with ``Crc.table`` as data:

* refin False -- left-shifting, register in its natural orientation::

      table[i] = (i * x^width) mod poly                    (width-bit entries)
      per byte b:   r = ((r << 8) & mask) ^ table[((r << 8) >> width) ^ b]
      per nibble n: r = ((r << 4) & mask) ^ table16[((r << 4) >> width) ^ n]  (high first)

  ``table(16)`` is ``table(256)[:16]``. The shifts work for widths below 8 as well.

* refin True -- right-shifting, register held bit-reflected (init reflected first)::

      table[i] = i shifted right 8 times through reflect(poly)   (width-bit entries)
      per byte b:   r = (r >> 8) ^ table[(r ^ b) & 0xFF]
      per nibble n: r = (r >> 4) ^ table16[(r ^ n) & 0xF]   (low nibble first)

  where ``table16[i]`` is i shifted right 4 times.

Output: reflect the register when its orientation differs from ``refout``, then XOR
``xorout``. ``compute_bitwise`` is the plain bit-at-a-time model, used to cross-check.
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from dataclasses import dataclass, fields
from functools import lru_cache
from typing import ClassVar

import crcmod
import numpy as np

from ..errors import SpecError
from ..spec.model import CrcParams
from .catalogue import CATALOGUE, resolve_name

#: widths crcmod.mkCrcFun accepts
CRCMOD_WIDTHS: frozenset[int] = frozenset({8, 16, 24, 32, 64})
MIN_WIDTH_BITS = 3
MAX_WIDTH_BITS = 64
#: :meth:`Crc.compute_rows` runs crcmod row by row up to this many rows per byte of row
#: width: a row costs about 0.3 us there, a column of the table algorithm about 5 us
ROWS_PER_COLUMN = 20
#: the standard check input
CHECK_INPUT = b"123456789"
#: True when crcmod runs on its C extension (else its pure-Python fallback)
CRCMOD_C_EXTENSION: bool = bool(getattr(sys.modules["crcmod.crcmod"], "_usingExtension", False))


def reflect(value: int, width: int) -> int:
    """Return ``value`` with its low ``width`` bits in reverse order."""
    return int(format(value, f"0{width}b")[::-1], 2)


@dataclass(frozen=True)
class Crc(CrcParams):
    """A CRC in Rocksoft/Williams parameters (the fields of CrcParams: width, poly, init,
    refin, refout, xorout, name); validated at construction (SpecError)."""

    kind: ClassVar[str] = "crc"

    def __post_init__(self) -> None:
        who = f"CRC {self.name}: " if self.name else ""
        if not _is_int(self.width) or not MIN_WIDTH_BITS <= self.width <= MAX_WIDTH_BITS:
            raise SpecError("width", f"{who}CRC width must be an integer "
                            f"{MIN_WIDTH_BITS}..{MAX_WIDTH_BITS}, got {self.width!r}")
        top = self.mask
        for key in ("poly", "init", "xorout"):
            value = getattr(self, key)
            if not _is_int(value) or not 0 <= value <= top:
                raise SpecError(key, f"{who}{key} must be an integer 0..{top:#x} "
                                f"(fits {self.width} bits), got {value!r}")
        if self.poly & 1 == 0:
            raise SpecError("poly", f"{who}a CRC polynomial must have its x^0 term set "
                            f"(odd value), got {self.poly:#x}")
        for key in ("refin", "refout"):
            if not isinstance(getattr(self, key), bool):
                raise SpecError(key, f"{who}{key} must be true or false, "
                                f"got {getattr(self, key)!r}")
        if not isinstance(self.name, str):
            raise SpecError("name", f"CRC name must be a string, got {self.name!r}")

    # ----------------------------------------------------------------- construction
    @classmethod
    def named(cls, name: str) -> Crc:
        """Return the catalogue model ``name`` (case-insensitive; aliases and unambiguous
        bare suffixes such as "KERMIT" accepted); SpecError if unknown or ambiguous."""
        return cls.from_params(CATALOGUE[resolve_name(name)].params)

    @classmethod
    def from_params(cls, params: CrcParams) -> Crc:
        """Return the validated Crc for spec-model parameters."""
        return cls(**{f.name: getattr(params, f.name) for f in fields(CrcParams)})

    # ------------------------------------------------------------------- properties
    @property
    def params(self) -> CrcParams:
        """Return these parameters as the spec model's CrcParams."""
        return CrcParams(**{f.name: getattr(self, f.name) for f in fields(CrcParams)})

    @property
    def width_bits(self) -> int:
        """Return the check value width in bits (the CRC width)."""
        return self.width

    @property
    def mask(self) -> int:
        """Return the all-ones value of ``width`` bits."""
        return (1 << self.width) - 1

    @property
    def check(self) -> int:
        """Return the CRC of b"123456789" (the catalogue's check value)."""
        return self.compute(CHECK_INPUT)

    @property
    def residue(self) -> int:
        """Return the register after any error-free codeword (message + its CRC), refout
        reflection applied, xorout not applied (the catalogue's ``residue``).

        By linearity it does not depend on the message or ``init``: it is
        (X * x^width) mod poly with X = xorout (reflected when refout), reflected when
        refin, as the catalogue defines it. A receiver running the CRC over a whole
        codeword checks the raw register against this constant.
        """
        w = self.width
        x = reflect(self.xorout, w) if self.refout else self.xorout
        r = x
        for _ in range(w):  # w zero bits through the left-shifting register
            top = r >> (w - 1)
            r = (r << 1) & self.mask
            if top:
                r ^= self.poly
        return reflect(r, w) if self.refin else r

    def describe(self) -> str:
        """Return the parameters on one line (width, poly, init, refin, refout, xorout, check,
        residue)."""
        digits = (self.width + 3) // 4

        def h(v: int) -> str:
            return f"0x{v:0{digits}x}"

        text = (f"width={self.width} poly={h(self.poly)} init={h(self.init)} "
                f"refin={str(self.refin).lower()} refout={str(self.refout).lower()} "
                f"xorout={h(self.xorout)} check={h(self.check)} residue={h(self.residue)}")
        return f"{text} name={self.name!r}" if self.name else text

    # ------------------------------------------------------------------- algorithms
    def compute(self, data: bytes) -> int:
        """Return the CRC of ``data`` (width-bit int); crcmod where it applies, else tables."""
        if self.width in CRCMOD_WIDTHS and self.refin == self.refout:
            return _crcmod_fun(self.width, self.poly, self.init, self.refin, self.xorout)(data)
        return self.compute_table256(data)

    def table(self, entries: int = 256) -> tuple[int, ...]:
        """Return the 256- or 16-entry table of this CRC's table-driven algorithm (width-bit
        entries): reflected/right-shifting when refin, else left-shifting (module doc)."""
        if entries not in (256, 16):
            raise ValueError(f"CRC table entries must be 256 or 16, got {entries!r}")
        return _table(self.width, self.poly, self.refin, entries)

    def compute_table256(self, data: bytes) -> int:
        """Return the CRC of ``data`` by the bytewise 256-entry table algorithm."""
        t = self.table(256)
        mask, w = self.mask, self.width
        if self.refin:
            r = reflect(self.init, w)
            for b in data:
                r = (r >> 8) ^ t[(r ^ b) & 0xFF]
        else:
            r = self.init
            for b in data:
                r = ((r << 8) & mask) ^ t[((r << 8) >> w) ^ b]
        return self._finish(r)

    def compute_rows(self, data: np.ndarray, n_bytes: np.ndarray | None = None) -> np.ndarray:
        """Return the CRC of every row of the (n x bytes) uint8 ``data`` (its first
        ``n_bytes`` bytes) as uint64: row by row through crcmod's C extension where it
        applies and the rows are few for their width (``ROWS_PER_COLUMN``), else
        :meth:`compute_rows_table`."""
        d = np.asarray(data, dtype=np.uint8)
        n, width = d.shape
        if (CRCMOD_C_EXTENSION and self.width in CRCMOD_WIDTHS and self.refin == self.refout
                and n <= ROWS_PER_COLUMN * width):
            fun = _crcmod_fun(self.width, self.poly, self.init, self.refin, self.xorout)
            text = d.tobytes()
            starts = range(0, n * width, width)
            if n_bytes is None:
                pieces = [text[i:i + width] for i in starts]
            else:
                cut = np.clip(n_bytes, 0, width).tolist()
                pieces = [text[i:i + k] for i, k in zip(starts, cut, strict=True)]
            return np.fromiter(map(fun, pieces), np.uint64, n)
        return self.compute_rows_table(d, n_bytes)

    def compute_rows_table(self, data: np.ndarray, n_bytes: np.ndarray | None = None
                           ) -> np.ndarray:
        """Return :meth:`compute_rows` by the 256-entry table algorithm run down the
        columns, all rows at once (a row's register stays as it is past its own bytes)."""
        d = np.asarray(data, dtype=np.uint8)
        t = np.array(self.table(256), np.uint64)
        w = self.width
        r = np.full(d.shape[0], reflect(self.init, w) if self.refin else self.init, np.uint64)
        eight, mask = np.uint64(8), np.uint64(self.mask)
        for j, b in enumerate(d.T.astype(np.uint64)):
            if self.refin:
                nxt = (r >> eight) ^ t[(r ^ b) & np.uint64(0xFF)]
            elif w >= 8:  # (r << 8) >> w, without the bits shifted out of 64
                nxt = ((r << eight) & mask) ^ t[(r >> np.uint64(w - 8)) ^ b]
            else:
                nxt = ((r << eight) & mask) ^ t[((r << eight) >> np.uint64(w)) ^ b]
            r = nxt if n_bytes is None else np.where(j < n_bytes, nxt, r)
        if self.refin != self.refout:
            r = _reflect_rows(r, w)
        return r ^ np.uint64(self.xorout)

    def compute_table16(self, data: bytes) -> int:
        """Return the CRC of ``data`` by the nibblewise 16-entry table algorithm."""
        t = self.table(16)
        mask, w = self.mask, self.width
        if self.refin:
            r = reflect(self.init, w)
            for b in data:
                r = (r >> 4) ^ t[(r ^ b) & 0xF]
                r = (r >> 4) ^ t[(r ^ (b >> 4)) & 0xF]
        else:
            r = self.init
            for b in data:
                r = ((r << 4) & mask) ^ t[((r << 4) >> w) ^ (b >> 4)]
                r = ((r << 4) & mask) ^ t[((r << 4) >> w) ^ (b & 0xF)]
        return self._finish(r)

    def compute_bitwise(self, data: bytes) -> int:
        """Return the CRC of ``data`` bit by bit, straight from the Rocksoft model."""
        mask, w = self.mask, self.width
        r = self.init
        for byte in data:
            b = reflect(byte, 8) if self.refin else byte
            for i in range(7, -1, -1):
                feedback = ((r >> (w - 1)) ^ (b >> i)) & 1
                r = (r << 1) & mask
                if feedback:
                    r ^= self.poly
        if self.refout:
            r = reflect(r, w)
        return r ^ self.xorout

    def _finish(self, register: int) -> int:
        """Return the output value for a final register held in the refin orientation."""
        if self.refin != self.refout:
            register = reflect(register, self.width)
        return register ^ self.xorout


def _reflect_rows(values: np.ndarray, width: int) -> np.ndarray:
    """Return every uint64 of ``values`` with its low ``width`` bits in reverse order."""
    out = np.zeros_like(values)
    one = np.uint64(1)
    for i in range(width):
        out |= ((values >> np.uint64(i)) & one) << np.uint64(width - 1 - i)
    return out


def _is_int(value: object) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


@lru_cache(maxsize=256)
def _crcmod_fun(width: int, poly: int, init: int, rev: bool, xorout: int
                ) -> Callable[[bytes], int]:
    # crcmod wants the poly with its x^width bit and, as initCrc, the value it would
    # return for empty input: the (reflected when rev) register XOR xorout.
    start = reflect(init, width) if rev else init
    return crcmod.mkCrcFun((1 << width) | poly, initCrc=start ^ xorout, rev=rev, xorOut=xorout)


@lru_cache(maxsize=256)
def _table(width: int, poly: int, refin: bool, entries: int) -> tuple[int, ...]:
    shifts = 8 if entries == 256 else 4
    if refin:
        rpoly = reflect(poly, width)
        out = []
        for i in range(entries):
            r = i
            for _ in range(shifts):
                r = (r >> 1) ^ rpoly if r & 1 else r >> 1
            out.append(r)
        return tuple(out)
    # (i * x^width) mod poly: feed the bits of i MSB-first into a zero register
    mask = (1 << width) - 1
    out = []
    for i in range(entries):
        r = 0
        for k in range(shifts - 1, -1, -1):
            feedback = ((r >> (width - 1)) ^ (i >> k)) & 1
            r = (r << 1) & mask
            if feedback:
                r ^= poly
        out.append(r)
    return tuple(out)
