"""The faster channel, batch join and frame matching give the same results as before.

Every reference below (``_ref_*``) is the previous implementation, kept verbatim from
commit 3ba4d04 (ookframe/channel/impairments.py, ookframe/stress/batch.py,
ookframe/stress/runner.py); the checks compare bit for bit (``np.array_equal`` of the
arrays, equal ``Counts``) and, where randomness is drawn, the Generator state after.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from ookframe.channel import PRESETS, ChannelSpec, apply_channel
from ookframe.channel import impairments as im
from ookframe.linecodes import LINE_CODES
from ookframe.pulses import PulseTrain
from ookframe.spec_io import load_spec, spec_from_dict
from ookframe.stress import batch as sb
from ookframe.stress.runner import Counts, match_frames

# --- references: the previous implementation (commit 3ba4d04) ----------------------------


def _ref_normalise(level0, t_us, end_us):
    if t_us.size > 1:
        same = t_us[1:] == t_us[:-1]
        if same.any():
            starts = np.flatnonzero(np.concatenate(([True], ~same)))
            counts = np.diff(np.append(starts, t_us.size))
            t_us = t_us[starts[(counts & 1) == 1]]
    if t_us.size and (t_us[0] <= 0.0 or t_us[-1] >= end_us):
        before = int(np.count_nonzero(t_us <= 0.0))
        t_us = t_us[(t_us > 0.0) & (t_us < end_us)]
        level0 = (level0 + before) & 1
    return level0, t_us, end_us


def _ref_insert_sorted(t_us, new_us):
    if new_us.size == 0:
        return t_us
    pos = np.searchsorted(t_us, new_us) + np.arange(new_us.size)
    out = np.empty(t_us.size + new_us.size)
    keep = np.ones(out.size, bool)
    keep[pos] = False
    out[pos] = new_us
    out[keep] = t_us
    return out


def _ref_min_width(level0, t, end_us, min_width_us):
    if t.size == 0:
        return level0, t, max(end_us, min_width_us)
    if t[0] >= min_width_us and (t.size == 1 or np.diff(t).min() >= min_width_us):
        return level0, t, max(end_us, float(t[-1]) + min_width_us)
    step = np.arange(1, t.size + 1) * min_width_us
    t = np.maximum.accumulate(np.maximum(t - step, 0.0)) + step
    return level0, t, max(end_us, float(t[-1]) + min_width_us)


def _ref_poisson_points(starts_us, lengths_us, mean_us, rng, *, even):
    cum = np.cumsum(lengths_us)
    total = float(cum[-1]) if cum.size else 0.0
    if total <= 0.0:
        return np.zeros(0)
    expect = total / mean_us
    pos = np.cumsum(rng.exponential(mean_us, int(expect + 6.0 * np.sqrt(expect) + 16.0)))
    while pos[-1] < total:
        more = rng.exponential(mean_us, max(16, int(expect / 8)))
        pos = np.concatenate((pos, pos[-1] + np.cumsum(more)))
    pos = pos[: np.searchsorted(pos, total)]
    region = np.searchsorted(cum, pos, side="right")
    offset = np.concatenate(([0.0], cum[:-1]))
    pts = starts_us[region] + (pos - offset[region])
    if even and pts.size:
        counts = np.bincount(region, minlength=lengths_us.size)
        odd = np.flatnonzero(counts & 1)
        if odd.size:
            pts = np.delete(pts, np.cumsum(counts)[odd] - 1)
    return pts


def _ref_idle_noise(level0, t_us, end_us, lead_us, mean_us, quiet_us, rng):
    t = t_us + lead_us
    head = [np.array([lead_us])] if level0 == 1 else []
    tail = [np.array([end_us + lead_us])] if (level0 + t.size) & 1 == 1 else []
    t = np.concatenate((*head, t, *tail))
    end = end_us + 2 * lead_us
    begin = np.concatenate(([0.0], t[1::2] + quiet_us))
    stop = np.append(t[0::2], end)
    length = stop - begin
    ok = length > 0
    noise = _ref_poisson_points(begin[ok], length[ok], mean_us, rng, even=True)
    return _ref_normalise(0, _ref_insert_sorted(t, noise), end)


def _ref_to_train(level0, t_us, end_us):
    if end_us <= 0:
        return np.zeros(0, np.uint8), np.zeros(0)
    levels = ((level0 + np.arange(t_us.size + 1)) & 1).astype(np.uint8)
    return levels, np.diff(np.concatenate(([0.0], t_us, [end_us])))


def _ref_join(spec, rows, gap):
    unit = float(spec.unit_us)
    r = spec.repeats
    pieces_lv = [np.zeros(1, np.uint8)]
    pieces_w = [np.array([gap])]
    rep_gap = np.array([spec.gap_us])
    end_gap = np.array([gap])
    zero = np.zeros(1, np.uint8)
    for c in rows:
        w = np.full(c.size, unit)
        for k in range(r):
            pieces_lv.append(c)
            pieces_w.append(w)
            pieces_lv.append(zero)
            pieces_w.append(rep_gap if k < r - 1 else end_gap)
    levels = np.concatenate(pieces_lv).astype(np.uint8)
    weights = np.concatenate(pieces_w)
    starts = np.flatnonzero(np.concatenate(([True], levels[1:] != levels[:-1])))
    return levels[starts], np.add.reduceat(weights, starts)


def _ref_match_frames(batch, decoded, time_map_us):
    n = batch.n
    got_any = np.zeros(n, bool)
    got_ok = np.zeros(n, bool)
    false_accepts = copies_ok = stray = stray_ok = 0
    for fr in decoded:
        i = int(np.searchsorted(time_map_us, fr.start_us, side="right")) - 1
        if not 0 <= i < n:
            stray += 1
            stray_ok += int(fr.crc_ok)
            continue
        got_any[i] = True
        if fr.crc_ok:
            if fr.payload_hex == batch.payload_hex[i]:
                got_ok[i] = True
                copies_ok += 1
            else:
                false_accepts += 1
    return Counts(
        frames=n, ok=int(got_ok.sum()), lost_sync=int((~got_any).sum()),
        bad_check=int((got_any & ~got_ok).sum()), false_accepts=false_accepts,
        copies_ok=copies_ok, decoded=len(decoded), stray_frames=stray, stray_accepts=stray_ok,
    )


# --- helpers --------------------------------------------------------------------------------

EXAMPLES = Path(__file__).resolve().parent.parent / "ookframe" / "examples"


def load_example(name: str):
    return load_spec(EXAMPLES / f"{name}.toml")



def _same(a: np.ndarray, b: np.ndarray) -> bool:
    return a.dtype == b.dtype and a.shape == b.shape and np.array_equal(a, b)


def _sorted_with_ties(rng: np.random.Generator, n: int, grid: float) -> np.ndarray:
    """Sorted times on a coarse grid, so runs of equal values (2, 3, 4 ...) occur."""
    return np.sort(np.round(rng.uniform(-5.0, 100.0, n) / grid) * grid)


# --- kernels ---------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", range(6))
def test_running_max_equals_accumulate(seed):
    """Reference: np.maximum.accumulate (what _min_width used before)."""
    rng = np.random.default_rng(seed)
    cases = [
        np.cumsum(rng.exponential(1.0, 5000)) - (rng.random(5000) < 0.01) * 30.0,  # few falls
        np.cumsum(rng.exponential(1.0, 5000)) - (rng.random(5000) < 0.3) * 3.0,  # many
        np.concatenate(([100.0], np.arange(50.0), np.arange(60.0, 3000.0))),  # one long chain
        rng.normal(size=300),
        np.zeros(1),
        np.array([2.0, 1.0]),
    ]
    for x in cases:
        assert _same(im._running_max_inplace(x.copy()), np.maximum.accumulate(x))


@pytest.mark.parametrize("seed", range(8))
def test_normalise_matches_reference(seed):
    """Reference: _normalise at commit 3ba4d04."""
    rng = np.random.default_rng(seed)
    for grid in (0.5, 2.0, 7.0):
        t = _sorted_with_ties(rng, int(rng.integers(0, 400)), grid)
        for level0 in (0, 1):
            got = im._normalise(level0, t, 90.0)
            want = _ref_normalise(level0, t, 90.0)
            assert got.level0 == want[0] and _same(got.t_us, want[1])


@pytest.mark.parametrize("seed", range(8))
def test_min_width_matches_reference(seed):
    """Reference: _min_width at commit 3ba4d04 (fast and slow branch)."""
    rng = np.random.default_rng(seed)
    t = np.cumsum(rng.exponential(5.0, 2000)) + rng.normal(0.0, 2.0, 2000)
    for w in (0.01, 0.5, 3.0):
        for ts in (t, np.sort(t), np.sort(t) + 10.0, np.sort(t) - 40.0, t - 40.0):
            want = _ref_min_width(1, ts, 2e4, w)
            for own in (False, True):
                got = im._min_width(im.Edges(1, ts.copy(), 2e4), w, own=own)
                assert _same(got.t_us, want[1]) and got.end_us == want[2]


@pytest.mark.parametrize("seed", range(6))
def test_cumsum_us_equals_cumsum(seed):
    """Reference: np.cumsum (float64), bit for bit: binary-fraction multiples (summed as
    integers), other values, zeros, -0.0, negatives, non-finite values, huge and tiny
    totals, short inputs."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1000, 30000))
    whole = rng.integers(1, 40, n) * rng.choice([250.0, 350.0, 312.5, 0.375, 2.0**-40])
    whole[rng.random(n) < 0.1] = rng.choice([9000.0, 5000.0, 123.25])
    cases = [whole, whole[:50], whole * (1e6 / 2400) / 250.0, whole + 1e-9,
             np.concatenate((whole, [0.0])), np.concatenate(([-0.0], whole)),
             np.concatenate((whole, [-350.0])), whole * 2.0**40, whole * 2.0**-60,
             np.concatenate((whole, [np.inf])), np.concatenate((whole, [np.nan])),
             rng.exponential(100.0, n)]
    for x in cases:
        got = im.cumsum_us(x)
        want = np.cumsum(x)
        assert got.dtype == want.dtype and _same(got.view(np.int64), want.view(np.int64))


