"""Receiver noise hugging the frame end (``ookframe.decode.tail``).

A superregenerative receiver outputs random pulses as soon as the carrier stops (common
practice, no source): every example and every registered line code (``LINE_CODES``)
must decode when such noise starts exactly at the frame's last falling edge.
"""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe import frame
from ookframe.decode.framer import (
    ANCHOR_CONTEXT_PULSES,
    ANCHOR_SHORT_NEIGHBOURS,
    _anchors,
    _holding,
    _holds,
    decode,
)
from ookframe.decode.tail import carrier_end_us, join_spans
from ookframe.linecodes import LINE_CODES
from ookframe.pulses import PulseTrain, merge_runs, pulse_edges_us
from ookframe.spec_io import load_spec, spec_from_dict

EXAMPLES = sorted((Path(__file__).parent.parent / "ookframe" / "examples").glob("*.toml"))


def _bed(line_code: dict) -> object:
    return spec_from_dict({
        "frame": {"name": "bed", "unit_us": 500.0, "repeats": 1, "gap_us": 20000.0},
        "line_code": line_code, "preamble": {"pattern": 0xAA, "count": 2},
        "sync": {"value": 0x2DD4, "length_bits": 16},
        "fields": [{"name": "a", "width_bits": 12}, {"name": "b", "width_bits": 12}],
        "check": {"model": "CRC-16/KERMIT"}})


SPECS = [pytest.param(load_spec(p), id=p.stem) for p in EXAMPLES] + [
    pytest.param(_bed({"name": n, **c.DEFAULTS}), id=n) for n, c in LINE_CODES.items()]


def _hugged(spec, values, rng, mean_units: float) -> tuple[PulseTrain, float]:
    """One copy cut at its last falling edge, receiver noise (alternating levels,
    exponential durations of ``mean_units`` units) right before and right after."""
    tx = frame.frame_train(spec, values)
    lv, du = tx.levels, tx.durations_us
    if lv[-1] == 0:
        lv, du = lv[:-1], du[:-1]
    lead_us = 0.0
    if lv[0] == 0:  # the frame starts with space chips: its start is before the carrier's
        lead_us = float(du[0])
        lv, du = lv[1:], du[1:]
    n = 400
    noise = rng.exponential(mean_units * spec.unit_us, n)
    before = (np.arange(n) % 2 == 1).astype(np.uint8)[::-1]  # ends with a space
    after = (np.arange(n) % 2).astype(np.uint8)  # starts with a space
    levels = np.concatenate((before, lv, after))
    dur = np.concatenate((noise, du, rng.exponential(mean_units * spec.unit_us, n)))
    t = merge_runs(levels, dur)
    return t, float(noise.sum()) - lead_us


@pytest.mark.parametrize("spec", SPECS)
def test_noise_from_the_last_falling_edge_on(spec):
    """Most copies with noise hugging both ends decode exactly (>= 19 of 20 for each
    spec, noise pulses 0.12 and 0.24 unit long on average)."""
    rng = np.random.default_rng(11)
    for mean in (0.12, 0.24):
        ok = 0
        for _ in range(20):
            values = frame.random_values(spec, rng)
            train, t_start = _hugged(spec, values, rng, mean)
            sent = frame.raw_values(spec, values)
            ok += any(f.crc_ok and f.raw == sent and abs(f.start_us - t_start)
                      < spec.unit_us for f in decode(spec, train))
        assert ok >= 19, (mean, ok)


def test_carrier_end_is_the_last_clean_falling_edge():
    """Marks of 1 unit on a 100 µs grid then noise off the grid: the cut is the last
    falling edge on the grid."""
    edges = np.array([0, 100, 200, 300, 400, 413, 447, 480, 530], float)
    levels = np.array([1, 0, 1, 0, 1, 0, 1, 0], np.uint8)
    assert carrier_end_us(edges, levels, 0.0, 100.0, 400.0, 1) == 300.0
    assert carrier_end_us(edges, levels, 0.0, 100.0, None, 1, 0, 10) == 300.0


