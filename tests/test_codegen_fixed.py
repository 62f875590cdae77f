"""Tests of the fixed-point helpers in the generated C header (physical <-> raw without
floats): the macros, compiled under the strict flags, against ``ookframe.bits.to_raw``
(the reference model) and Python's ``decimal`` module (ROUND_HALF_EVEN, Python 3.11
standard library) over many values, ties and range ends included."""

from __future__ import annotations

import subprocess
from decimal import ROUND_HALF_EVEN, Decimal
from pathlib import Path

import numpy as np
import pytest

from ookframe.bits import from_raw, to_raw
from ookframe.codegen import emit_header
from ookframe.codegen.model import fixed_point
from ookframe.codegen.toolchains import AVR_FLAGS, STRICT_FLAGS, compile_c, find_tool
from ookframe.errors import ValueRangeError
from ookframe.spec_io import spec_from_dict
from tests.conftest import example_spec

C_DIR = Path(__file__).resolve().parent / "c"
GCC = find_tool("gcc")
AVR_GCC = find_tool("avr-gcc")

SCALED = {
    "frame": {"name": "coldframe_soil", "bit_rate_bps": 1000},
    "line_code": {"name": "nrz"},
    "sync": {"value": 0x2D, "length_bits": 8},
    "fields": [
        {"name": "soil_temp", "width_bits": 10, "signed": True, "scale": 0.25, "offset": -40},
        {"name": "moisture", "width_bits": 16, "scale": 0.01, "unit": "%"},
        {"name": "half_step", "width_bits": 7, "scale": 0.5, "offset": 0.25},
        {"name": "lux", "width_bits": 12, "scale": 2.5, "offset": 1000},
        {"name": "tilt", "width_bits": 8, "signed": True, "scale": 0.125, "offset": -0.375},
        {"name": "wind", "width_bits": 6, "scale": 0.2},
        {"name": "depth", "width_bits": 9, "signed": True, "scale": -0.5, "offset": 10},
    ],
    "check": {"model": "CRC-8/SMBUS"},
}


def test_fixed_point_values():
    """Hand-worked: scale 0.1 offset 2.4 -> tenths, step 1, offset 24, scale 1/10;
    scale 0.25 offset -40 -> hundredths, 25 and -4000, scale 1/4; scale 2.5 offset 1000
    -> tenths, 25 and 10000, 5/2; too many decimals -> no helper."""
    fp = fixed_point(0.1, 2.4, 0, 15)
    assert (fp.div, fp.scale_fixed, fp.offset_fixed, fp.scale_num, fp.scale_den) == (10, 1, 24, 1, 10)
    assert fp.example_fixed == fp.example_raw * 1 + 24
    fp = fixed_point(0.25, -40.0, -512, 511)
    assert (fp.div, fp.scale_fixed, fp.offset_fixed, fp.scale_num, fp.scale_den) == (100, 25, -4000, 1, 4)
    fp = fixed_point(2.5, 1000.0, 0, 4095)
    assert (fp.div, fp.scale_fixed, fp.offset_fixed, fp.scale_num, fp.scale_den) == (10, 25, 10000, 5, 2)
    assert fixed_point(1e-12, 0.0, 0, 255) is None
    assert fixed_point(0.5, 0.0, 0, 2**62) is None


def test_header_places_the_helpers():
    """hive_scale's battery_v (scale 0.1, offset 2.4, examples/hive_scale.toml) gets its
    constants and macros; the header has no float or double anywhere."""
    spec, _ = example_spec("hive_scale.toml")
    text = emit_header(spec).text
    for line in ("#define HIVE_SCALE_FIELD_BATTERY_V_FIXED_DIV INT64_C(10)",
                 "#define HIVE_SCALE_FIELD_BATTERY_V_SCALE_FIXED INT64_C(1)",
                 "#define HIVE_SCALE_FIELD_BATTERY_V_OFFSET_FIXED INT64_C(24)",
                 "#define HIVE_SCALE_FIELD_BATTERY_V_SCALE_NUM INT64_C(1)",
                 "#define HIVE_SCALE_FIELD_BATTERY_V_SCALE_DEN INT64_C(10)",
                 "int64_t hive_scale_div_round(int64_t n, int64_t d);"):
        assert line in text
    assert "HIVE_SCALE_FIELD_HIVE_FIXED_DIV" not in text  # unscaled field: no helper
    code = "\n".join(ln for ln in text.splitlines() if not ln.lstrip().startswith(("/*", "*")))
    assert "float" not in code and "double" not in code