@pytest.mark.parametrize("seed", range(5))
@pytest.mark.parametrize("even", [True, False])
def test_poisson_points_match_reference(seed, even):
    """Reference: _poisson_points at commit 3ba4d04 (same points, same draws consumed)."""
    g = np.random.default_rng(seed + 100)
    lengths = g.exponential(300.0, 40) * (g.random(40) < 0.8)
    lengths = lengths[lengths > 0]
    starts = np.cumsum(lengths + g.exponential(50.0, lengths.size)) - lengths
    for mean in (0.7, 13.0, 900.0):
        a, b = np.random.default_rng(seed), np.random.default_rng(seed)
        got, counts = im._poisson_points_counted(starts, lengths, mean, a, even=even)
        assert _same(got, _ref_poisson_points(starts, lengths, mean, b, even=even))
        assert counts.sum() == got.size and a.random() == b.random()


@pytest.mark.parametrize("seed", range(5))
def test_idle_noise_matches_reference(seed):
    """Reference: _k_idle_noise (with _insert_sorted's searchsorted) at commit 3ba4d04."""
    g = np.random.default_rng(seed)
    for quiet in (0.0, 40.0, 3000.0):
        for level0 in (0, 1):
            t = np.cumsum(g.choice([1.0, 37.3, 500.0, 9000.0], 301))
            end = float(t[-1]) + 3.0
            a, b = np.random.default_rng(seed), np.random.default_rng(seed)
            got = im._k_idle_noise(im.Edges(level0, t[:-1], end), 700.0, 60.0, quiet, a)
            want = _ref_idle_noise(level0, t[:-1], end, 700.0, 60.0, quiet, b)
            assert got.level0 == want[0] and _same(got.t_us, want[1])
            assert got.end_us == want[2] and a.random() == b.random()


