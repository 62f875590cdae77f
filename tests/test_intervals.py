"""Tests of ookframe.intervals (Clopper-Pearson interval)."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.stats import binom

from ookframe.intervals import clopper_pearson


def test_zero_of_hundred_worked_value():
    """0 events in 100 trials: upper bound 1 - 0.025**(1/100) = 0.0362 (closed form for
    k = 0 of the interval of Clopper & Pearson 1934, Biometrika 26(4); the "rule of three"
    neighbourhood, 3.7/n for 95 % two-sided)."""
    low, high = clopper_pearson(0, 100)
    assert low == 0.0
    assert high == pytest.approx(0.0362, abs=5e-5)
    assert high == pytest.approx(1 - 0.025 ** (1 / 100), rel=1e-9)


def test_all_events_closed_form():
    """k = n: lower bound (alpha/2)**(1/n) (same closed form, mirrored)."""
    low, high = clopper_pearson(50, 50)
    assert high == 1.0
    assert low == pytest.approx(0.025 ** (1 / 50), rel=1e-9)


@given(st.integers(1, 2000), st.data())
def test_bounds_satisfy_the_binomial_tail_identities(n, data):
    """Defining property (Clopper & Pearson 1934): P(X >= k | p_low) = alpha/2 and
    P(X <= k | p_high) = alpha/2 for X ~ Binomial(n, p), checked with scipy.stats.binom."""
    k = data.draw(st.integers(0, n))
    low, high = clopper_pearson(k, n)
    assert 0.0 <= low <= k / n <= high <= 1.0
    if k > 0:
        assert binom.sf(k - 1, n, low) == pytest.approx(0.025, rel=1e-6, abs=1e-12)
    if k < n:
        assert binom.cdf(k, n, high) == pytest.approx(0.025, rel=1e-6, abs=1e-12)


def test_worked_value_ten_of_hundred():
    """10 of 100: exact 95 % interval (0.0490, 0.1762), from memory of published tables of
    the exact binomial interval; also implied by the tail identities above."""
    low, high = clopper_pearson(10, 100)
    assert low == pytest.approx(0.0490, abs=1e-4)
    assert high == pytest.approx(0.1762, abs=1e-4)


def test_rejects_bad_counts():
    with pytest.raises(ValueError):
        clopper_pearson(5, 3)
    with pytest.raises(ValueError):
        clopper_pearson(1, 10, confidence=1.5)
    assert clopper_pearson(0, 0) == (0.0, 1.0)
