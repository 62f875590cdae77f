"""The compiled frame plan, the one encoder and the one parser.

The encoder (``ookframe.batch``, with ``ookframe.frame`` calling it with n = 1) and the
parser (``frame.parse_frames``, ``parse_frame`` being one row of it) are checked bit for
bit against the one-frame encoder and parser they replaced, kept in
``tests/oracle_frame.py``, over random specs (every line code of ``LINE_CODES``, bytes
fields before other fields, LSB-first and little-endian frames, every check kind and
whitening coverage) and random values. The oracle is the earlier implementation, not an
outside source: these are equality tests of a rewrite.
"""

from __future__ import annotations

import ast
from dataclasses import asdict
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ookframe import LINE_CODES, FramePlan, SpecError, compile_plan, get_line_code
from ookframe import frame as F
from ookframe.batch import encode_bits, frame_bits_batch, frame_chips_batch, random_raw_batch
from ookframe.demo import example_names
from ookframe.spec.model import LineCodeSpec
from ookframe.spec_io import spec_from_dict
from tests import oracle_frame as O
from tests.conftest import example_spec

PACKAGE = Path(__file__).resolve().parent.parent / "ookframe"

#: parameter variants per line code (the defaults plus the ones that change the chips)
LINE_CODE_PARAMS: dict[str, list[dict[str, object]]] = {
    "nrz": [{}, {"stuff_after": 3}, {"stuff_after": 5, "stuff_value": "ones"}],
    "manchester": [{}, {"convention": "thomas"}],
    "pwm": [{}, {"short_units": 2, "long_units": 5}],
    "pulse_distance": [{}, {"mark_units": 2, "zero_space_units": 3, "one_space_units": 1}],
}


@st.composite
def frame_docs(draw) -> dict:
    """A random valid spec document: any line code, int fields (1..64 bits, signed or
    scaled), optionally a length + bytes field with more fields after it, any bit/byte
    order, check kind, check coverage and whitening."""
    name = draw(st.sampled_from(sorted(LINE_CODES)))
    params = draw(st.sampled_from(LINE_CODE_PARAMS.get(name, [{}])))
    bpb = get_line_code(LineCodeSpec(name, tuple(sorted(params.items())))).bits_per_block
    little = draw(st.booleans())
    fields = []
    for i in range(draw(st.integers(1, 4))):
        w = draw(st.sampled_from([8, 16, 24, 32, 64]) if little else st.integers(1, 64))
        f: dict[str, object] = {"name": f"f{i}", "width_bits": w, "signed": draw(st.booleans())}
        if draw(st.booleans()) and w < 40:
            f["scale"] = draw(st.sampled_from([0.1, 0.5, -2.0, 0.25]))
            f["offset"] = draw(st.sampled_from([0.0, -40.0, 3.5]))
        fields.append(f)
    if draw(st.booleans()):
        at = draw(st.integers(0, len(fields)))
        fields[at:at] = [{"name": "n", "width_bits": 8, "role": "length"},
                         {"name": "blob", "kind": "bytes", "max_len_bytes": draw(st.integers(1, 12))}]
    check_kind = draw(st.sampled_from(["none", "crc8", "crc16", "crc5", "sum8", "xor8",
                                       "fletcher16"]))
    check: dict[str, object] | None
    if check_kind == "none":
        check = None
    elif check_kind.startswith("crc"):
        check = {"model": {"crc8": "CRC-8/SMBUS", "crc16": "CRC-16/KERMIT",
                           "crc5": "CRC-5/USB"}[check_kind]}
    else:
        check = {"kind": check_kind}
    if check is not None:
        check["covers"] = draw(st.sampled_from([["fields"], ["sync", "fields"], ["sync"]]))
        if check_kind != "crc5":
            check["byte_order"] = draw(st.sampled_from(["big", "little"]))
    n_check = {"none": 0, "crc8": 8, "crc16": 16, "crc5": 5, "sum8": 8, "xor8": 8,
               "fletcher16": 16}[check_kind]
    n_body = sum(int(f.get("width_bits", 0)) for f in fields if f.get("kind") != "bytes") + n_check
    if n_body % bpb:  # block codes: whole blocks
        fields.append({"name": "pad", "width_bits": bpb - n_body % bpb})
    pattern_bits = draw(st.sampled_from([4, 8]))
    count = draw(st.integers(0, 3))
    sync_len = draw(st.integers(8, 24))
    sync_len += -(pattern_bits * count + sync_len) % bpb
    doc = {
        "frame": {"name": "t", "unit_us": 250.0, "bit_order": draw(st.sampled_from(["msb", "lsb"])),
                  "byte_order": "little" if little else "big", "repeats": draw(st.integers(1, 3)),
                  "gap_us": 5000.0},
        "line_code": {"name": name, **params},
        "preamble": {"pattern": 0xA & ((1 << pattern_bits) - 1), "pattern_bits": pattern_bits,
                     "count": count},
        "sync": {"value": draw(st.integers(0, (1 << sync_len) - 1)), "length_bits": sync_len},
        "fields": fields,
    }
    if check is not None:
        doc["check"] = check
    white = draw(st.sampled_from([None, ["fields", "check"], ["fields"], ["check"]]))
    if white is not None:
        doc["whitening"] = {"kind": draw(st.sampled_from(["pn9", "lfsr"])), "covers": white}
        if doc["whitening"]["kind"] == "lfsr":
            doc["whitening"].update({"width": 7, "poly": 0x09, "seed": draw(st.integers(1, 127))})
    return doc