@pytest.mark.parametrize("seed", range(12))
def test_space_positions_merge_like_searchsorted(seed):
    """Reference: _insert_sorted at commit 3ba4d04, also for points pushed off their space
    (onto or past its closing toggle, onto its opening one)."""
    g = np.random.default_rng(seed)
    t = np.cumsum(g.exponential(10.0, 40))  # 40 toggles: spaces 0..20, space s ends at 2s
    spaces = np.sort(g.choice(21, 8, replace=False))
    new, counts = [], []
    for sp in spaces:
        lo = t[2 * sp - 1] if sp else 0.0
        hi = t[2 * sp] if sp < 20 else t[-1] + 10.0
        pts = np.sort(g.uniform(lo, hi, int(g.integers(0, 5))))
        extra = [x for x in (lo, hi, np.nextafter(hi, np.inf)) if g.random() < 0.4]
        pts = np.sort(np.concatenate((pts, extra)))
        new.append(pts)
        counts.append(pts.size)
    new_us = np.concatenate(new)
    before = im._space_positions(t, new_us, 2 * spaces, np.array(counts))
    want = _ref_insert_sorted(t, new_us)
    assert _same(im._insert_at(t, new_us, before), want)
    assert _same(im._insert_in_spaces(t, new_us, 2 * spaces, np.array(counts)), want)
    inside = [p[(p > (t[2 * sp - 1] if sp else -1.0)) & (p < (t[2 * sp] if sp < 20 else np.inf))]
              for p, sp in zip(new, spaces, strict=True)]  # the block path (nothing off)
    pts = np.concatenate(inside)
    got = im._insert_in_spaces(t, pts, 2 * spaces, np.array([p.size for p in inside]))
    assert _same(got, _ref_insert_sorted(t, pts))
    empty = np.zeros(0)  # no toggles: one space
    one = np.sort(g.uniform(0.0, 5.0, 3))
    assert _same(im._insert_in_spaces(empty, one, np.zeros(1, np.int64), np.array([3])), one)


