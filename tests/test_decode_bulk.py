"""The one array framer (every candidate window at once, every layout) against the
per-window framer the decoder used before (``tests/oracle_framer.py``).

Reference: the per-window framer, which the first decoder's tests checked against
published values and channel theory; the array framer must give the same frames (floats
to rounding: its sums run over ragged arrays) on every example spec, every registered line
code, and every channel preset, from the same windows.
"""

from __future__ import annotations

import math
from dataclasses import asdict
from pathlib import Path

import numpy as np
import pytest

from ookframe import frame
from ookframe.channel import apply_channel, get_preset
from ookframe.channel.presets import PRESETS
from ookframe.decode import framer
from ookframe.decode.framer import decode
from ookframe.decode.framing import array_body_bits
from ookframe.decode.head import head_model
from ookframe.linecodes import LINE_CODES
from ookframe.pulses import PulseTrain
from ookframe.spec_io import load_spec, spec_from_dict
from ookframe.stress.batch import random_batch
from tests.oracle_framer import oracle_frames

EXAMPLES = sorted((Path(__file__).parent.parent / "ookframe" / "examples").glob("*.toml"))


def _bed(line_code: dict, **extra) -> object:
    d = {
        "frame": {"name": "bed", "unit_us": 500.0, "repeats": 2, "gap_us": 20000.0},
        "line_code": line_code, "preamble": {"pattern": 0xAA, "count": 2},
        "sync": {"value": 0x2DD4, "length_bits": 16, "max_errors": 2},
        "fields": [{"name": "moisture", "width_bits": 12, "signed": True},
                   {"name": "temp", "width_bits": 10, "scale": 0.1, "offset": -20.0},
                   {"name": "id", "width_bits": 2}],
        "check": {"model": "CRC-8/SMBUS"},
    }
    d.update(extra)
    return spec_from_dict(d)


#: every registered line code at its defaults, and a variable-length stuffed layout
CODE_SPECS = [(name, _bed({"name": name, **cls.DEFAULTS}, whitening={"kind": "pn9"}))
              for name, cls in LINE_CODES.items()]
SPECS = [pytest.param(load_spec(p), id=p.stem) for p in EXAMPLES] + [
    pytest.param(spec, id=name) for name, spec in CODE_SPECS
] + [pytest.param(_bed({"name": "manchester"},
                       check={"model": "CRC-16/KERMIT", "covers": ["sync", "fields"]}),
                  id="check-covers-sync"),
     pytest.param(_bed({"name": "nrz", "stuff_after": 4},
                       fields=[{"name": "n", "width_bits": 8, "role": "length"},
                               {"name": "note", "kind": "bytes", "max_len_bytes": 6}]),
                  id="stuffed-bytes")]


def _same(a, b) -> str | None:
    da, db = asdict(a), asdict(b)
    for key, x in da.items():
        y = db[key]
        if isinstance(x, float):
            if not math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-9):
                return key
        elif x != y:
            return key
    return None


def _oracle_decode(monkeypatch, spec, train, **kw):
    with monkeypatch.context() as m:
        m.setattr(framer, "_frame_all", oracle_frames)
        return decode(spec, train, **kw)


@pytest.mark.parametrize("spec", SPECS)
@pytest.mark.parametrize("preset", sorted(PRESETS))
def test_array_framer_gives_the_per_window_frames(spec, preset, monkeypatch):
    ch = get_preset(preset)
    compared = 0
    for seed in range(2):
        rng = np.random.default_rng(seed)
        batch = random_batch(spec, 30, rng)
        rx = apply_channel(batch.train, ch, rng, burst_starts_us=batch.starts_us)
        for include_bad in (True, False):
            together = decode(spec, rx, include_bad=include_bad)
            one_by_one = _oracle_decode(monkeypatch, spec, rx, include_bad=include_bad)
            assert len(together) == len(one_by_one)
            for x, y in zip(together, one_by_one, strict=True):
                assert _same(x, y) is None, _same(x, y)
            compared += len(one_by_one)
    assert compared >= 30  # frames were decoded at all


def test_fixed_layouts_are_parsed_as_one_array():
    by_name = {p.stem: load_spec(p) for p in EXAMPLES}
    served = {name for name, s in by_name.items() if array_body_bits(s, head_model(s))}
    # tank_level has a variable-length bytes field, coldframe_vent stuffs bits, the gate
    # sensor's pulse-distance code has data-dependent chip counts: parsed window by window
    assert served == {"hive_scale", "greenhouse_probe"}
    assert array_body_bits(_bed({"name": "nrz"}), head_model(_bed({"name": "nrz"}))) == 24 + 8


def test_array_framer_on_noise_and_cut_frames(monkeypatch):
    for spec in (_bed({"name": "manchester"}), _bed({"name": "pulse_distance"})):
        rng = np.random.default_rng(5)
        noise = PulseTrain((np.arange(20000) % 2).astype(np.uint8),
                           rng.exponential(700.0, 20000) + 1)
        assert decode(spec, noise) == _oracle_decode(monkeypatch, spec, noise)
        tx = frame.encode(spec, frame.random_values(spec, rng))
        for cut in (10, 40, 60, 100, len(tx) // 2 + 3):
            part = PulseTrain(tx.levels[:cut], tx.durations_us[:cut])
            assert [asdict(f) for f in decode(spec, part)] == [
                asdict(f) for f in _oracle_decode(monkeypatch, spec, part)]


@pytest.mark.parametrize("spec", SPECS[:-2])
def test_parse_frames_equals_parse_frame_row_by_row(spec):
    rng = np.random.default_rng(3)
    rows = []
    for i in range(60):
        body = frame.body_bits(spec, frame.random_values(spec, rng))
        if i % 3:
            body = body.copy()
            body[rng.integers(body.size)] ^= 1  # some checks fail
        rows.append(body)
    parsed = frame.parse_frames(spec, np.array(rows) if frame.fixed_body_bits(spec) else rows)
    got = parsed.frames()
    assert got == [frame.parse_frame(spec, r) for r in rows]
    ok = [p is not None and p.check_ok for p in got]
    assert any(ok) and not all(ok)
