"""The compiled frame plan: what every stage needs from a FrameSpec, worked out once.

``compile_plan(spec)`` checks what the spec model alone cannot (the line code and its
parameters, the check, the whitening LFSR, the field layout, whole code blocks, repeats
and gaps), raising :class:`~ookframe.errors.SpecError` with the key path, and returns a
:class:`FramePlan`: the line code and check objects, the whitening masks, the bit layout
(head and sync bits, every field's offset, width and on-air bit weights, the length and
bytes fields, body lengths) and the timing. Encoder, parser, layout, code generator,
analysis and stress runs take a plan (or a spec, compiled once at their entry).

A plan is cheap to build (well under a millisecond) and is not cached anywhere: whoever
needs one more than once builds it once and passes it on.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal

import numpy as np

from .bits import air_order, exact_decimal
from .checks import Check, make_check
from .errors import SpecError
from .linecodes import LineCode, get_line_code
from .spec.model import BitOrder, ByteOrder, FieldSpec, FrameSpec
from .whitening import lfsr_bits


@dataclass(frozen=True, eq=False)
class FieldPlan:
    """How one field sits in the fields section and how to read it.

    offset_bits: where the field starts, counted with an empty bytes field (a field after
    the bytes field starts ``8 * length`` bits later). width_bits: the width of an int
    field, None for the bytes field. weights: uint64 weight of every on-air bit of an int
    field (``bits @ weights`` is its unsigned value), None for bytes or above 64 bits.
    scale / offset: the decimal scale and offset of a scaled field, else None.
    """

    field: FieldSpec
    offset_bits: int
    width_bits: int | None
    weights: np.ndarray | None
    scale: Decimal | None
    offset: Decimal | None

    @property
    def name(self) -> str:
        return self.field.name


@dataclass(frozen=True, eq=False)
class FramePlan:
    """A validated FrameSpec with everything derived from it (see :func:`compile_plan`).

    Bits: ``head_bits`` (preamble + sync) and ``sync_bits`` (uint8, read-only); the fields
    section is ``min_field_bits`` (bytes field empty) to ``max_field_bits`` long, the body
    (fields + check) ``min_body_bits`` to ``max_body_bits``; ``fixed_body_bits`` is the body
    length when every frame has one layout of int fields of at most 64 bits, else None.
    Whitening: ``fields_mask`` covers the longest fields section (zeros where fields are
    not whitened); ``check_masks[k]`` is the mask of the check bits after a bytes field of
    ``k`` bytes (row 0 for a fixed layout). Timing: ``unit_us`` per chip, ``gap_us``
    between ``repeats`` copies, :attr:`max_run_units` the line code's longest run.
    """

    spec: FrameSpec
    line_code: LineCode
    check: Check | None
    head_bits: np.ndarray
    sync_bits: np.ndarray
    fields: tuple[FieldPlan, ...]
    length_field: FieldPlan | None
    bytes_field: FieldPlan | None
    n_check_bits: int
    check_weights: np.ndarray | None
    min_field_bits: int
    max_field_bits: int
    min_body_bits: int
    max_body_bits: int
    fixed_body_bits: int | None
    fields_mask: np.ndarray
    check_masks: np.ndarray
    unit_us: float
    gap_us: float
    repeats: int

    @property
    def max_run_units(self) -> int | None:
        """The line code's longest run of equal chips (None if unbounded); worked out on
        first use by the line code object (costly for block codes)."""
        return self.line_code.max_run_units

    @property
    def is_fixed(self) -> bool:
        """True when every frame has the same layout (no bytes field)."""
        return self.bytes_field is None

    @property
    def whitened(self) -> bool:
        return self.spec.whitening.kind != "none"

    @property
    def check_covers_sync(self) -> bool:
        return "sync" in self.spec.check.covers

    def blob_len(self, n_field_bits: int) -> int:
        """Bytes in the bytes field of a fields section of ``n_field_bits`` (0 if fixed)."""
        return (n_field_bits - self.min_field_bits) // 8

    def check_mask(self, n_field_bits: int) -> np.ndarray:
        """Whitening of the check bits that follow ``n_field_bits`` fields bits."""
        return self.check_masks[self.blob_len(n_field_bits)]

    def body_mask(self, n_field_bits: int) -> np.ndarray:
        """Whitening XOR mask over fields + check of a frame with ``n_field_bits`` fields bits
        (zeros where whitening does not cover)."""
        return np.concatenate((self.fields_mask[:n_field_bits], self.check_mask(n_field_bits)))


def as_plan(spec_or_plan: FrameSpec | FramePlan) -> FramePlan:
    """Return the plan itself, or the compiled plan of a spec (for public entry points)."""
    if isinstance(spec_or_plan, FramePlan):
        return spec_or_plan
    return compile_plan(spec_or_plan)


def spec_of(spec_or_plan: FrameSpec | FramePlan) -> FrameSpec:
    """Return the spec of a plan, or the spec itself."""
    return spec_or_plan.spec if isinstance(spec_or_plan, FramePlan) else spec_or_plan


def bit_weights(width_bits: int, bit_order: BitOrder, byte_order: ByteOrder
                ) -> np.ndarray | None:
    """Return the uint64 weight of every on-air bit of a ``width_bits`` value, so that
    ``bits @ weights`` equals :func:`ookframe.bits.bits_to_int`; None above 64 bits."""
    if width_bits > 64:
        return None
    top = width_bits - 1
    return _frozen(np.array([1 << (top - k) for k in air_order(width_bits, bit_order, byte_order)],
                            dtype=np.uint64))


def compile_plan(spec: FrameSpec) -> FramePlan:
    """Validate ``spec`` beyond its model and return its plan (SpecError with a key path)."""
    lc = get_line_code(spec.line_code)
    _check_layout(spec)
    check = _make_check(spec)
    _check_blocks(spec, lc)
    if spec.repeats > 1 and spec.gap_us <= 0:
        raise SpecError("frame.gap_us", "must be > 0 when repeats > 1, or repeats run together")

    fields = []
    pos = 0
    for f in spec.fields:
        sc = (exact_decimal(f.scale), exact_decimal(f.offset)) if f.is_scaled else (None, None)
        if f.kind == "bytes":
            fields.append(FieldPlan(f, pos, None, None, *sc))
            continue
        fields.append(FieldPlan(f, pos, f.width_bits,
                                bit_weights(f.width_bits, spec.bit_order, spec.byte_order), *sc))
        pos += f.width_bits
    min_fb = pos
    blob = next((fp for fp in fields if fp.width_bits is None), None)
    max_len = blob.field.max_len_bytes if blob is not None else 0
    max_fb = min_fb + 8 * max_len
    n_cb = spec.check.width_bits
    fields_mask, check_masks = _masks(spec, min_fb, max_len, n_cb)
    fixed = None if blob is not None or any(fp.weights is None for fp in fields) else min_fb + n_cb
    head = _frozen(np.array(spec.preamble.bits() + spec.sync.bits(), dtype=np.uint8))
    return FramePlan(
        spec=spec, line_code=lc, check=check, head_bits=head,
        sync_bits=head[spec.preamble.length_bits:], fields=tuple(fields),
        length_field=next((fp for fp in fields if fp.field.role == "length"), None),
        bytes_field=blob, n_check_bits=n_cb,
        check_weights=bit_weights(n_cb, spec.bit_order, spec.check.byte_order) if n_cb else None,
        min_field_bits=min_fb, max_field_bits=max_fb, min_body_bits=min_fb + n_cb,
        max_body_bits=max_fb + n_cb, fixed_body_bits=fixed, fields_mask=fields_mask,
        check_masks=check_masks, unit_us=float(spec.unit_us), gap_us=float(spec.gap_us),
        repeats=spec.repeats)


def _frozen(a: np.ndarray) -> np.ndarray:
    a.flags.writeable = False
    return a


def _masks(spec: FrameSpec, n_fields_min: int, max_len_bytes: int, n_check_bits: int
           ) -> tuple[np.ndarray, np.ndarray]:
    """Return (fields mask of the longest fields section, check mask per bytes length)."""
    n_fields_max = n_fields_min + 8 * max_len_bytes
    w = spec.whitening
    rows = max_len_bytes + 1
    if w.kind == "none":
        return (_frozen(np.zeros(n_fields_max, np.uint8)),
                _frozen(np.zeros((rows, n_check_bits), np.uint8)))
    stream = lfsr_bits(w, n_fields_max + n_check_bits)
    if "fields" in w.covers:
        fields_mask = stream[:n_fields_max].copy()
        starts = n_fields_min + 8 * np.arange(rows)  # the check follows the fields
    else:
        fields_mask = np.zeros(n_fields_max, np.uint8)
        starts = np.zeros(rows, np.int64)  # the mask starts at the check
    if "check" in w.covers:
        check_masks = stream[starts[:, None] + np.arange(n_check_bits)]
    else:
        check_masks = np.zeros((rows, n_check_bits), np.uint8)
    return _frozen(fields_mask), _frozen(np.ascontiguousarray(check_masks, dtype=np.uint8))


def _make_check(spec: FrameSpec) -> Check | None:
    """Return the check object (None for kind "none"); its errors carry the check's path."""
    if spec.check.kind == "none":
        return None
    try:
        return make_check(spec.check)
    except SpecError as e:
        path = e.path if e.path.startswith("check") else f"check.{e.path}"
        raise SpecError(path, e.message) from None


