"""Frame spec model: small frozen dataclasses, parsed by ``ookframe.spec.load`` and
validated by ``ookframe.plan.compile_plan``.

Frame on air (before line coding), in order::

    [preamble] [sync] [fields ...] [check]

The check is computed over the sections in ``CheckSpec.covers`` (packed MSB-first into
bytes, the last partial byte zero-padded at its low end) *before* whitening; whitening
is then XORed over the sections in ``WhiteningSpec.covers``. Line coding (with optional
bit stuffing of the sections after the sync word) turns the bits into chips of one
``unit_us`` each; a transmission is ``repeats`` copies separated by ``gap_us`` of space.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

BitOrder = Literal["msb", "lsb"]
ByteOrder = Literal["big", "little"]
SECTIONS: tuple[str, ...] = ("preamble", "sync", "fields", "check")


@dataclass(frozen=True)
class FieldSpec:
    """One frame field. Physical value = raw * scale + offset.

    kind "int": ``width_bits`` bits, two's complement when ``signed``.
    kind "bytes": a variable number (0..max_len_bytes) of raw bytes whose count is the
    value of the preceding field with ``role == "length"``; ``width_bits`` is 8.
    """

    name: str
    width_bits: int
    signed: bool = False
    scale: float = 1.0
    offset: float = 0.0
    role: Literal["value", "length"] = "value"
    kind: Literal["int", "bytes"] = "int"
    max_len_bytes: int = 0
    unit: str = ""
    description: str = ""

    @property
    def raw_min(self) -> int:
        return -(1 << (self.width_bits - 1)) if self.signed else 0

    @property
    def raw_max(self) -> int:
        return (1 << (self.width_bits - 1)) - 1 if self.signed else (1 << self.width_bits) - 1

    @property
    def is_scaled(self) -> bool:
        return self.scale != 1.0 or self.offset != 0.0


@dataclass(frozen=True)
class PreambleSpec:
    """Training preamble: ``pattern`` (``pattern_bits`` wide, MSB first) sent ``count`` times."""

    pattern: int = 0b10101010
    pattern_bits: int = 8
    count: int = 2

    @property
    def length_bits(self) -> int:
        return self.pattern_bits * self.count

    def bits(self) -> tuple[int, ...]:
        one = tuple((self.pattern >> (self.pattern_bits - 1 - i)) & 1 for i in range(self.pattern_bits))
        return one * self.count


@dataclass(frozen=True)
class SyncSpec:
    """Sync word ``value`` of ``length_bits`` (MSB first); decoder accepts ``max_errors``."""

    value: int
    length_bits: int
    max_errors: int = 0

    def bits(self) -> tuple[int, ...]:
        return tuple((self.value >> (self.length_bits - 1 - i)) & 1 for i in range(self.length_bits))


@dataclass(frozen=True)
class CrcParams:
    """Rocksoft/Williams CRC parameters."""

    width: int
    poly: int
    init: int = 0
    refin: bool = False
    refout: bool = False
    xorout: int = 0
    name: str = ""


@dataclass(frozen=True)
class CheckSpec:
    """Error check appended after the fields.

    kind: "none", "crc" (``crc`` set), "sum8", "xor8", "fletcher16".
    The check value (``width_bits``) is sent in ``byte_order`` with the frame bit order.
    A spec file without ``[check] byte_order`` gets the frame's ``byte_order`` (see
    ``ookframe.spec.load``); a CheckSpec built directly defaults to "big".
    """

    kind: str = "none"
    crc: CrcParams | None = None
    covers: tuple[str, ...] = ("fields",)
    byte_order: ByteOrder = "big"

    @property
    def width_bits(self) -> int:
        if self.kind == "none":
            return 0
        if self.kind == "crc":
            assert self.crc is not None
            return self.crc.width
        return {"sum8": 8, "xor8": 8, "fletcher16": 16}[self.kind]


@dataclass(frozen=True)
class WhiteningSpec:
    """LFSR whitening XORed over ``covers``.

    ``poly`` is the feedback polynomial with its x^width term implied (PN9 x^9+x^5+1 ->
    width 9, poly 0x021); ``seed`` is the initial register state (non-zero).
    kind "none" disables whitening.
    """

    kind: str = "none"
    width: int = 9
    poly: int = 0x021
    seed: int = 0x1FF
    covers: tuple[str, ...] = ("fields", "check")


@dataclass(frozen=True)
class LineCodeSpec:
    """Line code name and its parameters (sorted (key, value) pairs, hashable)."""

    name: str
    params: tuple[tuple[str, object], ...] = ()

    def param(self, key: str, default: object = None) -> object:
        return dict(self.params).get(key, default)


@dataclass(frozen=True)
class DecoderSpec:
    """Reference decoder tuning (defaults suit the cheap links this tool targets)."""

    glitch_fraction: float = 0.3
    tolerance: float = 0.35
    loop_gain: float = 0.05
    report_bad_check: bool = True
    #: most edges the check-aided recovery may move in a frame whose check fails (the
    #: decoder also keeps it below the check's Hamming distance less 2)
    max_flips: int = 2


@dataclass(frozen=True)
class FrameSpec:
    """A complete frame design. ``unit_us`` is the length of one line-code chip."""

    name: str
    unit_us: float
    line_code: LineCodeSpec
    preamble: PreambleSpec
    sync: SyncSpec
    fields: tuple[FieldSpec, ...]
    check: CheckSpec = field(default_factory=CheckSpec)
    whitening: WhiteningSpec = field(default_factory=WhiteningSpec)
    bit_order: BitOrder = "msb"
    byte_order: ByteOrder = "big"
    repeats: int = 1
    gap_us: float = 10000.0
    decoder: DecoderSpec = field(default_factory=DecoderSpec)
    description: str = ""

    def field(self, name: str) -> FieldSpec:
        for f in self.fields:
            if f.name == name:
                return f
        raise KeyError(name)

    @property
    def length_field(self) -> FieldSpec | None:
        return next((f for f in self.fields if f.role == "length"), None)

    @property
    def is_variable(self) -> bool:
        return any(f.kind == "bytes" for f in self.fields)

    @property
    def max_frame_bits(self) -> int:
        """Bits of the longest frame before line coding and stuffing (preamble to check)."""
        blob = sum(8 * f.max_len_bytes for f in self.fields if f.kind == "bytes")
        return (self.preamble.length_bits + self.sync.length_bits + blob
                + sum(f.width_bits for f in self.fields if f.kind == "int")
                + self.check.width_bits)
