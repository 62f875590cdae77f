"""Tests of ookframe.stress (runner, batch, theory): Monte Carlo against theory and the
determinism guarantees."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

from ookframe import frame as _f
from ookframe.channel import ChannelSpec, apply_channel, get_preset
from ookframe.decode import decode
from ookframe.intervals import clopper_pearson
from ookframe.plan import compile_plan
from ookframe.pulses import PulseTrain, chips_to_train, concat, merge_runs
from ookframe.spec_io import spec_from_dict
from ookframe.stress.batch import random_batch
from ookframe.stress.runner import chunk_plan, run_stress
from ookframe.stress.theory import width_misread_prob, widths_error_prob
from tests.conftest import example_spec


def manchester_spec(**frame) -> object:
    """A 16-byte-payload Manchester spec (CRC-16/KERMIT), one copy per transmission."""
    doc = {
        "frame": {"name": "probe16", "bit_rate_bps": 2000, "repeats": 1, "gap_us": 6000,
                  **frame},
        "line_code": {"name": "manchester"},
        "preamble": {"pattern": 0xAA, "pattern_bits": 8, "count": 2},
        "sync": {"value": 0x2DD4, "length_bits": 16},
        "fields": [{"name": "a", "width_bits": 64}, {"name": "b", "width_bits": 64}],
        "check": {"model": "CRC-16/KERMIT"},
    }
    return spec_from_dict(doc)


def test_batch_equals_encoded_transmissions(example):
    """The batch train is exactly frame.encode() of each transmission joined by gaps."""
    spec, _ = example
    gap = 7000.0
    b = random_batch(spec, 6, np.random.default_rng(5), gap_us=gap)
    values = [_f.values_from_payload(spec, bytes.fromhex(p)) for p in b.payload_hex]
    sent = [_f.encode(spec, v) for v in values]
    space = PulseTrain(np.zeros(1, np.uint8), np.array([gap]))
    joined = concat(sent, gap)
    want = merge_runs(np.concatenate((space.levels, joined.levels, space.levels)),
                      np.concatenate((space.durations_us, joined.durations_us,
                                      space.durations_us)))
    assert b.train.levels.tolist() == want.levels.tolist()
    np.testing.assert_allclose(b.train.durations_us, want.durations_us)
    np.testing.assert_allclose(b.ends_us - b.starts_us, [t.total_us for t in sent])
    assert b.starts_us[0] == gap


def test_no_impairment_means_no_errors(example):
    """Ideal channel: every transmission of every example decodes, PER exactly 0."""
    spec, _ = example
    r = run_stress(spec, ChannelSpec(), 120, seed=3, chunk_frames=60)
    assert (r.frames, r.ok, r.per) == (120, 120, 0.0)
    assert r.lost_sync == r.bad_check == r.false_accepts == r.stray_frames == 0
    assert r.copies_ok == 120 * spec.repeats
    assert r.per_ci95[0] == 0.0 and r.per_ci95[1] == pytest.approx(1 - 0.025 ** (1 / 120))


def test_same_seed_same_result_and_any_worker_count():
    """Chunks are seeded by SeedSequence.spawn: 1 worker, a process pool of 2 and a thread
    pool of 3 give identical results; another seed gives different ones."""
    spec = manchester_spec()
    ch = get_preset("budget-superregen").with_(dropout_prob=0.005)  # lost marks: some fail
    kw = dict(seed=11, chunk_frames=40)
    one = run_stress(spec, ch, 200, workers=1, **kw)
    again = run_stress(spec, ch, 200, workers=1, **kw)
    procs = run_stress(spec, ch, 200, workers=2, **kw)
    with ThreadPoolExecutor(3) as pool:
        threads = run_stress(spec, ch, 200, executor=pool, **kw)
    assert one == again == procs == threads
    assert 0 < one.ok < one.frames  # the channel really did something
    other = run_stress(spec, ch, 200, workers=1, seed=12, chunk_frames=40)
    assert other != one
    assert chunk_plan(200, 40) == [40] * 5 and chunk_plan(90, 40) == [40, 40, 10]


def _misread_frames(spec, n: int, sigma_us: float, seed: int) -> tuple[int, np.ndarray]:
    """Jitter-only channel + fixed-threshold classifier with known clock: returns (frames
    with any pulse misread, pulses per frame)."""
    rng = np.random.default_rng(seed)
    b = random_batch(spec, n, rng)
    rx = apply_channel(b.train, ChannelSpec(jitter_us=sigma_us), rng)
    assert len(rx) == len(b.train)  # no pulse vanished at this sigma
    unit = spec.unit_us
    sent = np.rint(b.train.durations_us / unit)
    # round to the nearest whole unit = thresholds at 0.5, 1.5, 2.5 units
    got = np.rint(rx.durations_us / unit)
    inside = sent <= 2  # the long spaces are the idle gaps between frames
    frame_of = np.searchsorted(b.starts_us, b.train.edges_us(), side="right") - 1
    bad = np.zeros(n, bool)
    np.logical_or.at(bad, frame_of[inside], (got != sent)[inside])
    per_frame = np.bincount(frame_of[inside], minlength=n)
    return int(bad.sum()), per_frame


def test_jitter_per_matches_gaussian_theory():
    """Monte Carlo vs theory. Manchester pulses are 1 or 2 units; a fixed-threshold
    classifier (known clock, thresholds at 0.5/1.5/2.5 units) misreads a pulse when its
    width error, the difference of two independent N(0, σ²) edge errors, i.e. N(0, 2σ²),
    exceeds half a unit: p = 2 Q(u / (2√2 σ)) (normal tail, scipy.stats.norm). Neighbouring
    widths share an edge, so the frame error probability is computed exactly as a Markov
    chain over edge errors (stress.theory.widths_error_prob); the simulated PER must lie
    in its 95 % Clopper-Pearson interval (Clopper & Pearson 1934). (Treating widths as
    independent, 1 - (1 - p)^n, overestimates PER here by about 0.02.)"""
    spec = manchester_spec()
    sigma = 29.0
    n = 3000
    errors, widths = _misread_frames(spec, n, sigma, seed=2024)
    lengths, counts = np.unique(widths, return_counts=True)
    expected = sum(
        c * widths_error_prob(int(w), sigma, spec.unit_us)
        for w, c in zip(lengths, counts, strict=True)
    ) / n
    low, high = clopper_pearson(errors, n)
    assert 0.2 < expected < 0.8
    assert low <= expected <= high, (errors / n, expected)
    # the single-width probability is the plain normal tail
    assert widths_error_prob(1, sigma, spec.unit_us) == pytest.approx(
        width_misread_prob(sigma, spec.unit_us), rel=1e-4)


def test_false_accepts_on_random_data_match_two_to_minus_n():
    """Random bits after a valid head pass an n-bit check with probability 2^-n (for a CRC
    every residue is equally likely over uniform data; common practice, no source). Frames
    of random fields+check bits are sent through the ideal channel and the reference
    decoder; the fraction passing must be consistent with 2^-8 (Clopper-Pearson 95 %)."""
    spec = spec_from_dict({
        "frame": {"name": "rnd8", "bit_rate_bps": 4000, "repeats": 1, "gap_us": 4000},
        "line_code": {"name": "manchester"},
        "preamble": {"pattern": 0xAA, "pattern_bits": 8, "count": 2},
        "sync": {"value": 0xD391, "length_bits": 16},
        "fields": [{"name": "x", "width_bits": 16}],
        "check": {"model": "CRC-8/SMBUS"},
    })
    n = 6000
    rng = np.random.default_rng(99)
    body = rng.integers(0, 2, (n, 16 + 8), dtype=np.uint8)
    head = np.broadcast_to(_f.head_bits(spec), (n, _f.head_bits(spec).size))
    lc = compile_plan(spec).line_code
    chips = lc.encode(np.hstack((head, body)))
    gap = chips_to_train(np.zeros(int(spec.gap_us / spec.unit_us), np.uint8), spec.unit_us)
    trains = [chips_to_train(c, spec.unit_us) for c in chips]
    train = concat([gap, *trains, gap], spec.gap_us)
    frames = decode(spec, train, include_bad=True)
    assert len(frames) == n
    passed = sum(f.crc_ok for f in frames)
    low, high = clopper_pearson(passed, n)
    assert low <= 2.0**-8 <= high, passed


FIXED = ["hive_scale.toml", "greenhouse_probe.toml", "gate_sensor.toml",
         "coldframe_vent.toml", "tank_level.toml"]


@pytest.mark.parametrize("name", FIXED)
@pytest.mark.parametrize("kind", ["clock+5", "clock-5", "jitter15"])
def test_decoder_tolerance_claims_hold(name, kind):
    """Decoder claims (common practice for cheap RC-clocked senders, no source): a clock
    error of ±5 % and edge jitter of ±15 % of a unit (uniform) never cost a frame."""
    spec, _ = example_spec(name)
    ch = {
        "clock+5": ChannelSpec(clock_error_pct=5.0),
        "clock-5": ChannelSpec(clock_error_pct=-5.0),
        "jitter15": ChannelSpec(jitter_us=0.15 * spec.unit_us, jitter_kind="uniform"),
    }[kind]
    r = run_stress(spec, ch, 150, seed=21, chunk_frames=75)
    assert r.ok == r.frames, r
    assert r.false_accepts == 0


@pytest.mark.parametrize("name", ["hive_scale.toml", "gate_sensor.toml", "tank_level.toml"])
def test_chunks_are_bounded_by_chips(name):
    """A chunk holds at most CHUNK_CHIPS chips of transmissions (most bits per copy x the
    line code's units per bit x copies), and never more than chunk_frames; the limit is
    what the run reports and the counts add up to the frames asked for."""
    from ookframe.stress.runner import CHUNK_CHIPS, chunk_limit

    spec, _ = example_spec(name)
    plan = compile_plan(spec)
    chips = spec.max_frame_bits * plan.line_code.units_per_bit * spec.repeats
    limit = chunk_limit(spec)
    assert limit * chips <= CHUNK_CHIPS < (limit + 1) * chips
    r = run_stress(spec, ChannelSpec(), limit + 3, seed=1)
    assert r.chunk_frames == min(500, limit) and r.frames == limit + 3 and r.ok == r.frames
    assert run_stress(spec, ChannelSpec(), 5, seed=1, chunk_frames=2).chunk_frames == 2