def _check_layout(spec: FrameSpec) -> None:
    """The length and bytes fields, and little-endian widths (SpecError at the field)."""
    fields = spec.fields
    lengths = [i for i, f in enumerate(fields) if f.role == "length"]
    blobs = [i for i, f in enumerate(fields) if f.kind == "bytes"]
    if len(lengths) > 1:
        raise SpecError(f"fields[{lengths[1]}].role", "only one length field is allowed")
    if len(blobs) > 1:
        raise SpecError(f"fields[{blobs[1]}].kind", "only one bytes field is allowed")
    if blobs and not lengths:
        raise SpecError(f"fields[{blobs[0]}].kind", "a bytes field needs a preceding field with role = \"length\"")
    if lengths and not blobs:
        raise SpecError(f"fields[{lengths[0]}].role", "a length field needs a following kind = \"bytes\" field")
    if blobs:
        li, bi = lengths[0], blobs[0]
        if li > bi:
            raise SpecError(f"fields[{li}].role", "the length field must come before the bytes field")
        if fields[bi].max_len_bytes > fields[li].raw_max:
            raise SpecError(f"fields[{bi}].max_len_bytes", f"{fields[bi].max_len_bytes} does not fit the "
                            f"{fields[li].width_bits}-bit length field '{fields[li].name}'")
    if spec.byte_order == "little":
        for i, f in enumerate(fields):
            if f.kind == "int" and f.width_bits > 8 and f.width_bits % 8:
                raise SpecError(f"fields[{i}].width_bits", f"byte_order = \"little\" needs widths that are "
                                f"multiples of 8 for fields wider than 8 bits; '{f.name}' is {f.width_bits}")


def _check_blocks(spec: FrameSpec, lc: LineCode) -> None:
    """Block codes need head and body to be whole blocks (SpecError at line_code.name)."""
    bpb = lc.bits_per_block
    if bpb > 1:
        head = spec.preamble.length_bits + spec.sync.length_bits
        body = sum(f.width_bits for f in spec.fields if f.kind == "int") + spec.check.width_bits
        for what, n in (("preamble + sync", head), ("fields + check", body)):
            if n % bpb:
                raise SpecError("line_code.name", f"{spec.line_code.name} codes {bpb} bits per block; "
                                f"{what} is {n} bits, not a multiple of {bpb}")