@pytest.mark.parametrize("seed", range(5))
def test_jitter_and_quantise_match_reference(seed):
    """Reference: _k_jitter (rng.normal / rng.uniform) and _k_quantise at commit 3ba4d04."""
    t = np.cumsum(np.random.default_rng(seed).exponential(20.0, 3000))
    e = im.Edges(0, t[:-1], float(t[-1]))
    for kind in ("gauss", "uniform"):
        a, b = np.random.default_rng(seed), np.random.default_rng(seed)
        got = im._k_jitter(e, 6.0, kind, 0.5, a)
        err = b.uniform(-6.0, 6.0, t.size - 1) if kind == "uniform" else b.normal(0.0, 6.0, t.size - 1)
        want = _ref_min_width(0, e.t_us + err, e.end_us, 0.5)
        assert _same(got.t_us, want[1]) and a.random() == b.random()
    a, b = np.random.default_rng(seed), np.random.default_rng(seed)
    got = im._k_quantise(e, 2.5, a)
    phase = b.random() * 2.5
    q = phase + np.ceil((e.t_us - phase) / 2.5) * 2.5
    end = max(phase + np.ceil((e.end_us - phase) / 2.5) * 2.5, e.end_us)
    want = _ref_normalise(0, q, end)
    assert got.level0 == want[0] and _same(got.t_us, want[1]) and got.end_us == want[2]


@pytest.mark.parametrize("n", [0, 1, 2, 7])
def test_to_train_matches_reference(n):
    """Reference: Edges.pulse_levels / to_train at commit 3ba4d04."""
    t = np.cumsum(np.full(n, 1.5))
    for level0 in (0, 1):
        e = im.Edges(level0, t, float(n) * 1.5 + 2.0)
        got = e.to_train()
        lv, du = _ref_to_train(level0, t, e.end_us)
        assert _same(got.levels, lv) and _same(got.durations_us, du)


@pytest.mark.parametrize("name", sorted(PRESETS))
def test_presets_keep_their_input_untouched(name):
    """apply_channel works on copies (the input train's arrays stay as they were)."""
    train = sb.random_batch(load_example("hive_scale"), 5, np.random.default_rng(0)).train
    before = (train.levels.copy(), train.durations_us.copy())
    apply_channel(train, PRESETS[name], np.random.default_rng(1))
    assert _same(train.levels, before[0]) and _same(train.durations_us, before[1])
    apply_channel(train, ChannelSpec(mark_bias_us=3.0), np.random.default_rng(1))
    assert _same(train.durations_us, before[1])


# --- batch join --------------------------------------------------------------------------------


@pytest.mark.parametrize("example", ["hive_scale", "coldframe_vent", "gate_sensor",
                                     "greenhouse_probe", "tank_level"])
@pytest.mark.parametrize("gap_us", [None, 0.0, 123.5, 1000.1])
def test_join_matches_reference(example, gap_us):
    """Reference: _join at commit 3ba4d04 (exact counting path and reduceat path)."""
    spec = load_example(example)
    for unit in (spec.unit_us, 125.0):
        s = dataclasses.replace(spec, unit_us=unit)
        b = sb.random_batch(s, 9, np.random.default_rng(3), gap_us=gap_us)
        gap = float(s.gap_us if gap_us is None else gap_us)
        rows = list(sb.random_chips(s, 9, np.random.default_rng(3))[0])
        lv, du = _ref_join(s, rows, gap)
        assert _same(b.train.levels, lv) and _same(b.train.durations_us, du)
        got = sb.join_chips(s, rows, b.payload_hex, gap)  # list input as well as 2-D
        assert _same(got.train.levels, lv) and _same(got.train.durations_us, du)


@pytest.mark.parametrize("code", [{"name": n, **cls.DEFAULTS} for n, cls in LINE_CODES.items()]
                         + [{"name": "nrz", "stuff_after": 3}], ids=lambda d: d["name"])
