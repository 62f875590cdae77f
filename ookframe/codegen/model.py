"""Everything the C templates place, computed in Python and validated before rendering.

``build_model(spec, target)`` returns a :class:`CModel`; the Jinja2 templates only place
its values (names, literals, tables, shift counts, flags). No C is assembled here beyond
literals and identifiers.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import re
from dataclasses import dataclass, field

from .. import __version__
from ..checks import Crc, reflect
from ..errors import CodegenError
from ..plan import FramePlan, as_plan
from ..spec.model import FrameSpec
from ..spec.names import name_problem, same_name
from .linecode_table import CodeTable, code_table
from .rx_model import RxModel, build_rx
from .timing import TimerTarget, Timing, quantise

#: bump when the generated API changes incompatibly (checked by <PREFIX>_REQUIRE_API_VERSION)
API_VERSION = 1
#: cycles of <PREFIX>_TX_AVR_ISR from its vector (the table's jmp) to the end of reti on
#: an ATmega328P, by path; counted from the instruction timings of the AVR instruction set
#: manual (from memory) and measured by tests/test_codegen_avr_txbuf.py
AVR_ISR_CYCLES = {"edge": 40, "copy_end": 49, "stop": 39, "worst": 49}
#: runs merged into one tx_next pulse for codes whose words can chain without limit
CHAIN_CAP = 8


@dataclass(frozen=True)
class Piece:
    """One put call: ``nbits`` bits of (value >> shift), sent MSB- or LSB-first."""

    shift: int
    nbits: int
    order: str  # "msb" | "lsb"


@dataclass(frozen=True)
class CField:
    """One struct member and how it is packed."""

    name: str
    upper: str
    kind: str  # "int" | "bytes"
    c_type: str
    u_type: str  # unsigned type of the same width (int fields)
    signed: bool
    width_bits: int
    max_len_bytes: int
    length_member: str
    pieces: tuple[Piece, ...]
    check_min: bool
    check_max: bool
    min_literal: str
    max_literal: str
    mask_literal: str
    offset_bits: int | None
    bit_order: str
    scale: float
    offset: float
    unit: str
    description: str
    role: str
    fixed: FixedPoint | None = None


#: most decimal places of a field's scale and offset that get fixed-point helpers
FIXED_MAX_DECIMALS = 9
#: largest magnitude of a fixed-point value or intermediate the helpers promise (2^62)
FIXED_LIMIT = 1 << 62


@dataclass(frozen=True)
class FixedPoint:
    """Integer-only conversion of a scaled field between raw and physical values.

    Physical values are integers in units of 1/``div`` of the field's unit (``div`` the
    smallest power of ten that makes scale and offset whole in that unit):
    physical_fixed = raw * ``scale_fixed`` + ``offset_fixed`` (exact), and
    raw = round((physical_fixed - ``offset_fixed``) / ``scale_fixed``), nearest with ties
    to even as ``ookframe.bits.to_raw``. ``scale_num`` / ``scale_den``: the scale as a
    reduced fraction.
    """

    div: int
    decimals: int
    scale_fixed: int
    offset_fixed: int
    scale_num: int
    scale_den: int
    example_raw: int
    example_fixed: int


def fixed_point(scale: float, offset: float, raw_min: int, raw_max: int) -> FixedPoint | None:
    """Return the fixed-point helper values of a field, or None when scale and offset need
    more than FIXED_MAX_DECIMALS decimal places or the values would pass FIXED_LIMIT."""
    from decimal import Decimal
    from fractions import Fraction

    s, o = Decimal(repr(float(scale))), Decimal(repr(float(offset)))
    places = max(0, -int(s.as_tuple().exponent), -int(o.as_tuple().exponent))
    if places > FIXED_MAX_DECIMALS or s == 0:
        return None
    div = 10 ** places
    sf, of = int(s * div), int(o * div)
    if max(abs(raw_min), abs(raw_max)) * abs(sf) + abs(of) >= FIXED_LIMIT:
        return None
    frac = Fraction(s)
    example = raw_max // 2 if raw_max > 1 else raw_max
    return FixedPoint(div=div, decimals=places, scale_fixed=sf, offset_fixed=of,
                      scale_num=frac.numerator, scale_den=frac.denominator,
                      example_raw=example, example_fixed=example * sf + of)


@dataclass(frozen=True)
class CModel:
    """All values of one generated header."""

    prefix: str
    PREFIX: str
    version: str
    api_version: int
    spec_hash: str
    spec_hash32: str
    description: str
    spec: FrameSpec
    plan: FramePlan = field(compare=False)
    target: TimerTarget
    timing: Timing
    code: CodeTable
    fields: tuple[CField, ...]
    head_bits: int
    fixed_bits: int
    max_frame_bits: int
    variable: bool
    bytes_field: CField | None
    preamble_pieces: tuple[Piece, ...]
    sync_pieces: tuple[Piece, ...]
    preamble_literal: str
    sync_literal: str
    preamble_bytes: str
    sync_bytes: str
    check: dict[str, object]
    whitening: dict[str, object]
    ticks_type: str
    ticks_read: str
    max_merge: int
    max_pulse_ticks: int
    words: tuple[dict[str, object], ...]
    trailer: dict[str, object] | None
    layout_rows: tuple[tuple[str, str, str, str], ...]
    timing_rows: tuple[tuple[str, str, str, str, str], ...]
    bit_rate_bps: int
    unit_ns: int
    unit_us_int: int
    unit_ticks: int
    timer_hz_int: int
    tick_ns: int
    max_frame_bytes: int
    ticks_max: int
    duration_consts: tuple[dict[str, object], ...]
    needs: dict[str, bool]
    gap: dict[str, object] | None = None
    #: the run buffer transmitter (None in stream mode, or when the timer cannot hold it)
    txbuf: dict[str, object] | None = None
    #: why ``auto`` fell back to the streaming transmitter only ("" when it did not)
    txbuf_refusal: str = ""
    #: RAM of the streaming transmitter: sizeof(struct <prefix>_tx) plus the frame buffer
    #: it reads, on 8-bit AVR and on a 32-bit MCU (bytes)
    stream_ram: dict[str, int] = field(default_factory=dict)
    rx: RxModel | None = None  # the receiver's values (emit --side rx / both), else None
    #: emit --side: "rx" makes <PREFIX>_WANT_TX default to 0 (a receive-only build)
    side: str = "tx"


def _uint_type(bits: int) -> str:
    for w in (8, 16, 32, 64):
        if bits <= w:
            return f"uint{w}_t"
    raise CodegenError(f"{bits}-bit value does not fit a C integer type")


def _int_type(bits: int) -> str:
    return _uint_type(bits)[1:]


def _type_bits(c_type: str) -> int:
    return int(re.sub(r"\D", "", c_type))


def uint_literal(value: int, bits: int = 32) -> str:
    """C literal of a non-negative integer for a ``bits``-wide unsigned type."""
    if bits > 32 or value > 0xFFFFFFFF:
        return f"UINT64_C(0x{value:X})"
    return f"0x{value:X}u" if value > 9 else f"{value}u"


def int_literal(value: int, bits: int) -> str:
    """C literal of a signed integer; negative values parenthesised (safe in macros)."""
    if bits > 32:
        text = f"INT64_C({value})" if value != -(1 << 63) else "INT64_MIN"
    elif value == -(1 << 31):
        text = "INT32_MIN"
    else:
        text = str(value)
    return f"({text})" if value < 0 and not text.startswith("INT") else text


def hex_literal(value: int, bits: int) -> str:
    """Fixed-width hex C literal for a ``bits``-wide unsigned table entry."""
    digits = (bits + 3) // 4
    text = f"0x{value:0{digits}X}"
    return f"UINT64_C({text})" if bits > 32 else f"{text}u"


def split_pieces(width: int, order: str, shift0: int = 0) -> list[Piece]:
    """Pieces of at most 32 bits that send ``width`` bits (above ``shift0``) in ``order``."""
    out = []
    if order == "msb":
        top = width
        while top > 0:
            n = min(32, top)
            out.append(Piece(shift0 + top - n, n, "msb"))
            top -= n
    else:
        low = 0
        while low < width:
            n = min(32, width - low)
            out.append(Piece(shift0 + low, n, "lsb"))
            low += n
    return out


def value_pieces(width: int, bit_order: str, byte_order: str) -> tuple[Piece, ...]:
    """Pieces sending a ``width``-bit value the way ``ookframe.bits.int_to_bits`` does:
    whole-byte values wider than 8 bits byte by byte (``byte_order``), each byte
    ``bit_order`` first; other widths as one bit string, reversed for LSB-first."""
    if width % 8 == 0 and width > 8:
        shifts = [8 * i for i in range(width // 8)]
        if byte_order == "big":
            shifts.reverse()
        return tuple(Piece(s, 8, bit_order) for s in shifts)
    return tuple(split_pieces(width, bit_order))


def spec_hash(spec: FrameSpec) -> str:
    """Return the SHA-256 (hex) of the spec's canonical JSON form."""
    doc = json.dumps(dataclasses.asdict(spec), sort_keys=True, default=repr,
                     separators=(",", ":"))
    return hashlib.sha256(doc.encode("utf-8")).hexdigest()


