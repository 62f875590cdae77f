"""Frame layout: each section's bits, chips and duration, and the airtime of a transmission."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._require import require_spec
from .bits import from_raw
from .frame import Values, check_bits, field_bits, raw_values
from .plan import FramePlan, as_plan, spec_of
from .spec.model import FrameSpec


@dataclass(frozen=True)
class SectionRow:
    """One row of the layout table (durations in µs)."""

    section: str
    bits: int
    chips: int
    duration_us: float
    detail: str = ""


@dataclass(frozen=True)
class Layout:
    """Layout of one frame for a given set of values, plus transmission airtime."""

    rows: tuple[SectionRow, ...]
    frame_us: float
    airtime_us: float
    mark_us: float
    repeats: int
    gap_us: float
    data_dependent: bool


def zero_values(spec: FrameSpec | FramePlan) -> dict[str, object]:
    """Values giving raw 0 (or the nearest allowed) in every field; empty bytes fields."""
    out: dict[str, object] = {}
    for f in (spec.spec if isinstance(spec, FramePlan) else spec).fields:
        if f.role == "length":
            continue
        if f.kind == "bytes":
            out[f.name] = b""
        else:
            out[f.name] = from_raw(f, max(f.raw_min, min(0, f.raw_max)))
    return out


def frame_layout(spec: FrameSpec | FramePlan, values: Values | None = None) -> Layout:
    """Return the section table and airtime for ``values`` (zeros when None)."""
    require_spec(spec, "spec")
    plan = as_plan(spec)
    spec = plan.spec
    values = zero_values(spec) if values is None else values
    lc = plan.line_code
    fb = field_bits(plan, raw_values(plan, values))
    cb = check_bits(plan, fb)
    plain = np.concatenate((fb, cb)) ^ plan.body_mask(fb.size)
    body = lc.stuff(plain)
    head = plan.head_bits
    chips = lc.encode(np.concatenate((head, body)))
    # chips of each section: encode prefixes (exact for stateful codes too)
    bounds = [spec.preamble.length_bits, spec.sync.length_bits, fb.size, cb.size]
    names = ["preamble", "sync", "fields", "check"]
    details = [
        f"0x{spec.preamble.pattern:0{(spec.preamble.pattern_bits + 3) // 4}X} x{spec.preamble.count}",
        f"0x{spec.sync.value:0{(spec.sync.length_bits + 3) // 4}X}",
        f"{len(spec.fields)} fields",
        spec.check.crc.name if spec.check.crc and spec.check.crc.name else spec.check.kind,
    ]
    rows = []
    all_bits = np.concatenate((head, plain))
    def chips_upto(k: int) -> int:
        # chips of the first k bits; a partial block of a block code counts at the fixed rate
        if k % lc.bits_per_block:
            return round(k * lc.units_per_bit)
        return lc.encode(all_bits[:k]).size

    pos = 0
    for name, nb, det in zip(names, bounds, details, strict=True):
        n_chips = chips_upto(pos + nb) - chips_upto(pos)
        pos += nb
        rows.append(SectionRow(name, nb, n_chips, n_chips * spec.unit_us, det))
    stuffed = body.size - plain.size
    if stuffed:
        n_chips = chips.size - sum(r.chips for r in rows)
        rows.append(SectionRow("stuffing", stuffed, n_chips, n_chips * spec.unit_us,
                               "bits inserted after the sync"))
    frame_us = chips.size * spec.unit_us
    mark_us = float(chips.sum()) * spec.unit_us
    data_dependent = (lc.chips_per_block is None or lc.max_stuffed_bits(body.size) > 0
                      or spec.is_variable)
    airtime = frame_us * spec.repeats + spec.gap_us * (spec.repeats - 1)
    return Layout(tuple(rows), frame_us, airtime, mark_us * spec.repeats, spec.repeats,
                  spec.gap_us, data_dependent)


@dataclass(frozen=True)
class FieldOffset:
    """Where one field sits in the frame's bits (before line coding and bit stuffing;
    whitening does not move bits).

    ``offset_bits``: first bit from the start of the fields section; ``frame_offset_bits``:
    from the first preamble bit. After a bytes field both vary with its length: the
    values are for an empty bytes field and ``max_*`` for the longest. ``width_bits`` is
    the field's width (a bytes field: 0 .. ``max_width_bits``).
    """

    name: str
    offset_bits: int
    frame_offset_bits: int
    width_bits: int
    max_offset_bits: int
    max_frame_offset_bits: int
    max_width_bits: int
    unit: str = ""
    section: str = "fields"

    @property
    def varies(self) -> bool:
        """Whether the offset or width depends on a bytes field's length."""
        return (self.offset_bits != self.max_offset_bits
                or self.width_bits != self.max_width_bits)


def field_offsets(spec: FrameSpec | FramePlan) -> tuple[FieldOffset, ...]:
    """Return each field's bit offset (from the fields section and from the frame start)
    and width, in spec order, followed by the check (section ``"check"``) when there is one."""
    spec = spec_of(spec)
    head = spec.preamble.length_bits + spec.sync.length_bits
    lo = hi = 0
    out = []
    for f in spec.fields:
        w_lo, w_hi = (0, 8 * f.max_len_bytes) if f.kind == "bytes" else (f.width_bits,) * 2
        out.append(FieldOffset(f.name, lo, head + lo, w_lo, hi, head + hi, w_hi, f.unit))
        lo, hi = lo + w_lo, hi + w_hi
    w = spec.check.width_bits if spec.check.kind != "none" else 0
    if w:
        out.append(FieldOffset("check", lo, head + lo, w, hi, head + hi, w, "", "check"))
    return tuple(out)
