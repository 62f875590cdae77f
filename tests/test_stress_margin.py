"""Tests of ookframe.stress.margin: sample-size rule and bisection."""

from __future__ import annotations

import pytest

from ookframe.errors import ValueRangeError
from ookframe.intervals import clopper_pearson
from ookframe.stress.margin import frames_needed, run_margin
from tests.conftest import example_spec


def test_frames_needed_is_the_zero_error_clopper_pearson_bound():
    """n is the smallest count whose k = 0 upper bound 1 - 0.025^(1/n) (Clopper & Pearson
    1934) is below the target."""
    for target in (0.1, 0.01, 0.001):
        n = frames_needed(target)
        assert clopper_pearson(0, n)[1] < target <= clopper_pearson(0, n - 1)[1]


def test_margin_brackets_a_boundary():
    spec, _ = example_spec("hive_scale.toml")
    r = run_margin(spec, 0.1, impairments=["jitter_us", "clock_error_pct"], n_frames=60,
                   resolution=0.05, chunk_frames=30)
    rows = {(x.impairment, x.sign): x for x in r.rows}
    assert set(rows) == {("jitter_us", 1), ("clock_error_pct", 1), ("clock_error_pct", -1)}
    j = rows[("jitter_us", 1)]
    assert j.status == "ok" and 0 < j.limit < j.first_fail <= spec.unit_us
    assert j.first_fail - j.limit <= 0.05 * spec.unit_us
    assert j.at_limit is not None and j.at_limit.per_ci95[1] < 0.1
    # the decoder's claimed ±5 % clock tolerance is inside the measured margin
    assert rows[("clock_error_pct", 1)].limit >= 5.0
    assert rows[("clock_error_pct", -1)].limit <= -5.0
    with pytest.raises(ValueRangeError, match="at least"):
        run_margin(spec, 0.01, n_frames=10)


def test_margin_searches_glitches_and_dropouts_on_the_default_channel():
    """Every default impairment can be searched from the ideal channel (glitches get half
    a unit of width there); both hurt a frame without error correction early."""
    spec, _ = example_spec("hive_scale.toml")
    r = run_margin(spec, 0.1, impairments=["glitch_rate_per_ms", "dropout_prob"], n_frames=60,
                   resolution=0.05, chunk_frames=30)
    rows = {x.impairment: x for x in r.rows}
    for name in ("glitch_rate_per_ms", "dropout_prob"):
        assert rows[name].status == "ok" and rows[name].first_fail is not None
    assert rows["glitch_rate_per_ms"].at_limit.channel.glitch_width_us in (
        0.0, 0.5 * spec.unit_us)


def test_rate_margins_are_found_on_a_log_scale():
    """Glitch rate and dropout probability are searched on a log scale: hive_scale at PER
    < 0.1 fails at the first linear step (1/64 of the search limit), so a linear bisection
    reported 0; the log search brackets a non-zero limit whose ratio to the first failing
    value is within 1 + 5 * resolution, and the limit's own run passes."""
    from ookframe.stress.margin import RATE_FLOOR, search_limit

    spec, _ = example_spec("hive_scale.toml")
    res = 0.05
    r = run_margin(spec, 0.1, impairments=["glitch_rate_per_ms", "dropout_prob"], n_frames=60,
                   resolution=res, chunk_frames=30)
    for row in r.rows:
        lim = search_limit(spec, row.impairment)
        assert row.status == "ok" and RATE_FLOOR * lim <= row.limit < row.first_fail
        assert row.first_fail / row.limit <= 1 + 5 * res
        assert row.at_limit.per_ci95[1] < 0.1
    glitch = next(x for x in r.rows if x.impairment == "glitch_rate_per_ms")
    assert glitch.limit < search_limit(spec, "glitch_rate_per_ms") / 64
