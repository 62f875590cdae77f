"""Tests of ookframe.stress.noise and the sync-hit expectation in stress.theory."""

from __future__ import annotations

import math

import pytest

from ookframe.intervals import poisson_ci
from ookframe.stress.noise import run_noise
from ookframe.stress.theory import bit_rate_bps, expected_false_frames_per_hour, sync_hit_prob
from tests.conftest import example_spec


def test_sync_hit_expectation_formula():
    """Random bits match an L-bit word with <= k errors with probability
    sum_{i<=k} C(L, i) / 2^L (binomial count of patterns; common practice, no source)."""
    spec, _ = example_spec("hive_scale.toml")  # 16-bit sync, 1 error allowed, 2 kbit/s
    assert sync_hit_prob(spec) == pytest.approx(17 / 65536)
    assert bit_rate_bps(spec) == pytest.approx(2000.0)
    hits, passing = expected_false_frames_per_hour(spec)
    assert hits == pytest.approx(2000 * 3600 * 17 / 65536)
    assert passing == pytest.approx(hits / 65536)


def test_poisson_interval_worked_values():
    """Garwood (1936) exact interval: 0 events -> (0, 3.689); 10 -> (4.795, 18.390),
    from memory of published tables."""
    assert poisson_ci(0)[1] == pytest.approx(3.689, abs=1e-3)
    low, high = poisson_ci(10)
    assert low == pytest.approx(4.795, abs=1e-3) and high == pytest.approx(18.390, abs=1e-3)
    assert math.isclose(poisson_ci(0)[1], -math.log(0.025), rel_tol=1e-9)


def test_noise_run_is_deterministic_and_reports_rates():
    spec, _ = example_spec("gate_sensor.toml")
    a = run_noise(spec, 0.02, mean_us=spec.unit_us, seed=5, chunk_s=18.0)
    b = run_noise(spec, 0.02, mean_us=spec.unit_us, seed=5, chunk_s=18.0, workers=2)
    assert a == b
    assert a.pulses > 0.02 * 3600e6 / spec.unit_us * 0.9
    assert a.passing <= a.sync_hits
    assert a.sync_hits_per_hour_ci95[0] <= a.sync_hits_per_hour <= a.sync_hits_per_hour_ci95[1]
    assert a.expected_sync_hits_per_hour > 0