def _parsed(p):
    return None if p is None else asdict(p)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(doc=frame_docs(), seed=st.integers(0, 2**32 - 1))
def test_encoder_and_parser_equal_the_oracle(doc, seed):
    """Every one-frame function and the batch encoder give the oracle's bits, chips and
    trains; parse_frame and parse_frames give the oracle's parse of intact, corrupted,
    extended and cut bodies and of random bits."""
    spec = spec_from_dict(doc)
    plan = compile_plan(spec)
    rng = np.random.default_rng(seed)
    values_list = [O.random_values(spec, rng) for _ in range(12)]
    rows, chips = [], []
    for values in values_list:
        raw = O.raw_values(spec, values)
        assert F.raw_values(plan, values) == raw
        assert F.field_bits(plan, raw).tolist() == O.field_bits(spec, raw).tolist()
        body = O.body_bits(spec, values)
        assert F.body_bits(spec, values).tolist() == body.tolist()
        assert F.frame_bits(plan, values).tolist() == O.frame_bits(spec, values).tolist()
        c = O.frame_chips(spec, values)
        assert F.frame_chips(spec, values).tolist() == c.tolist()
        a, b = F.encode(plan, values), O.encode(spec, values)
        assert a.levels.tolist() == b.levels.tolist()
        assert a.durations_us.tolist() == b.durations_us.tolist()
        rows.append(O.frame_bits(spec, values))
        chips.append(c)
    raws = F.raws_batch(plan, [O.raw_values(spec, v) for v in values_list])
    bits = frame_bits_batch(plan, raws)
    assert [np.asarray(r).tolist() for r in bits] == [r.tolist() for r in rows]
    assert [np.asarray(c).tolist() for c in frame_chips_batch(plan, bits)] == [
        c.tolist() for c in chips]
    bodies = []
    for r in rows:
        body = r[plan.head_bits.size:].copy()
        k = int(rng.integers(4))
        if k == 1:
            body[rng.integers(body.size)] ^= 1
        elif k == 2:
            body = np.concatenate((body, rng.integers(0, 2, int(rng.integers(1, 40)), dtype=np.uint8)))
        elif k == 3:
            body = body[:int(rng.integers(0, body.size + 1))]
        bodies.append(body)
    bodies.append(rng.integers(0, 2, int(rng.integers(0, 2 * plan.max_body_bits)), dtype=np.uint8))
    want = [_parsed(O.parse_frame(spec, b)) for b in bodies]
    assert [_parsed(F.parse_frame(plan, b)) for b in bodies] == want
    assert [_parsed(p) for p in F.parse_frames(plan, bodies).frames()] == want
    for values in values_list:
        payload = bytes.fromhex(O.parse_frame(spec, O.body_bits(spec, values)).payload_hex)
        assert F.values_from_payload(plan, payload) == O.values_from_payload(spec, payload)


