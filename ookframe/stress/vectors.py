"""Distorted test vectors for firmware decoders: pulse trains with their expected fields,
as a C header (template ``codegen_templates/vectors.h.j2``) or JSON."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import __version__
from ..channel import ChannelSpec, apply_channel
from ..errors import CodegenError
from ..frame import Values, encode, random_values, raw_values
from ..plan import FramePlan, as_plan, spec_of
from ..pulses import PulseTrain, merge_runs
from ..spec.model import FrameSpec

TEMPLATE = "vectors.h.j2"


@dataclass(frozen=True, eq=False)
class Vector:
    """One test vector: the received ``train`` (idle space, one transmission, idle space,
    after the channel) and the field values it carries (physical and raw)."""

    values: dict[str, object]
    raw: dict[str, object]
    train: PulseTrain


def transmit(
    spec: FrameSpec | FramePlan, values: Values, channel: ChannelSpec, rng: np.random.Generator,
    *, idle_us: float | None = None,
) -> PulseTrain:
    """Return what a receiver outputs for one transmission of ``values``: ``idle_us`` of
    space (default ``spec.gap_us``), the transmission, ``idle_us`` of space, through
    ``channel``."""
    idle = float(spec_of(spec).gap_us if idle_us is None else idle_us)
    tx = encode(spec, values)
    space = np.zeros(1, np.uint8)
    sent = merge_runs(np.concatenate((space, tx.levels, space)),
                      np.concatenate(([idle], tx.durations_us, [idle])))
    return apply_channel(sent, channel, rng, burst_starts_us=np.array([idle]))


def make_vectors(
    spec: FrameSpec | FramePlan, channel: ChannelSpec, count: int, *, seed: int = 0,
    idle_us: float | None = None,
) -> list[Vector]:
    """Return ``count`` random transmissions of ``spec`` through ``channel``, each framed
    by ``idle_us`` of space (default ``spec.gap_us``) on both sides."""
    if count < 1:
        raise ValueError("count must be >= 1")
    plan = as_plan(spec)
    rng = np.random.default_rng(np.random.SeedSequence(seed))
    out = []
    for _ in range(count):
        values = random_values(plan, rng)
        rx = transmit(plan, values, channel, rng, idle_us=idle_us)
        out.append(Vector(values, raw_values(plan, values), rx))
    return out


def vectors_to_dict(spec: FrameSpec | FramePlan, channel: ChannelSpec, seed: int,
                    vectors: list[Vector]) -> dict[str, object]:
    """Return the vectors as a JSON-ready dict (durations in µs, levels, expected values)."""
    spec = spec_of(spec)

    def plain(v: object) -> object:
        return v.hex() if isinstance(v, bytes) else v

    return {
        "spec": spec.name,
        "generator": f"ookframe {__version__}",
        "seed": seed,
        "channel": channel.to_dict(),
        "vectors": [
            {
                "levels": v.train.levels.tolist(),
                "durations_us": [round(float(d), 3) for d in v.train.durations_us],
                "expected": {k: plain(x) for k, x in v.values.items()},
                "expected_raw": {k: plain(x) for k, x in v.raw.items()},
            }
            for v in vectors
        ],
    }


def _uint_type(max_value: int) -> str:
    for bits in (8, 16, 32):
        if max_value < (1 << bits):
            return f"uint{bits}_t"
    raise CodegenError(f"value {max_value} does not fit 32 bits; make fewer or shorter vectors")


def _ulit(value: int, bits: int = 32) -> str:
    return f"UINT64_C({value})" if bits > 32 else f"{value}u"


def _rows(values: list[int], per_row: int = 12) -> list[str]:
    return [", ".join(values[i:i + per_row]) for i in range(0, len(values), per_row)]


def render_vectors_c(spec: FrameSpec | FramePlan, channel: ChannelSpec, seed: int,
                     vectors: list[Vector]) -> str:
    """Return a C99 header with the vectors: durations (µs, rounded), levels, per-vector
    offsets and lengths, and one array of expected raw values per field."""
    from ..codegen.model import check_names, int_literal, spec_hash
    from ..codegen.render import environment

    spec = spec_of(spec)
    check_names(spec)
    durations = np.concatenate([np.rint(v.train.durations_us) for v in vectors])
    durations = np.maximum(durations, 1).astype(np.int64)
    levels = np.concatenate([v.train.levels for v in vectors])
    lengths = [len(v.train) for v in vectors]
    offsets = np.concatenate(([0], np.cumsum(lengths)[:-1])).tolist()
    d_type = _uint_type(int(durations.max()))
    i_type = _uint_type(int(sum(lengths)))
    fields = []
    for f in spec.fields:
        raws = [v.raw[f.name] for v in vectors]
        if f.kind == "bytes":
            blob = b"".join(raws)  # type: ignore[arg-type]
            starts = np.concatenate(([0], np.cumsum([len(r) for r in raws])[:-1])).tolist()
            fields.append({
                "name": f.name, "kind": "bytes", "c_type": "uint8_t",
                "rows": _rows([_ulit(b) for b in blob] or ["0u"]),
                "offset_type": i_type,
                "offset_rows": _rows([_ulit(int(s)) for s in starts]),
            })
            continue
        bits = 8 if f.width_bits <= 8 else 16 if f.width_bits <= 16 else \
            32 if f.width_bits <= 32 else 64
        if f.signed:
            c_type, lits = f"int{bits}_t", [int_literal(int(r), bits) for r in raws]
        else:
            c_type, lits = f"uint{bits}_t", [_ulit(int(r), bits) for r in raws]
        fields.append({"name": f.name, "kind": "int", "c_type": c_type, "rows": _rows(lits),
                       "unit": f.unit, "scale": f.scale, "offset": f.offset})
    model = {
        "prefix": spec.name,
        "PREFIX": spec.name.upper(),
        "version": __version__,
        "spec_hash": spec_hash(spec)[:16],
        "seed": seed,
        "channel": [(k, v) for k, v in channel.to_dict().items()],
        "count": len(vectors),
        "total_pulses": int(sum(lengths)),
        "duration_type": d_type,
        "index_type": i_type,
        "duration_rows": _rows([_ulit(int(d)) for d in durations]),
        "level_rows": _rows([_ulit(int(x)) for x in levels], 32),
        "offset_rows": _rows([_ulit(int(o)) for o in offsets]),
        "length_rows": _rows([_ulit(int(n)) for n in lengths]),
        "fields": fields,
    }
    return environment().get_template(TEMPLATE).render(m=model)
