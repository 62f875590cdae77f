"""Tests of the split repeat gap: a gap longer than one timer period (8-bit timers) is sent
as several periods at level 0 instead of being refused.

References: the Python quantised schedule (ookframe.codegen.tx_schedule) and the encoder
(ookframe.frame.encode); the generated C is compared with the schedule pulse by pulse by
the shared harness (tests/c/harness.c). The split arithmetic is checked by hand."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from ookframe.cli.main import main
from ookframe.codegen import TimerTarget, emit_header, tx_schedule
from ookframe.codegen.timing import quantise, split_ticks
from ookframe.errors import CodegenError
from ookframe.frame import encode, random_values
from ookframe.spec_io import spec_from_dict
from tests.c.runner import build_harness
from tests.conftest import example_spec
from tests.test_codegen import GCC, assert_harness_matches, base_doc

EIGHT = TimerTarget(timer_bits=8, prescalers=(8,))  # 8 MHz / 8: 1 µs ticks, 255 µs period


def test_split_arithmetic_by_hand():
    """10001 ticks on an 8-bit timer (255 per period): ceil(10001 / 255) = 40 periods,
    divmod(10001, 40) = (250, 1): 39 of 250 then 1 of 251."""
    t = quantise(EIGHT, 200.0, [1], 10001.0, (2, 1))
    assert (t.gap_ticks, t.gap_pieces) == (10001, 40)
    assert t.gap_piece_ticks() == (250,) * 39 + (251,)
    assert split_ticks(1000, 4) == (250, 250, 250, 250)
    assert split_ticks(7, 3) == (2, 2, 3)
    assert t.table()[-1]["timer_periods"] == 40 and t.table()[0]["timer_periods"] == 1


def test_split_only_when_no_prescaler_holds_the_gap():
    """A gap that fits one period (16-bit timer) is not split; a chip run that does not fit
    is still refused (runs are never split)."""
    assert quantise(TimerTarget(prescalers=(8,)), 200.0, [1], 10001.0, (2, 1)).gap_pieces == 1
    with pytest.raises(CodegenError, match="no prescaler fits"):
        quantise(EIGHT, 300.0, [1], 10001.0, (2, 1))  # 300 ticks > 255


def test_schedule_with_split_gap_is_the_encoder_train():
    """hive_scale (8 ms gap, 250 µs unit, examples/hive_scale.toml) on an 8-bit timer: the
    schedule merged by level equals encode()'s train, every pulse fits the timer, and the
    gap's periods add up to its ticks."""
    spec, _ = example_spec("hive_scale.toml")
    emitted = emit_header(spec, TimerTarget(timer_bits=8))
    t = emitted.model.timing
    assert t.gap_pieces > 1 and sum(t.gap_piece_ticks()) == t.gap_ticks
    rng = np.random.default_rng(4)
    for _ in range(30):
        values = random_values(spec, rng)
        s = tx_schedule(emitted.model, values)
        ref = encode(spec, values)
        nominal = s.nominal_train()
        assert nominal.levels.tolist() == ref.levels.tolist()
        np.testing.assert_allclose(nominal.durations_us, ref.durations_us, rtol=1e-12)
        assert s.ticks.max() <= 255
        np.testing.assert_allclose(s.ticks * t.tick_us, s.nominal_us, rtol=t.worst_error + 1e-12)
    assert f"{t.gap_pieces} periods" in emitted.text


@pytest.mark.slow
@pytest.mark.skipif(GCC is None, reason="gcc not installed")
@pytest.mark.parametrize("gap_us", [10001.0, 9000.0, 60000.0])
def test_c_split_gap_bit_and_tick_exact(tmp_path, gap_us):
    """The C transmitter with a split gap (with and without one-tick-longer periods, and a
    240-period gap) yields exactly the Python schedule, pulse by pulse."""
    spec = spec_from_dict(base_doc({"name": "nrz"}, unit_us=200.0, gap_us=gap_us))
    emitted = emit_header(spec, EIGHT)
    assert emitted.model.timing.gap_pieces > 1
    program = build_harness(emitted, tmp_path, GCC)
    assert_harness_matches(emitted, program, np.random.default_rng(8), 30)


def test_emit_reports_the_split(tmp_path, capsys):
    """``emit --timer-bits 8`` writes the header and says the gap is split (JSON: the
    ticks of each period)."""
    spec_file = str(Path(__file__).resolve().parent.parent / "examples" / "hive_scale.toml")
    assert main(["emit", spec_file, "-o", str(tmp_path), "--timer-bits", "8", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert len(d["gap_timer_periods"]) > 1 and max(d["gap_timer_periods"]) <= 255
    gap = next(r for r in d["durations"] if r["name"] == "repeat gap")
    assert sum(d["gap_timer_periods"]) == gap["ticks"]
    assert gap["timer_periods"] == len(d["gap_timer_periods"])
    assert main(["emit", spec_file, "-o", str(tmp_path / "b"), "--timer-bits", "8"]) == 0
    assert "repeat gap longer than one 8-bit timer period" in capsys.readouterr().out
