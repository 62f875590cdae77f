"""Tests for ookframe.analysis.syncword (sync-word quality and search)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binom

from ookframe.analysis.syncword import (
    autocorrelation,
    false_match_probability,
    false_syncs_per_hour,
    search_sync_words,
    spec_sync_quality,
    sync_quality,
    word_bits,
)
from ookframe.errors import ValueRangeError
from tests.conftest import example_spec

#: Barker codes (R. H. Barker, "Group synchronizing of binary digital systems", 1953)
BARKER = {7: 0b1110010, 11: 0b11100010010, 13: 0b1111100110101}


def _equivalents(word: int, n: int) -> set[int]:
    """The word, its complement, its reversal and both."""
    rev = int(format(word, f"0{n}b")[::-1], 2)
    full = (1 << n) - 1
    return {word, word ^ full, rev, rev ^ full}


@pytest.mark.parametrize("n", sorted(BARKER))
def test_search_finds_barker_words(n):
    """Exhaustive search without a preamble: the words with peak sidelobe 1 at 7, 11 and
    13 bits are exactly the Barker code and its complement/reversal (Barker 1953; the
    uniqueness up to these symmetries: R. Turyn & J. Storer, "On binary sequences", Proc.
    AMS 1961, from memory)."""
    found = search_sync_words(n, top=8)
    best = [q for q in found if q.max_sidelobe == 1]
    assert {q.word for q in best} == _equivalents(BARKER[n], n)
    assert found[len(best)].max_sidelobe >= 2  # nothing else reaches 1


def test_barker13_scores_sidelobe_one():
    """Barker-13 0x1F35: aperiodic autocorrelation 0,1,0,1,... for shifts 1..12 (Barker
    1953; values from memory)."""
    q = sync_quality(0x1F35, 13)
    assert q.max_sidelobe == 1
    assert autocorrelation(0x1F35, 13).tolist() == [0, 1] * 6


def test_autocorrelation_matches_numpy_correlate():
    """C(k) against numpy.correlate (numpy 2.x, 'full' mode) of the +-1 sequence; the
    vectorised peak/energy agree with it."""
    rng = np.random.default_rng(5)
    for n in (2, 5, 16, 31, 64):
        for word in rng.integers(0, 1 << min(n, 63), 20, dtype=np.uint64):
            word = int(word)
            a = word_bits(word, n).astype(int) * 2 - 1
            want = np.correlate(a, a, mode="full")[n:]
            got = autocorrelation(word, n)
            assert got.tolist() == want.tolist()
            q = sync_quality(word, n)
            assert q.max_sidelobe == int(np.abs(want).max())
            assert q.sidelobe_energy == int((want**2).sum())


def _brute_min_distance(word: int, n: int, pre: list[int]) -> int:
    sync = word_bits(word, n).tolist()
    stream = pre + sync
    windows = [stream[s:s + n] for s in range(len(pre))]  # start inside the preamble
    periodic = pre * (2 * n // len(pre) + 2)
    windows += [periodic[s:s + n] for s in range(len(pre))]
    return min(sum(a != b for a, b in zip(w, sync, strict=True)) for w in windows)


def test_distance_to_preamble_matches_brute_force():
    """Min distance to straddling and repeated-preamble windows equals direct window
    comparison on the bit stream preamble + sync."""
    rng = np.random.default_rng(7)
    for pre in ([1, 0] * 8, [1, 1, 0, 0] * 3, [1, 0, 1], [0] * 4):
        for n in (4, 8, 13, 20):
            for word in rng.integers(0, 1 << n, 15):
                q = sync_quality(int(word), n, pre)
                assert q.min_distance_to_preamble == _brute_min_distance(int(word), n, pre)


def test_alternating_preamble_margins():
    """0xAAAA after an alternating preamble is at distance 0 (a useless sync word);
    its complement 0x5555 too (the preamble shifted by one bit); common practice."""
    pre = [1, 0] * 8
    assert sync_quality(0xAAAA, 16, pre).min_distance_to_preamble == 0
    assert sync_quality(0x5555, 16, pre).min_distance_to_preamble == 0
    assert sync_quality(0xAAAA, 16, pre, max_errors=1).margin_bits == -2


def test_false_sync_rate_against_binomial():
    """P(random window within e errors) = binomial CDF(e; n, 1/2) (scipy.stats.binom, SciPy
    1.x); rate per hour = P * bit rate * 3600; Monte Carlo agrees within 5 sigma."""
    for n, e in ((8, 0), (16, 1), (24, 2), (32, 3)):
        assert false_match_probability(n, e) == pytest.approx(binom.cdf(e, n, 0.5), rel=1e-12)
    assert false_syncs_per_hour(16, 1, 2000.0) == pytest.approx(17 / 65536 * 2000 * 3600)
    rng = np.random.default_rng(11)
    n, e, trials = 12, 2, 400_000
    bits = rng.integers(0, 2, (trials, n), dtype=np.uint8)
    sync = word_bits(0xB38, n)
    hits = int(((bits != sync).sum(axis=1) <= e).sum())
    p = false_match_probability(n, e)
    assert abs(hits - p * trials) < 5 * np.sqrt(trials * p * (1 - p))


def test_exhaustive_search_is_optimal():
    """For 10 bits after a 12-bit alternating preamble the search ranking equals a brute
    ranking of all 1024 words by (distance desc, peak asc, energy asc, word)."""
    pre = [1, 0] * 6
    keys = []
    for w in range(1 << 10):
        q = sync_quality(w, 10, pre)
        keys.append((-q.min_distance_to_preamble, q.max_sidelobe, q.sidelobe_energy, w))
    want = [k[3] for k in sorted(keys)[:10]]
    assert [q.word for q in search_sync_words(10, pre, top=10)] == want


def test_heuristic_search_beyond_exhaustive():
    """Above 24 bits: seeded hill climbing is reproducible, ranked, and every result is a
    local optimum (no single-bit flip improves the ranking key)."""
    pre = [1, 0] * 8

    def key(q):
        return (q.min_distance_to_preamble, -q.max_sidelobe, -q.sidelobe_energy)

    a = search_sync_words(28, pre, top=5, rng=np.random.default_rng(3), restarts=40)
    b = search_sync_words(28, pre, top=5, rng=np.random.default_rng(3), restarts=40)
    assert [q.word for q in a] == [q.word for q in b]
    assert [key(q) for q in a] == sorted((key(q) for q in a), reverse=True)
    for q in a[:2]:
        for i in range(28):
            assert key(sync_quality(q.word ^ (1 << i), 28, pre)) <= key(q)
    assert a[0].min_distance_to_preamble >= 10 and a[0].max_sidelobe <= 4


def test_spec_sync_quality_uses_spec_rate():
    """Spec wrapper: preamble, sync word and the spec bit rate (1e6 / (unit_us * units per
    bit)) go into the figures."""
    spec, _ = example_spec("hive_scale.toml")
    q = spec_sync_quality(spec)
    assert q.word == spec.sync.value and q.max_errors == spec.sync.max_errors
    from ookframe.linecodes import get_line_code

    rate = 1e6 / (spec.unit_us * get_line_code(spec.line_code).units_per_bit)
    assert q.false_syncs_per_hour == pytest.approx(
        false_syncs_per_hour(spec.sync.length_bits, spec.sync.max_errors, rate))


def test_bad_arguments():
    """Errors name the parameter and the allowed range."""
    with pytest.raises(ValueRangeError, match="2..64"):
        search_sync_words(65)
    with pytest.raises(ValueRangeError, match="does not fit"):
        sync_quality(0x1FF, 8)
    with pytest.raises(ValueRangeError, match="max_errors"):
        false_match_probability(8, 9)