def check_names(spec: FrameSpec) -> None:
    """Raise CodegenError unless every generated name is a safe, unique C identifier.

    The rule is ``ookframe.spec.names``, the one the spec loader applies, so a loaded spec
    never fails here; a FrameSpec built in Python may.
    """
    problem = name_problem(spec.name, "frame name (C prefix)", fold_case=True)
    if problem:
        raise CodegenError(problem)
    for f in spec.fields:
        problem = name_problem(f.name, "field name (C struct member)")
        if problem:
            raise CodegenError(problem)
    pair = same_name([f.name for f in spec.fields])
    if pair:
        a, b = (spec.fields[i].name for i in pair)
        raise CodegenError(f"fields {a!r} and {b!r} give the same C macro name "
                           f"{spec.name.upper()}_FIELD_{b.upper()}_*; rename one")


def _hex_bytes(bits: tuple[int, ...]) -> str:
    if not bits:
        return "{0}"
    padded = list(bits) + [0] * (-len(bits) % 8)
    vals = [int("".join(map(str, padded[i:i + 8])), 2) for i in range(0, len(padded), 8)]
    return "{" + ", ".join(f"0x{v:02X}" for v in vals) + "}"


def _fields(spec: FrameSpec) -> tuple[CField, ...]:
    out = []
    pos: int | None = spec.preamble.length_bits + spec.sync.length_bits
    length_name = spec.length_field.name if spec.length_field else ""
    for f in spec.fields:
        if f.kind == "bytes":
            out.append(CField(
                name=f.name, upper=f.name.upper(), kind="bytes", c_type="uint8_t",
                u_type="uint8_t", signed=False, width_bits=8, max_len_bytes=f.max_len_bytes,
                length_member=length_name, pieces=(Piece(0, 8, spec.bit_order),),
                check_min=False, check_max=False, min_literal="0", max_literal="0",
                mask_literal="0xFFu", offset_bits=pos, bit_order=spec.bit_order,
                scale=1.0, offset=0.0, unit=f.unit, description=f.description, role=f.role))
            pos = None
            continue
        c_type = _int_type(f.width_bits) if f.signed else _uint_type(f.width_bits)
        tbits = _type_bits(c_type)
        out.append(CField(
            name=f.name, upper=f.name.upper(), kind="int", c_type=c_type,
            u_type=_uint_type(f.width_bits), signed=f.signed, width_bits=f.width_bits,
            max_len_bytes=0, length_member="",
            pieces=value_pieces(f.width_bits, spec.bit_order, spec.byte_order),
            check_min=f.signed and f.width_bits < tbits,
            check_max=f.width_bits < tbits,
            min_literal=int_literal(f.raw_min, tbits) if f.signed else "0u",
            max_literal=(int_literal(f.raw_max, tbits) if f.signed
                         else uint_literal(f.raw_max, tbits)),
            mask_literal=uint_literal((1 << f.width_bits) - 1, tbits),
            offset_bits=pos, bit_order=spec.bit_order, scale=f.scale, offset=f.offset,
            unit=f.unit, description=f.description, role=f.role,
            fixed=(fixed_point(f.scale, f.offset, f.raw_min, f.raw_max)
                   if f.is_scaled and f.role == "value" else None)))
        if pos is not None:
            pos += f.width_bits
    return tuple(out)