def test_joined_spans_map_back_to_the_train():
    """Pieces [a, b) of a train laid end to end, each after and before 1000 µs of quiet:
    each starts exactly at a and ends at the first pulse boundary at or after b, and
    origin_us maps its times back; a span past the train's end is left out."""
    train = PulseTrain(np.array([1, 0, 1, 0, 1, 0], np.uint8),
                       np.array([100.0, 200.0, 300.0, 100.0, 50.0, 250.0]))
    spans = [(50.0, 300.0), (320.0, 330.0), (600.0, 650.0), (1200.0, 1300.0)]
    cuts = join_spans(train, spans, 1000.0)
    assert cuts.frame.tolist() == [0, 1, 2]
    assert cuts.train.levels.tolist() == [0, 1, 0, 0, 0, 1, 0, 0, 0, 0]
    assert cuts.train.durations_us.tolist() == [1000.0, 50.0, 200.0, 1000.0,
                                                1000.0, 280.0, 1000.0,
                                                1000.0, 100.0, 1000.0]
    assert cuts.start_us.tolist() == [1000.0, 3250.0, 5530.0]
    t = np.concatenate(([0.0], np.cumsum(cuts.train.durations_us)))
    for k, (a_us, b_us) in enumerate([(50.0, 300.0), (320.0, 600.0), (600.0, 700.0)]):
        assert cuts.start_us[k] + cuts.origin_us[k] == a_us
        assert np.isin(b_us - cuts.origin_us[k], t)


@settings(max_examples=100, deadline=None)
@given(d=st.lists(st.floats(0.01, 5e5, allow_nan=False), max_size=300))
def test_pulse_edges_are_the_concatenated_cumsum_bit_for_bit(d):
    """The boundaries written in place hold the same sums as the concatenation."""
    x = np.array(d, np.float64)
    want = np.concatenate(([0.0], np.cumsum(x)))
    assert pulse_edges_us(x).tobytes() == want.tobytes()


@settings(max_examples=200, deadline=None)
@given(times=st.lists(st.integers(0, 40), max_size=8),
       spans=st.lists(st.tuples(st.integers(-2, 42), st.integers(0, 10)), max_size=8))
def test_holding_is_holds_per_span(times, spans):
    """The low-filter and doubtful opinions' vector test equals the one-frame test."""
    t = np.sort(np.array(times, np.float64))
    start = np.array([s for s, _ in spans], np.float64)
    end = start + np.array([n for _, n in spans], np.float64)
    got = _holding(start, end, t).tolist()
    want = [_holds(SimpleNamespace(start_us=a, end_us=b), t)
            for a, b in zip(start.tolist(), end.tolist(), strict=True)]
    assert got == want


def _shrunk_before(d, short, t_short, min_us, low_us):
    """The anchor test as first written (one context matrix per stage)."""
    keep = np.arange(short.size)
    for n, spare in ((2, 1), (ANCHOR_CONTEXT_PULSES, ANCHOR_SHORT_NEIGHBOURS)):
        j = short[keep][:, None] + np.concatenate((np.arange(-n, 0), np.arange(1, n + 1)))
        ctx = np.where((j >= 0) & (j < d.size), d[np.clip(j, 0, d.size - 1)], np.inf)
        keep = keep[((ctx >= min_us).sum(axis=1) >= 2 * n - spare)
                    & ~(ctx < low_us).any(axis=1)]
    return t_short[keep]


@settings(max_examples=300, deadline=None)
@given(d=st.lists(st.sampled_from([0.1, 0.25, 0.3, 0.45, 0.5] + [1.0] * 12 + [2.0] * 8),
                  min_size=1, max_size=60))
def test_shrunk_pulses_equal_the_context_matrix_test(d):
    """Durations on the filter widths (0.5 and 0.25) and near them, short trains (every
    pulse near an end) and long ones: the same anchors as the matrix form."""
    x = np.array(d, np.float64)
    short = np.flatnonzero((x >= 0.25) & (x < 0.5))
    t_short = pulse_edges_us(x)[short]
    got = t_short[_anchors(x, short, 0.5, 0.25)]
    assert got.tolist() == _shrunk_before(x, short, t_short, 0.5, 0.25).tolist()
