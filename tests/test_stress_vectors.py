"""Tests of ookframe.stress.vectors: JSON and C test vectors carry the right data."""

from __future__ import annotations

import shutil
import subprocess

import numpy as np
import pytest

from ookframe.channel import ChannelSpec, get_preset
from ookframe.decode import decode
from ookframe.frame import values_equal
from ookframe.pulses import PulseTrain
from ookframe.stress.vectors import make_vectors, render_vectors_c, vectors_to_dict
from tests.conftest import example_spec

NAMES = ["hive_scale.toml", "tank_level.toml", "greenhouse_probe.toml"]
STRICT = ["-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Wconversion", "-Werror"]


@pytest.mark.parametrize("name", NAMES)
def test_json_vectors_decode_to_their_expected_values(name):
    """Ideal channel: the reference decoder reads every vector's expected fields."""
    spec, _ = example_spec(name)
    vecs = make_vectors(spec, ChannelSpec(), 8, seed=4)
    doc = vectors_to_dict(spec, ChannelSpec(), 4, vecs)
    assert len(doc["vectors"]) == 8
    for v in doc["vectors"]:
        train = PulseTrain(np.array(v["levels"]), np.array(v["durations_us"]))
        got = [f for f in decode(spec, train) if f.crc_ok]
        assert len(got) == spec.repeats
        expected = {k: bytes.fromhex(x) if isinstance(x, str) else x
                    for k, x in v["expected"].items()}
        assert all(values_equal(spec, f.fields, expected) for f in got)


def test_vectors_are_reproducible_and_distorted():
    spec, _ = example_spec("hive_scale.toml")
    ch = get_preset("budget-superregen")
    a = make_vectors(spec, ch, 3, seed=9)
    b = make_vectors(spec, ch, 3, seed=9)
    assert all(x.train == y.train and x.values == y.values for x, y in zip(a, b, strict=True))
    clean = make_vectors(spec, ChannelSpec(), 3, seed=9)
    assert a[0].values == clean[0].values
    assert a[0].train != clean[0].train


@pytest.mark.slow
@pytest.mark.skipif(shutil.which("gcc") is None, reason="needs gcc")
@pytest.mark.parametrize("name", NAMES)
def test_c_header_compiles_strict_and_holds_the_vectors(name, tmp_path):
    """The header compiles under gcc -std=c99 -Wall -Wextra -Wpedantic -Wconversion
    -Werror, and a C program printing its arrays gives back exactly the Python vectors
    (durations rounded to whole µs)."""
    spec, _ = example_spec(name)
    vecs = make_vectors(spec, get_preset("budget-superregen"), 4, seed=2)
    (tmp_path / "vec.h").write_text(render_vectors_c(spec, ChannelSpec(), 2, vecs))
    p = spec.name
    P = p.upper()
    prints = []
    for f in spec.fields:
        if f.kind == "bytes":
            prints.append(
                f'for (i = 0; i < {P}_VEC_COUNT; i++) {{ unsigned j; printf("{f.name}"); '
                f"for (j = 0; j < {p}_vec_expect_{spec.length_field.name}[i]; j++) "
                f'printf(" %u", (unsigned){p}_vec_expect_{f.name}[{p}_vec_expect_{f.name}'
                f'_start[i] + j]); printf("\\n"); }}')
        else:
            prints.append(
                f'for (i = 0; i < {P}_VEC_COUNT; i++) printf("{f.name} %lld\\n", '
                f"(long long){p}_vec_expect_{f.name}[i]);")
    src = f"""#include <stdio.h>
#include "vec.h"
int main(void) {{
    unsigned i, k;
    for (i = 0; i < {P}_VEC_COUNT; i++) {{
        printf("vector");
        for (k = {p}_vec_offset[i]; k < (unsigned)({p}_vec_offset[i] + {p}_vec_length[i]); k++)
            printf(" %u:%lu", (unsigned){p}_vec_levels[k], (unsigned long){p}_vec_durations_us[k]);
        printf("\\n");
    }}
    {chr(10).join(prints)}
    return 0;
}}
"""
    (tmp_path / "main.c").write_text(src)
    exe = tmp_path / "main"
    subprocess.run(["gcc", *STRICT, "-o", str(exe), str(tmp_path / "main.c")], check=True,
                   capture_output=True, text=True)
    out = subprocess.run([str(exe)], check=True, capture_output=True, text=True).stdout
    lines = out.splitlines()
    want = []
    for v in vecs:
        d = np.maximum(np.rint(v.train.durations_us), 1).astype(int)
        want.append("vector" + "".join(f" {lv}:{x}" for lv, x in
                                       zip(v.train.levels.tolist(), d.tolist(), strict=True)))
    for f in spec.fields:
        for v in vecs:
            r = v.raw[f.name]
            want.append(f.name + ("".join(f" {b}" for b in r) if isinstance(r, bytes)
                                  else f" {r}"))
    assert lines == want