@pytest.mark.parametrize("name", example_names())
def test_examples_with_every_line_code(name):
    """Every example spec, re-coded with every line code of LINE_CODES that fits its block
    size, encodes and parses as the oracle does over many random values."""
    spec, _ = example_spec(name)
    for code in LINE_CODES:
        try:
            plan = compile_plan(spec.__class__(**{**spec.__dict__,
                                                  "line_code": LineCodeSpec(code)}))
        except SpecError:
            continue  # a block code the example's lengths do not fit
        s = plan.spec
        rng = np.random.default_rng(11)
        values_list = [O.random_values(s, rng) for _ in range(200)]
        got = F.frame_chips_many(plan, values_list)
        assert [c.tolist() for c in got] == [O.frame_chips(s, v).tolist() for v in values_list]
        bodies = [O.body_bits(s, v) for v in values_list]
        for b in bodies[::2]:
            b[rng.integers(b.size)] ^= 1
        want = [_parsed(O.parse_frame(s, b)) for b in bodies]
        assert [_parsed(p) for p in F.parse_frames(plan, bodies).frames()] == want


@pytest.mark.parametrize("name", example_names())
def test_random_raw_batch_encodes_like_one_frame(name):
    """random_raw_batch serves every layout (bytes fields too); each row encodes as the
    oracle encodes that row's values, and payload_hex is the oracle's parse of it."""
    plan = compile_plan(example_spec(name)[0])
    raws = random_raw_batch(plan, 30, np.random.default_rng(2))
    enc = encode_bits(plan, raws)
    rows = frame_bits_batch(plan, raws)
    for i in range(30):
        raw = {k: (v[i] if isinstance(v, list) else int(v[i])) for k, v in raws.items()}
        raw = {f.name: (raw[f.name] if f.kind == "bytes" else
                        (raw[f.name] - (1 << 64) if f.signed and raw[f.name] >= 1 << 63
                         else raw[f.name])) for f in plan.spec.fields}
        values = O.physical_values(plan.spec, raw)
        values = {f.name: (bytes.fromhex(values[f.name]) if f.kind == "bytes" else values[f.name])
                  for f in plan.spec.fields if f.role != "length"}
        want = O.frame_bits(plan.spec, values)
        assert np.asarray(rows[i]).tolist() == want.tolist()
        assert enc.payload_hex()[i] == O.parse_frame(plan.spec, want[plan.head_bits.size:]).payload_hex


def test_plan_layout_and_masks_match_the_spec():
    """The plan's layout figures are those the oracle derives from the spec, its masks the
    oracle's whitening_mask, and weights read a field as bits_to_int does."""
    for name in example_names():
        spec, _ = example_spec(name)
        plan = compile_plan(spec)
        assert isinstance(plan, FramePlan) and plan.spec is spec
        assert plan.head_bits.tolist() == O.head_bits(spec).tolist()
        assert plan.sync_bits.tolist() == O.sync_bits(spec).tolist()
        assert (plan.min_body_bits, plan.max_body_bits) == (O.min_body_bits(spec), O.max_body_bits(spec))
        assert plan.fixed_body_bits == O.fixed_body_bits(spec)
        assert plan.is_fixed == (not spec.is_variable)
        for k in range(plan.check_masks.shape[0]):
            n_fb = plan.min_field_bits + 8 * k
            assert F.whitening_mask(plan, n_fb, plan.n_check_bits).tolist() == O.whitening_mask(
                spec, n_fb, plan.n_check_bits).tolist()
        assert plan.max_run_units == get_line_code(spec.line_code).max_run_units
        assert plan.unit_us == spec.unit_us and plan.repeats == spec.repeats
        assert not plan.head_bits.flags.writeable and not plan.fields_mask.flags.writeable


