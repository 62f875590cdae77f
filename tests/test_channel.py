"""Tests of ookframe.channel: each impairment alone, the composed channel, presets."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from ookframe.channel import (
    PRESETS,
    ChannelSpec,
    add_glitches,
    add_idle_noise,
    apply_channel,
    bias_marks,
    channel_time_map_us,
    drop_marks,
    get_preset,
    idle_noise_train,
    jitter_edges,
    quantise_edges,
    scale_clock,
    tx_time_map_us,
)
from ookframe.errors import ValueRangeError
from ookframe.pulses import PulseTrain, merge_runs


def _alternating(n: int, rng: np.random.Generator, unit_us: float = 500.0) -> PulseTrain:
    """A train of n alternating pulses (mark first), widths 1 or 2 units."""
    levels = (np.arange(n) % 2 == 0).astype(np.uint8)
    return PulseTrain(levels, unit_us * rng.integers(1, 3, n).astype(float))


trains = st.builds(
    lambda n, seed: _alternating(n, np.random.default_rng(seed)),
    st.integers(1, 60),
    st.integers(0, 2**32 - 1),
)
channels = st.builds(
    ChannelSpec,
    jitter_us=st.floats(0, 300),
    jitter_kind=st.sampled_from(["gauss", "uniform"]),
    mark_bias_us=st.floats(-600, 600),
    clock_error_pct=st.floats(-20, 20),
    drift_pct_per_s=st.floats(-50, 50),
    quant_step_us=st.one_of(st.just(0.0), st.floats(0.01, 200)),
    glitch_rate_per_ms=st.floats(0, 2),
    glitch_width_us=st.floats(1, 100),
    dropout_prob=st.floats(0, 1),
    idle_noise_us=st.floats(0, 5000),
    idle_noise_mean_us=st.floats(5, 500),
    idle_quiet_us=st.floats(0, 3000),
)


def _valid(t: PulseTrain, min_width_us: float = 0.0) -> None:
    assert np.all(np.isfinite(t.durations_us))
    assert np.all(t.durations_us > 0)
    assert np.all(t.durations_us >= min_width_us - 1e-9)
    assert np.all(t.levels[1:] != t.levels[:-1]), "adjacent pulses must alternate"


@settings(max_examples=150, deadline=None)
@given(trains, channels, st.integers(0, 2**32 - 1))
def test_any_channel_gives_a_valid_train(train, channel, seed):
    """Whatever the impairments, edges never cross: positive widths, alternating levels."""
    out = apply_channel(train, channel, np.random.default_rng(seed))
    _valid(out)
    if channel.quant_step_us == 0:
        _valid(out, channel.min_width_us)


@settings(max_examples=50, deadline=None)
@given(trains, channels, st.integers(0, 2**32 - 1))
def test_same_seed_same_output(train, channel, seed):
    """Randomness comes only from the Generator argument."""
    a = apply_channel(train, channel, np.random.default_rng(seed))
    b = apply_channel(train, channel, np.random.default_rng(seed))
    assert a == b


@given(trains)
def test_ideal_channel_is_identity(train):
    assert apply_channel(train, ChannelSpec(), np.random.default_rng(0)) == train
    assert ChannelSpec().is_ideal
    assert not get_preset("budget-superregen").is_ideal


def test_mark_bias_moves_falling_edges_only():
    t = PulseTrain(np.array([1, 0, 1, 0], np.uint8), np.array([500.0, 500, 1000, 700]))
    out = bias_marks(t.levels, t.durations_us, 8.0)
    assert out.durations_us.tolist() == [508.0, 492.0, 1008.0, 692.0]
    out = bias_marks(t.levels, t.durations_us, -20.0)
    assert out.durations_us.tolist() == [480.0, 520.0, 980.0, 720.0]
    # a train ending on a mark gets longer by the bias; nothing crosses when bias is huge
    t2 = PulseTrain(np.array([0, 1], np.uint8), np.array([100.0, 50.0]))
    assert bias_marks(t2.levels, t2.durations_us, 8.0).durations_us.tolist() == [100.0, 58.0]
    crushed = bias_marks(t.levels, t.durations_us, -5000.0, min_width_us=1.0)
    _valid(crushed, 1.0)


def test_clock_error_scales_every_duration():
    t = PulseTrain(np.array([1, 0, 1], np.uint8), np.array([500.0, 1000, 250]))
    out = scale_clock(t.levels, t.durations_us, 5.0)
    np.testing.assert_allclose(out.durations_us, [525.0, 1050.0, 262.5])


def test_drift_integrates_and_restarts_per_burst():
    """Scale (1 + d*u) integrated: a pulse [a, b] of burst time becomes (b-a) + d(b²-a²)/2."""
    d = 10.0 / 100 / 1e6  # 10 %/s in 1/µs
    t = np.array([0.0, 1e5, 2e5, 3e5])
    got = tx_time_map_us(t, 0.0, 10.0)
    np.testing.assert_allclose(got, t + d * t * t / 2)
    # second burst at 2e5: its own drift restarts from 0
    got = tx_time_map_us(t, 0.0, 10.0, np.array([0.0, 2e5]))
    first = 2e5 + d * 2e5**2 / 2
    np.testing.assert_allclose(got[2:], [first, first + 1e5 + d * 1e10 / 2])
    assert np.all(np.diff(got) > 0)


def test_dropout_removes_whole_marks():
    rng = np.random.default_rng(3)
    t = _alternating(2001, rng)
    out = drop_marks(t.levels, t.durations_us, 1.0, rng)
    assert out.levels.tolist() == [0] and out.total_us == pytest.approx(t.total_us)
    out = drop_marks(t.levels, t.durations_us, 0.0, rng)
    assert out == t
    out = drop_marks(t.levels, t.durations_us, 0.25, rng)
    n_marks = int(t.levels.sum())
    kept = int(out.levels.sum())
    lo, hi = stats.binom.ppf([0.0005, 0.9995], n_marks, 0.75)
    # kept marks are the survivors (a first mark lost leaves the train starting on space)
    assert lo <= kept <= hi
    assert out.total_us == pytest.approx(t.total_us)
    _valid(out)


def test_jitter_width_error_has_variance_two_sigma_squared():
    """Each internal pulse width = difference of two independent N(0, σ²) edge errors, so
    its error is N(0, 2σ²) (sum of independent normals, any statistics textbook); checked
    with a chi-square bound on the sample variance."""
    rng = np.random.default_rng(11)
    t = _alternating(20001, rng)
    sigma = 20.0
    out = jitter_edges(t.levels, t.durations_us, sigma, rng)
    assert len(out) == len(t)
    err = (out.durations_us - t.durations_us)[1:-1]
    n = err.size
    var = err.var(ddof=1)
    lo, hi = stats.chi2.ppf([0.0005, 0.9995], n - 1) / (n - 1) * 2 * sigma**2
    assert lo < var < hi
    # adjacent widths share an edge: correlation -1/2
    r = np.corrcoef(err[:-1], err[1:])[0, 1]
    assert abs(r + 0.5) < 0.03
    out_u = jitter_edges(t.levels, t.durations_us, sigma, rng, kind="uniform")
    edge_err = np.cumsum(out_u.durations_us - t.durations_us)[:-1]
    assert np.all(np.abs(edge_err) <= sigma + 1e-6)
    assert edge_err.std() == pytest.approx(sigma / np.sqrt(3), rel=0.03)


def test_quantisation_puts_edges_on_a_grid():
    rng = np.random.default_rng(5)
    t = PulseTrain(np.array([1, 0, 1, 0], np.uint8), np.array([101.0, 1.0, 203.7, 50.0]))
    out = quantise_edges(t.levels, t.durations_us, 2.5, rng)
    edges = np.cumsum(out.durations_us)[:-1]
    phase = edges[0] % 2.5
    np.testing.assert_allclose((edges - phase) / 2.5, np.round((edges - phase) / 2.5), atol=1e-6)
    _valid(out)
    # a pulse much shorter than the step vanishes (or survives as one step) and neighbours merge
    out = quantise_edges(t.levels, t.durations_us, 50.0, rng)
    _valid(out)
    assert np.all(out.durations_us[1:-1] % 50.0 < 1e-6)


def test_glitches_rate_and_width():
    rng = np.random.default_rng(9)
    space = PulseTrain(np.zeros(1, np.uint8), np.array([1e7]))  # 10 s of space
    out = add_glitches(space.levels, space.durations_us, 0.01, 20.0, rng)
    marks = out.durations_us[out.levels == 1]
    expected = 0.01 * 1e4  # per ms * ms
    lo, hi = stats.poisson.ppf([0.0005, 0.9995], expected)
    assert lo <= marks.size <= hi
    assert marks.min() >= 10.0 - 1e-9 and marks.max() <= 30.0 + 1e-9
    assert marks.mean() == pytest.approx(20.0, rel=0.1)


def test_idle_noise_is_exponential_and_respects_quiet_time():
    """Idle noise toggles form a Poisson process: pulse widths exponential with the given
    mean (Kolmogorov-Smirnov against scipy.stats.expon); the quiet time after a mark stays
    clean."""
    rng = np.random.default_rng(2)
    out = idle_noise_train(2e6, 100.0, rng)
    inner = out.durations_us[1:-1]
    assert stats.kstest(inner, stats.expon(scale=100.0).cdf).pvalue > 0.001
    t = PulseTrain(np.array([1, 0, 1], np.uint8), np.array([500.0, 50000.0, 500.0]))
    out = add_idle_noise(t.levels, t.durations_us, 10000.0, 100.0, 3000.0, rng)
    _valid(out)
    assert out.total_us == pytest.approx(t.total_us + 20000.0)
    starts = np.concatenate(([0.0], np.cumsum(out.durations_us)[:-1]))
    # the 500 µs marks are still there at 10000 and 60500, with 3000 µs quiet after the first
    first = np.flatnonzero(np.isclose(starts, 10000.0))
    assert first.size == 1 and out.levels[first[0]] == 1
    assert out.durations_us[first[0]] >= 500.0
    assert out.durations_us[first[0] + 1] >= 3000.0
    noise_marks = np.count_nonzero(out.levels == 1)
    assert noise_marks > 100


def test_time_map_tracks_frames_through_clock_error_and_lead_noise():
    rng = np.random.default_rng(4)
    t = PulseTrain(np.array([1, 0, 1, 0], np.uint8), np.array([500.0, 9e5, 500.0, 100.0]))
    ch = ChannelSpec(clock_error_pct=3.0, idle_noise_us=5000.0, idle_quiet_us=1e6)
    out = apply_channel(t, ch, rng)
    starts = np.concatenate(([0.0], np.cumsum(out.durations_us)[:-1]))
    want = channel_time_map_us(np.array([0.0, 900500.0]), ch)
    got = starts[out.levels == 1]
    assert np.any(np.isclose(got, want[0])) and np.any(np.isclose(got, want[1]))


def test_presets_and_validation():
    assert {"ideal", "budget-superregen"} <= set(PRESETS)
    p = get_preset("budget-superregen")
    assert p.mark_bias_us > 0 and p.quant_step_us == 2.5 and p.idle_noise_us > 0
    with pytest.raises(ValueRangeError, match="allowed"):
        get_preset("nope")
    with pytest.raises(ValueRangeError, match="jitter_us"):
        ChannelSpec(jitter_us=-1)
    with pytest.raises(ValueRangeError, match="dropout_prob"):
        ChannelSpec(dropout_prob=1.5)
    with pytest.raises(ValueRangeError, match="jitter_kind"):
        ChannelSpec(jitter_kind="pink")  # type: ignore[arg-type]
    with pytest.raises(ValueRangeError, match="unknown"):
        ChannelSpec().with_(jiter_us=3)
    assert ChannelSpec().with_(jitter_us=3.0).jitter_us == 3.0


def test_merge_keeps_total_time_without_clock_change():
    """Dropouts, glitches and jitter keep the train's end time (no drift creep)."""
    rng = np.random.default_rng(8)
    t = _alternating(5001, rng)
    ch = ChannelSpec(jitter_us=30.0, glitch_rate_per_ms=0.5, glitch_width_us=20.0,
                     dropout_prob=0.05)
    out = apply_channel(t, ch, rng)
    assert out.total_us == pytest.approx(t.total_us, abs=1.0)
    assert merge_runs(out.levels, out.durations_us) == out