@pytest.mark.parametrize("repeats", [1, 3])
def test_random_batch_equals_join_of_its_rows(code, repeats):
    """random_batch (rows kept laid end to end) gives the train of join_chips over the
    rows of random_chips, and the same draws, for every line code with a bytes field."""
    spec = spec_from_dict({
        "frame": {"name": "bed", "unit_us": 1e6 / 2400, "repeats": repeats, "gap_us": 900.0},
        "line_code": code, "preamble": {"pattern": 0xAA, "count": 1},
        "sync": {"value": 0x2D, "length_bits": 8},
        "fields": [{"name": "n", "width_bits": 4, "role": "length"},
                   {"name": "note", "kind": "bytes", "max_len_bytes": 6},
                   {"name": "id", "width_bits": 4}],
        "check": {"model": "CRC-16/KERMIT", "covers": ["fields"]}})
    for n in (0, 1, 13):
        g1, g2 = np.random.default_rng(n), np.random.default_rng(n)
        b = sb.random_batch(spec, n, g1, gap_us=333.0)
        rows, payload = sb.random_chips(spec, n, g2)
        want = sb.join_chips(spec, rows, payload, 333.0)
        assert _same(b.train.levels, want.train.levels)
        assert _same(b.train.durations_us, want.train.durations_us)
        assert _same(b.starts_us, want.starts_us) and _same(b.ends_us, want.ends_us)
        assert b.payload_hex == want.payload_hex and g1.random() == g2.random()


def test_join_all_zero_rows_and_empty_batch():
    """Reference: _join at commit 3ba4d04 (a run holding several gaps; no frames)."""
    spec = load_example("hive_scale")
    for unit in (250.0, 1e6 / 2400):
        s = dataclasses.replace(spec, unit_us=unit)
        rows = [np.zeros(5, np.uint8), np.array([1, 0, 0], np.uint8), np.zeros(2, np.uint8)]
        for chips in (rows, np.zeros((4, 6), np.uint8), np.zeros((0, 6), np.uint8), []):
            as_list = list(chips)
            lv, du = _ref_join(s, as_list, 77.0)
            got = sb.join_chips(s, chips, ("",) * len(as_list), 77.0)
            assert _same(got.train.levels, lv) and _same(got.train.durations_us, du)


# --- matching ----------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", range(10))
def test_match_frames_matches_reference(seed):
    """Reference: the per-frame loop of match_frames at commit 3ba4d04."""
    g = np.random.default_rng(seed)
    batch = sb.random_batch(load_example("hive_scale"), int(g.integers(0, 12)), g)
    bounds = np.append(batch.starts_us - batch.gap_us / 2, batch.ends_us[-1] + batch.gap_us / 2
                       if batch.n else batch.gap_us)
    frames = []
    for _ in range(int(g.integers(0, 40))):
        i = int(g.integers(0, max(batch.n, 1)))
        start = float(g.uniform(-5e3, bounds[-1] + 5e3)) if g.random() < 0.5 else (
            float(bounds[min(i, bounds.size - 1)]))
        if g.random() < 0.05:
            start = float("nan")
        right = batch.payload_hex[i] if batch.n and g.random() < 0.7 else "00ff"
        frames.append(SimpleNamespace(start_us=start, crc_ok=bool(g.random() < 0.8),
                                      payload_hex=right))
    want = _ref_match_frames(batch, frames, bounds)
    assert match_frames(batch, frames, bounds) == want
    assert match_frames(batch, tuple(frames), bounds) == want
    assert match_frames(batch, iter(frames), bounds) == want


def test_match_frames_empty():
    """Reference: the per-frame loop of match_frames at commit 3ba4d04 (nothing decoded)."""
    batch = sb.random_batch(load_example("hive_scale"), 3, np.random.default_rng(0))
    bounds = np.append(batch.starts_us, batch.ends_us[-1])
    assert match_frames(batch, [], bounds) == _ref_match_frames(batch, [], bounds)


def test_apply_channel_preset_on_example_trains_is_valid_edge_case():
    """A train with a single pulse of each level through every preset (no crash, and
    the same output twice for one seed)."""
    for train in (PulseTrain(np.array([1], np.uint8), np.array([100.0])),
                  PulseTrain(np.array([0], np.uint8), np.array([50.0]))):
        for ch in PRESETS.values():
            a = apply_channel(train, ch, np.random.default_rng(4))
            assert a == apply_channel(train, ch, np.random.default_rng(4))