def _check_model(plan: FramePlan, crc_impl: str) -> dict[str, object]:
    spec = plan.spec
    c = spec.check
    m: dict[str, object] = {"kind": c.kind, "width": c.width_bits, "covers_sync": "sync" in c.covers,
                            "impl": crc_impl if c.kind == "crc" else "",
                            "pieces": value_pieces(c.width_bits, spec.bit_order, c.byte_order)
                            if c.width_bits else ()}
    if c.kind != "crc":
        m["type"] = {"none": "uint8_t", "sum8": "uint8_t", "xor8": "uint8_t",
                     "fletcher16": "uint16_t"}[c.kind]
        m["check_value"] = uint_literal(plan.check.compute(b"123456789") if plan.check else 0, 16)
        return m
    crc = plan.check
    assert isinstance(crc, Crc)
    w = crc.width
    ctype = _uint_type(w)
    tbits = _type_bits(ctype)

    m.update({
        "name": crc.name or "custom",
        "describe": crc.describe(),
        "type": ctype, "type_bits": tbits,
        # narrow registers are promoted to int; work on them as unsigned
        "W": "(unsigned)" if tbits <= 16 else "",
        "refin": crc.refin, "refout": crc.refout,
        "poly": uint_literal(crc.poly, tbits),
        "init_reg": uint_literal(reflect(crc.init, w) if crc.refin else crc.init, tbits),
        "init": uint_literal(crc.init, tbits),
        "xorout": uint_literal(crc.xorout, tbits),
        "xorout_zero": crc.xorout == 0,
        "mask": uint_literal(crc.mask, tbits),
        "need_mask": w != tbits,
        "reflect_out": (crc.refin != crc.refout) if crc_impl != "bitwise" else crc.refout,
        "check_value": uint_literal(crc.check, tbits),
        # bytewise (table256) and nibblewise (table16), refin False: index shift
        "shr8": w - 8 if w >= 8 else None, "shl8": 8 - w if w < 8 else None,
        "shr4": w - 4 if w >= 4 else None, "shl4": 4 - w if w < 4 else None,
        "keep8": w > 8, "keep4": w > 4,
        "top_shift": w - 1,
    })
    if crc_impl in ("table256", "table16"):
        entries = 256 if crc_impl == "table256" else 16
        m["table"] = [hex_literal(v, tbits) for v in crc.table(entries)]
        m["table_entries"] = entries
    return m