def test_compile_validates_specs_built_in_code():
    """A FrameSpec built without the loader is checked by compile_plan with key paths."""
    spec, _ = example_spec("tank_level.toml")
    fields = list(spec.fields)
    bad = spec.__class__(**{**spec.__dict__, "fields": tuple(f for f in fields if f.kind != "bytes")})
    with pytest.raises(SpecError) as e:
        compile_plan(bad)
    assert e.value.path.startswith("fields[") and "length field" in e.value.message
    bad = spec.__class__(**{**spec.__dict__, "line_code": LineCodeSpec("nrzz")})
    with pytest.raises(SpecError, match="unknown line code") as e:
        compile_plan(bad)
    assert e.value.path == "line_code.name"


def _module_of(path: Path) -> str:
    return ".".join(path.relative_to(PACKAGE.parent).with_suffix("").parts).removesuffix(".__init__")


def _imports(path: Path) -> list[str]:
    """Absolute names of every ookframe module or name imported anywhere in ``path``."""
    mod = _module_of(path)
    pkg = mod if path.name == "__init__.py" else mod.rsplit(".", 1)[0]
    out = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = pkg.rsplit(".", node.level - 1)[0] if node.level > 1 else pkg
                base = f"{base}.{node.module}" if node.module else base
            else:
                base = node.module or ""
            out += [f"{base}.{a.name}" for a in node.names]
        elif isinstance(node, ast.Import):
            out += [a.name for a in node.names]
    return [n for n in out if n.startswith("ookframe")]


def test_spec_package_imports_no_later_stage():
    """ookframe.spec (model and TOML parsing) imports only itself and ookframe.errors,
    at module level or inside functions (common practice, no source: stages import only
    earlier stages)."""
    for path in (PACKAGE / "spec").glob("*.py"):
        for name in _imports(path):
            assert name.startswith(("ookframe.spec.", "ookframe.errors.")), (path.name, name)


def _absolute(path: Path, node: ast.ImportFrom) -> str:
    mod = _module_of(path)
    pkg = mod if path.name == "__init__.py" else mod.rsplit(".", 1)[0]
    if not node.level:
        return node.module or ""
    base = pkg.rsplit(".", node.level - 1)[0] if node.level > 1 else pkg
    return f"{base}.{node.module}" if node.module else base


def test_no_private_names_across_modules():
    """No module uses a private name (``_x``) of a module outside its own subpackage, by
    import or through a module alias (``mod._x``); top-level modules count as each their
    own (common practice, no source: a subpackage may share private kernels inside it)."""
    found = []
    for path in PACKAGE.rglob("*.py"):
        me = _module_of(path)
        home = me.rsplit(".", 1)[0] if path.name != "__init__.py" else me
        tree = ast.parse(path.read_text(encoding="utf-8"))
        modules: dict[str, str] = {}  # alias -> module it names

        def foreign(source: str, home: str = home) -> bool:
            return home == "ookframe" or not source.startswith(home + ".")

        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                src = _absolute(path, node)
                for a in node.names:
                    modules[a.asname or a.name] = f"{src}.{a.name}"
                    private = a.name.startswith("_") and not a.name.startswith("__")
                    if private and src.startswith("ookframe") and foreign(f"{src}.{a.name}"):
                        found.append((me, a.name))
            elif isinstance(node, ast.Import):
                modules.update({a.asname or a.name: a.name for a in node.names})
        for node in ast.walk(tree):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                    and node.value.id in modules and node.attr.startswith("_")
                    and not node.attr.startswith("__")
                    and modules[node.value.id].startswith("ookframe")
                    and foreign(modules[node.value.id])):
                found.append((me, f"{node.value.id}.{node.attr}"))
    # the decoder is being rewritten elsewhere; its one old import goes with that rewrite
    assert set(found) <= {("ookframe.decode.glitch", "_sum_runs")}, found


def test_no_plan_caches():
    """Plans are built and passed, never cached: no lru_cache in the modules that make or
    use plans for encoding and parsing, and no id-keyed plan dict (common practice, no
    source)."""
    for name in ("plan.py", "frame.py", "batch.py", "layout.py", "spec_io.py"):
        text = (PACKAGE / name).read_text(encoding="utf-8")
        assert "lru_cache" not in text and "id(spec)" not in text, name
