"""Tests of ookframe.stress.sweep: grid parsing, monotone PER, plot output."""

from __future__ import annotations

import pytest

from ookframe.channel import ChannelSpec
from ookframe.errors import ValueRangeError
from ookframe.stress.sweep import parse_vary, plot_sweep, run_sweep
from tests.conftest import example_spec


def test_parse_vary():
    assert parse_vary("jitter_us=0:40:5") == ("jitter_us", (0.0, 10.0, 20.0, 30.0, 40.0))
    assert parse_vary("mark_bias_us=-8,0,8") == ("mark_bias_us", (-8.0, 0.0, 8.0))
    for bad in ("jiter_us=0:1:2", "jitter_us", "jitter_us=0:1", "jitter_us=a:b:c",
                "jitter_us=0:1:0"):
        with pytest.raises(ValueRangeError):
            parse_vary(bad)


def test_sweep_two_designs_and_plot(tmp_path):
    """PER rises from 0 (no jitter) to near 1 (jitter of half a unit); two designs on one
    plot."""
    a, _ = example_spec("hive_scale.toml")
    b, _ = example_spec("greenhouse_probe.toml")
    res = run_sweep([a, b], ChannelSpec(), "jitter_us", [0.0, 60.0, 150.0], 60, seed=1,
                    workers=2, chunk_frames=30)
    assert res.specs == ("hive_scale", "greenhouse_probe")
    hive = [r.per for r in res.results[0]]
    assert hive[0] == 0.0 and hive[-1] > 0.5
    assert hive == sorted(hive)
    d = res.to_dict()
    assert d["specs"][1]["points"][0]["per_ci95"][0] == 0.0
    out = tmp_path / "sweep.png"
    plot_sweep(res, str(out))
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_glitches_varied_on_a_channel_without_glitch_width():
    """Varying the glitch rate on the ideal channel (no width set) uses half a unit, so
    glitches pass the decoder's 0.3-unit filter and PER rises; a width the channel sets is
    kept."""
    from ookframe.stress.sweep import GLITCH_WIDTH_UNITS, channel_at

    spec, _ = example_spec("hive_scale.toml")
    res = run_sweep([spec], ChannelSpec(), "glitch_rate_per_ms", [0.0, 0.5], 30, seed=2,
                    chunk_frames=30)
    assert [r.per for r in res.results[0]] == [0.0, 1.0]
    assert res.results[0][1].channel.glitch_width_us == GLITCH_WIDTH_UNITS * spec.unit_us
    assert res.results[0][0].channel.glitch_width_us == 0.0
    kept = channel_at(spec, ChannelSpec(glitch_rate_per_ms=0.1, glitch_width_us=7.0),
                      "glitch_rate_per_ms", 2.0)
    assert (kept.glitch_rate_per_ms, kept.glitch_width_us) == (2.0, 7.0)


def test_pooled_sweep_equals_point_by_point():
    """With a pool the sweep submits the chunks of all points together; every result equals
    the in-process run of that point alone (same chunk seeds)."""
    from ookframe.stress.runner import run_stress
    from ookframe.stress.sweep import channel_at

    a, _ = example_spec("hive_scale.toml")
    ch = ChannelSpec()
    pooled = run_sweep([a], ch, "dropout_prob", [0.0, 0.02, 0.05], 90, seed=4, workers=2,
                       chunk_frames=25)
    alone = [run_stress(a, channel_at(a, ch, "dropout_prob", v), 90, seed=4, chunk_frames=25)
             for v in (0.0, 0.02, 0.05)]
    assert list(pooled.results[0]) == alone
    assert 0 < sum(r.ok for r in alone) < 270


def test_pooled_sweep_keeps_run_stress_chunk_bound():
    """Above ``chunk_limit`` (hive_scale: CHUNK_CHIPS over its chips per transmission) the
    pooled sweep cuts its chunks as ``run_stress`` does, so results still equal the
    point-by-point runs (regression: the pool path cut every ``chunk_frames``)."""
    from ookframe.stress.runner import chunk_limit, run_stress
    from ookframe.stress.sweep import channel_at

    a, _ = example_spec("hive_scale.toml")
    n = 2 * chunk_limit(a) + 7
    assert n < 500  # chunk_frames below is above the bound
    ch = ChannelSpec()
    pooled = run_sweep([a], ch, "dropout_prob", [0.01, 0.04], n, seed=5, workers=2,
                       chunk_frames=500)
    alone = [run_stress(a, channel_at(a, ch, "dropout_prob", v), n, seed=5, chunk_frames=500)
             for v in (0.01, 0.04)]
    assert list(pooled.results[0]) == alone