def _whitening_model(spec: FrameSpec) -> dict[str, object]:
    w = spec.whitening
    if w.kind == "none":
        return {"on": False, "fields": False, "check": False}
    ltype = _uint_type(w.width)
    tbits = _type_bits(ltype)
    folds = [s for s in (32, 16, 8, 4, 2, 1) if s < tbits]
    return {"on": True, "fields": "fields" in w.covers,
            "check": "check" in w.covers and spec.check.width_bits > 0,
            "type": ltype, "poly": uint_literal(w.poly, tbits), "seed": uint_literal(w.seed, tbits),
            "width": w.width, "top_shift": w.width - 1, "folds": folds, "kind": w.kind,
            "W": "(unsigned)" if tbits <= 16 else ""}


def build_model(spec: FrameSpec | FramePlan, target: TimerTarget | None = None, *,
                side: str = "tx") -> CModel:
    """Return the validated model of ``spec``'s header for ``target`` (CodegenError if not);
    ``side`` "rx" or "both" adds the receiver (the transmitter part is always rendered; for
    "rx" behind ``<PREFIX>_WANT_TX`` defaulting to 0)."""
    if side not in ("tx", "rx", "both"):
        raise CodegenError(f"side {side!r} not allowed; allowed: tx, rx, both")
    plan = as_plan(spec)
    spec = plan.spec
    target = target or TimerTarget()
    check_names(spec)
    code = code_table(plan)
    lc = plan.line_code
    fields = _fields(spec)
    head_bits = plan.head_bits.size
    fixed_bits = head_bits + plan.min_body_bits
    bytes_field = next((f for f in fields if f.kind == "bytes"), None)
    max_frame_bits = head_bits + plan.max_body_bits
    # merging: how many runs can chain into one pulse, and how long it can get
    trailer_single = code.trailer is not None and len(code.trailer.runs_units) == 1
    has_gap = spec.repeats > 1
    if code.has_constant_word:
        max_merge = CHAIN_CAP
        bound = (CHAIN_CAP, int(has_gap))
    else:
        max_merge = 2 + int(trailer_single) + int(has_gap)
        bound = (2 + int(trailer_single), int(has_gap))
    timing = quantise(target, spec.unit_us, code.run_lengths, spec.gap_us if has_gap else None,
                      bound)
    max_pulse = timing.max_pulse_ticks
    ticks_bits = _type_bits(_uint_type(max(max_pulse, 1).bit_length()))
    ticks_type = f"uint{ticks_bits}_t"
    if ticks_bits == 64:
        raise CodegenError("pulse durations need 64-bit ticks; use a larger prescaler")

    def word_dict(w) -> dict[str, object]:
        return {"first": w.first_level, "nruns": len(w.runs_units),
                "shape": hex_literal(w.first_level | (len(w.runs_units) << 1), 8),
                "ticks": [f"{timing.ticks_of_units(u)}u" for u in w.runs_units],
                "units": list(w.runs_units)}

    words = tuple(word_dict(w) for w in code.words)
    max_runs = code.max_runs
    for wd in words:
        wd["ticks_padded"] = wd["ticks"] + ["0u"] * (max_runs - int(wd["nruns"]))  # type: ignore
    trailer = word_dict(code.trailer) if code.trailer else None
    h = spec_hash(spec)
    pre = spec.preamble
    layout_rows = _layout_rows(spec, fields, head_bits)
    timing_rows = tuple(
        (d.name, f"{d.nominal_us:.3f}", str(d.ticks), f"{d.quantised_us:.3f}",
         f"{100 * d.error:+.3f}") for d in timing.durations)
    check = _check_model(plan, target.crc_impl)
    white = _whitening_model(spec)
    pieces_all = [p for f in fields for p in f.pieces] + list(check["pieces"])  # type: ignore
    pre_pieces = tuple(split_pieces(pre.pattern_bits, "msb")) if pre.count else ()
    sync_pieces = tuple(split_pieces(spec.sync.length_bits, "msb"))
    pieces_all += list(pre_pieces) + list(sync_pieces)
    needs = {
        "put_msb": any(p.order == "msb" for p in pieces_all),
        "put_lsb": any(p.order == "lsb" for p in pieces_all),
        "u64": any(f.kind == "int" and f.width_bits > 32 for f in fields)
        or spec.check.width_bits > 32,
        "check": spec.check.kind != "none",
        "gap": has_gap,
        "trailer": trailer is not None,
        "stuffing": code.stuff_after > 0,
        "differential": code.differential,
        "blocks": code.bits_per_block > 1,
        "reflect": bool(check.get("reflect_out")),
        "fixed": any(f.fixed is not None for f in fields),
        "gap_split": has_gap and timing.gap_pieces > 1,
    }
    txbuf, refusal = _txbuf_model(target, timing, code, head_bits
                                  + lc.max_stuffed_bits(plan.max_body_bits) + plan.max_body_bits)
    units_per_bit = lc.units_per_bit
    return CModel(
        prefix=spec.name, PREFIX=spec.name.upper(), version=__version__, api_version=API_VERSION,
        spec_hash=h, spec_hash32=f"0x{h[:8].upper()}u", description=spec.description,
        spec=spec, plan=plan, target=target, timing=timing, code=code, fields=fields,
        head_bits=head_bits, fixed_bits=fixed_bits, max_frame_bits=max_frame_bits,
        variable=bytes_field is not None, bytes_field=bytes_field,
        preamble_pieces=pre_pieces, sync_pieces=sync_pieces,
        preamble_literal=uint_literal(pre.pattern, 64 if pre.pattern_bits > 32 else 32),
        sync_literal=uint_literal(spec.sync.value, 64 if spec.sync.length_bits > 32 else 32),
        preamble_bytes=_hex_bytes(pre.bits()[:pre.pattern_bits]),
        sync_bytes=_hex_bytes(spec.sync.bits()),
        check=check, whitening=white, ticks_type=ticks_type,
        ticks_read={8: "U8", 16: "U16", 32: "U32"}[ticks_bits],
        max_merge=max_merge, max_pulse_ticks=max_pulse, words=words, trailer=trailer,
        layout_rows=layout_rows, timing_rows=timing_rows,
        bit_rate_bps=round(1e6 / (spec.unit_us * units_per_bit)),
        unit_ns=round(spec.unit_us * 1000), unit_us_int=round(spec.unit_us),
        unit_ticks=max(1, round(spec.unit_us / timing.tick_us)),
        timer_hz_int=round(timing.timer_hz), tick_ns=round(timing.tick_us * 1000),
        max_frame_bytes=(max_frame_bits + 7) // 8, ticks_max=(1 << ticks_bits) - 1,
        duration_consts=tuple(
            {"name": f"RUN_{d.units}U" if d.units else "GAP", "us": round(d.nominal_us),
             "nominal": f"{d.nominal_us:.3f}", "ticks": d.ticks, "actual": f"{d.quantised_us:.3f}"}
            for d in timing.durations),
        needs=needs, gap=_gap_model(timing) if has_gap else None,
        txbuf=txbuf, txbuf_refusal=refusal,
        stream_ram=_stream_ram(needs, ticks_type, (max_frame_bits + 7) // 8),
        rx=build_rx(plan, code, timing) if side != "tx" else None, side=side)


#: (size, alignment) in bytes of the C types in the transmitter structs: 8-bit AVR
#: (everything byte-aligned, 2-byte pointers and size_t) and a 32-bit MCU (AAPCS)
_TYPE_LAYOUT = {
    "avr": {"uint8_t": (1, 1), "uint16_t": (2, 1), "uint32_t": (4, 1), "ptr": (2, 1)},
    "arm32": {"uint8_t": (1, 1), "uint16_t": (2, 2), "uint32_t": (4, 4), "ptr": (4, 4)},
}


def struct_size(members: list[tuple[str, int]], abi: str) -> int:
    """Return sizeof a C struct of (type, count) members on ``abi`` ("avr" | "arm32"),
    with the usual padding: each member at a multiple of its alignment, the size a
    multiple of the largest one."""
    layout = _TYPE_LAYOUT[abi]
    offset, widest = 0, 1
    for ctype, count in members:
        size, align = layout[ctype]
        offset = -(-offset // align) * align + size * count
        widest = max(widest, align)
    return -(-offset // widest) * widest


def _stream_ram(needs: dict[str, bool], ticks_type: str, frame_bytes: int) -> dict[str, int]:
    """RAM of the streaming transmitter per ABI: struct <prefix>_tx + the frame bytes."""
    # bits, nbits, pos (size_t is pointer-sized on both), row; run .. mask
    members = [("ptr", 4), ("uint8_t", 6)]
    if needs["differential"]:
        members.append(("uint8_t", 1))
    if needs["stuffing"]:
        members.append(("uint8_t", 3))
    if needs["gap_split"]:
        members.append(("uint16_t", 1))
    members += [("uint8_t", 2), (ticks_type, 1)]
    return {abi: struct_size(members, abi) + frame_bytes for abi in _TYPE_LAYOUT}


def _txbuf_model(target: TimerTarget, timing: Timing, code: CodeTable, max_line_bits: int
                 ) -> tuple[dict[str, object] | None, str]:
    """Return the run buffer's values (or None) and, for ``auto``, why it was left out.

    The buffer holds one copy's edge-to-edge intervals as timer reload values (ticks - 1,
    so an interval of 1 tick cannot be sent and 0 ends the copy) plus the end mark; the
    interval from a copy's last edge to the next copy's first is kept apart. Capacity:
    every run of the longest frame is at most one interval.
    """
    if target.tx_mode == "stream":
        return None, ""
    problem = ""
    if timing.gap_pieces > 1:
        problem = (f"the repeat gap ({timing.gap_ticks} ticks) is longer than one "
                   f"{target.timer_bits}-bit timer period")
    elif min(d.ticks for d in timing.durations) < 2:
        problem = "a run of 1 timer tick is too short for the compare ISR"
    if problem:
        if target.tx_mode == "buffer":
            raise CodegenError(f"--tx-mode buffer: {problem}; use --tx-mode stream (tx_next "
                               "from the compare ISR) or another timer/prescaler")
        return None, problem
    blocks = -(-max_line_bits // code.bits_per_block)
    runs = blocks * code.max_runs + (len(code.trailer.runs_units) if code.trailer else 0)
    cap = runs + 1
    rtype = _uint_type(target.timer_bits)
    rbits = _type_bits(rtype)
    members = [("ptr", 1), (rtype, 1), ("uint8_t", 2), (rtype, cap)]
    ram = {abi: struct_size(members, abi) for abi in _TYPE_LAYOUT}
    # the end mark is the reload type's top bit, so a copy's intervals stay below it
    max_interval = min(target.timer_max_ticks, 1 << (rbits - 1))
    return {"cap": cap, "reload_type": rtype, "reload_bits": rbits,
            "max_interval_ticks": max_interval,
            "shortest_cycles": min(d.ticks for d in timing.durations) * timing.prescaler,
            "copy_end": uint_literal(1 << (rbits - 1), rbits), "ram": ram,
            "avr_isr": rbits == 16, "avr_isr_cycles": AVR_ISR_CYCLES}, ""


def _gap_model(timing: Timing) -> dict[str, object]:
    """Values of the repeat gap as sent: one timer period, or ``pieces`` of them (the
    ``short`` ones first, then ``long_count`` of ``short + 1`` ticks)."""
    pieces = timing.gap_piece_ticks()
    short = pieces[0]
    return {"ticks": timing.gap_ticks, "pieces": len(pieces), "short": short,
            "long_count": sum(1 for t in pieces if t != short)}


def _layout_rows(spec: FrameSpec, fields: tuple[CField, ...], head_bits: int
                 ) -> tuple[tuple[str, str, str, str], ...]:
    pre, sync = spec.preamble, spec.sync
    rows = [("preamble", "0", str(pre.length_bits),
             f"0x{pre.pattern:0{(pre.pattern_bits + 3) // 4}X} ({pre.pattern_bits} bits) x {pre.count}"),
            ("sync", str(pre.length_bits), str(sync.length_bits),
             f"0x{sync.value:0{(sync.length_bits + 3) // 4}X}")]
    for f in fields:
        if f.kind == "bytes":
            what = f"bytes, 0..{f.max_len_bytes} (count in '{f.length_member}')"
            width = "8 x n"
        else:
            what = f"{'signed' if f.signed else 'unsigned'} {f.c_type}"
            if f.scale != 1.0 or f.offset != 0.0:
                what += f", value = raw * {f.scale:g} + {f.offset:g}"
            if f.role == "length":
                what += ", length of the bytes field"
            width = str(f.width_bits)
        if f.unit:
            what += f" [{f.unit}]"
        rows.append((f.name, "var" if f.offset_bits is None else str(f.offset_bits), width, what))
    c = spec.check
    if c.kind != "none":
        label = c.crc.name if c.kind == "crc" and c.crc and c.crc.name else c.kind
        rows.append(("check", "var" if any(f.kind == "bytes" for f in fields)
                     else str(sum(f.width_bits for f in fields) + head_bits),
                     str(c.width_bits), f"{label} over {'+'.join(c.covers)}, {c.byte_order}-endian"))
    return tuple(rows)