def _cases(f, fp, rng: np.random.Generator) -> list[int]:
    """Fixed-point inputs: every raw's exact value and the ties beside it near both ends,
    400 random values over the range and 3 steps beyond, and the centre."""
    step = abs(fp.scale_fixed)
    lo = min(f.raw_min * fp.scale_fixed, f.raw_max * fp.scale_fixed) + fp.offset_fixed
    hi = max(f.raw_min * fp.scale_fixed, f.raw_max * fp.scale_fixed) + fp.offset_fixed
    out = set(int(v) for v in rng.integers(lo - 3 * step, hi + 3 * step + 1, 400))
    for raw in [*range(f.raw_min, f.raw_min + 6), *range(f.raw_max - 5, f.raw_max + 1)]:
        exact = raw * fp.scale_fixed + fp.offset_fixed
        out.update({exact - 1, exact, exact + 1})
        if step % 2 == 0:
            out.update({exact + step // 2, exact - step // 2})  # ties
    out.update({lo - 1, hi + 1, (lo + hi) // 2})
    return sorted(out)


def _expected(f, fp, v: int) -> int:
    """Raw nearest to physical v / div, ties to even (decimal module); to_raw agrees
    wherever the value fits the field."""
    q = ((Decimal(v) - fp.offset_fixed) / fp.scale_fixed).quantize(Decimal(1), ROUND_HALF_EVEN)
    try:
        ref = to_raw(f, str(Decimal(v) / fp.div))
    except ValueRangeError:
        assert not f.raw_min <= int(q) <= f.raw_max
        return int(q)
    assert ref == int(q)
    return ref


@pytest.mark.slow
@pytest.mark.skipif(GCC is None, reason="gcc not installed")
@pytest.mark.parametrize("doc", ["hive_scale", "coldframe_soil"])
def test_helpers_bit_exact_against_to_raw(tmp_path, doc):
    """Each scaled field's _RAW_FROM_FIXED equals to_raw on ~450 values (ties where the
    step is even: half_step, wind; a negative scale: depth; ends; out of range) and _FIXED_FROM_RAW gives back from_raw x div exactly; compiled with the strict
    flags."""
    spec = example_spec("hive_scale.toml")[0] if doc == "hive_scale" else spec_from_dict(SCALED)
    emitted = emit_header(spec)
    (tmp_path / emitted.filename).write_text(emitted.text)
    P = spec.name.upper()
    scaled = [(f, c.fixed) for f, c in zip(spec.fields, emitted.model.fields, strict=True)
              if c.fixed is not None]
    assert len(scaled) >= 2
    rng = np.random.default_rng(9)
    for k, (f, fp) in enumerate(scaled):
        prog = compile_c(GCC, [C_DIR / "fixed_point.c"], tmp_path / f"fx{k}",
                         flags=[*STRICT_FLAGS, "-O2"], include_dirs=[tmp_path],
                         defines={"OOK_HEADER": f'"{emitted.filename}"',
                                  f"{P}_IMPLEMENTATION": None,
                                  "OOK_RAW_FROM_FIXED": f"{P}_FIELD_{f.name.upper()}_RAW_FROM_FIXED",
                                  "OOK_FIXED_FROM_RAW": f"{P}_FIELD_{f.name.upper()}_FIXED_FROM_RAW"})
        cases = _cases(f, fp, rng)
        got = subprocess.run([str(prog)], input="\n".join(map(str, cases)) + "\n",
                             capture_output=True, text=True, check=True, timeout=60).stdout
        rows = [tuple(map(int, ln.split())) for ln in got.splitlines()]
        assert len(rows) == len(cases)
        for v, (raw, back) in zip(cases, rows, strict=True):
            assert raw == _expected(f, fp, v), (f.name, v)
            assert back == raw * fp.scale_fixed + fp.offset_fixed
            if f.raw_min <= raw <= f.raw_max:
                assert Decimal(back) / fp.div == Decimal(repr(from_raw(f, raw))), (f.name, raw)


@pytest.mark.slow
@pytest.mark.skipif(AVR_GCC is None, reason="avr-gcc not installed")
def test_helpers_compile_clean_for_avr(tmp_path):
    """The header with helpers compiles for the ATmega328P under the strict flags."""
    emitted = emit_header(spec_from_dict(SCALED))
    (tmp_path / emitted.filename).write_text(emitted.text)
    src = tmp_path / "use.c"
    src.write_text(f'#include "{emitted.filename}"\n'
                   "int64_t use(int64_t v);\n"
                   "int64_t use(int64_t v) { return COLDFRAME_SOIL_FIELD_LUX_RAW_FROM_FIXED(v)"
                   " + COLDFRAME_SOIL_FIELD_TILT_FIXED_FROM_RAW(3); }\n")
    compile_c(AVR_GCC, [src], tmp_path / "use.o", flags=[*STRICT_FLAGS, *AVR_FLAGS, "-c"],
              include_dirs=[tmp_path], defines={"COLDFRAME_SOIL_IMPLEMENTATION": None})