@pytest.mark.parametrize("seed", range(20))
def test_reduced_runs_equal_reduceat(seed):
    """Reference: np.add.reduceat of the slot weights (what the join summed before the
    lookup of chip-only runs); long runs past UNIT_SUMS_MAX and runs of several gaps too."""
    rng = np.random.default_rng(seed)
    n_slots = int(rng.integers(1, 4000))
    unit = float(rng.choice([1e6 / 4800, 1e6 / 1200, 0.1, 1 / 3, rng.random() * 1000]))
    gap_slot = np.unique(np.concatenate(([0], rng.integers(0, n_slots, 1 + n_slots // 20))))
    gap_us = rng.choice([5000.0, 77.7, 1e-3, rng.random() * 1e4], gap_slot.size)
    k = int(rng.integers(1, n_slots + 1)) // (50 if seed % 3 == 0 else 1) + 1
    starts = np.unique(np.concatenate(([0], rng.integers(0, n_slots, k))))
    weights = np.full(n_slots, unit)
    weights[gap_slot] = gap_us
    got = sb._reduced_runs_us(n_slots, starts, unit, gap_slot, gap_us)
    assert _same(got, np.add.reduceat(weights, starts))
    if seed % 3 == 0:
        assert np.diff(starts, append=n_slots).max() > sb.UNIT_SUMS_MAX


def test_steps_table_grows_to_the_same_values():
    """Reference: np.arange(1, n + 1) * width (what _min_width stepped by at 3ba4d04),
    whatever table sizes were asked for before (the table grows in powers of two)."""
    for w in (0.5, 0.3, 1e-3):
        for n in (1, 5000, 3000, 1025, 70_000, 131_072, 131_073, 10):
            got = im._steps_us(n, w)
            assert _same(got, np.arange(1, n + 1) * w) and not got.flags.writeable


@pytest.mark.parametrize("example", ["hive_scale", "coldframe_vent", "gate_sensor",
                                     "greenhouse_probe", "tank_level"])
@pytest.mark.parametrize("gap_us", [None, 0.0, 123.5, 1000.1])
def test_batch_pulse_ends_are_the_running_sum(example, gap_us):
    """Reference: np.cumsum of the batch train's durations (what apply_channel summed at
    685f57c), bit for bit; given whenever the join counted in whole quanta (a unit and
    gaps that are binary fractions), else None."""
    spec = load_example(example)
    for unit in (spec.unit_us, 125.0, 1e6 / 2400):
        s = dataclasses.replace(spec, unit_us=unit)
        for n in (1, 9):
            b = sb.random_batch(s, n, np.random.default_rng(n), gap_us=gap_us)
            gap = float(s.gap_us if gap_us is None else gap_us)
            exact = sb._exact_scale([unit, gap, float(s.gap_us)], 1e9) is not None
            if exact:
                assert _same(b.pulse_ends_us, np.cumsum(b.train.durations_us))
            else:
                assert b.pulse_ends_us is None


@pytest.mark.parametrize("example", ["hive_scale", "gate_sensor", "tank_level"])
def test_apply_channel_with_pulse_ends_as_without(example):
    """Reference: apply_channel without pulse_ends_us (the running sum taken inside, as at
    685f57c): the same output train, the same draws consumed, the inputs untouched; ends
    that do not fit the train are ignored."""
    custom = ChannelSpec(jitter_us=3.0, jitter_kind="uniform", idle_noise_us=5000.0,
                         glitch_rate_per_ms=0.05, glitch_width_us=20.0, dropout_prob=0.01,
                         drift_pct_per_s=0.5, mark_bias_us=-3.0)
    spec = dataclasses.replace(load_example(example), unit_us=250.0)
    b = sb.random_batch(spec, 7, np.random.default_rng(2))
    ends = b.pulse_ends_us
    assert ends is not None
    kept = ends.copy()
    for ch in [*PRESETS.values(), custom]:
        for given in (ends, ends[:-1], np.cumsum(np.ones(len(b.train)))[:-1]):
            a, g = np.random.default_rng(5), np.random.default_rng(5)
            want = apply_channel(b.train, ch, a, burst_starts_us=b.starts_us)
            got = apply_channel(b.train, ch, g, burst_starts_us=b.starts_us, pulse_ends_us=given)
            assert got == want and a.random() == g.random()
    assert _same(ends, kept) and _same(ends, np.cumsum(b.train.durations_us))
