"""The opinions' shared merge step (``ookframe.decode.merge``) against quadratic oracles.

The oracles below test every frame for every reading (the loops the opinions had before
they shared the merge step); spans come from a coarse grid so touching, equal and nested
spans (and zero-length ones) are common.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe.decode import merge
from ookframe.decode.merge import FrameMerge, Spans, Verdict, merge_overlapping


@dataclass(frozen=True)
class _Frame:
    start_us: float
    end_us: float
    ok: bool
    tag: int


#: far from zero too: the search's rounding margin must hold for large times
OFFSETS = st.sampled_from([0.0, 1e9 + 0.25, -37.5])


@st.composite
def _frames(draw, tag0: int = 0, max_size: int = 14) -> list[_Frame]:
    offset = draw(OFFSETS)
    rows = draw(st.lists(st.tuples(st.integers(0, 40), st.integers(0, 12), st.booleans()),
                         max_size=max_size))
    return [_Frame(offset + 0.5 * s, offset + 0.5 * (s + n), ok, tag0 + k)
            for k, (s, n, ok) in enumerate(rows)]


def _overlap(a: _Frame, b: _Frame) -> bool:
    return a.start_us < b.end_us and b.start_us < a.end_us


def _oracle(frames, readings, rule, *, added_block=True, sort=None):
    """Quadratic merge: every reading tested against every frame held."""
    slots = list(frames)
    gone: set[int] = set()
    for r in readings:
        hit = [i for i, f in enumerate(slots) if i not in gone
               and (added_block or i < len(frames)) and _overlap(f, r)]
        verdict = rule(r, [slots[i] for i in hit])
        if verdict is Verdict.JOIN:
            gone.update(hit)
            slots.append(r)
        elif verdict is Verdict.REPLACE:
            slots[hit[0]] = r
    out = [f for i, f in enumerate(slots) if i not in gone]
    if (len(slots) > len(frames)) if sort is None else sort:
        out = sorted(out, key=lambda f: f.start_us)
    return out


def _join_free(r, hit):
    """The doubtful opinion's rule: added where its check passes and it overlaps none."""
    return Verdict.JOIN if r.ok and not hit else Verdict.SKIP


def _low_filter_like(r, hit):
    """The low-filter opinion's shape: replaces failed frames, or one passing frame."""
    if all(not g.ok for g in hit):
        return Verdict.JOIN
    if len(hit) == 1 and (hit[0].tag + r.tag) % 2:
        return Verdict.REPLACE
    return Verdict.SKIP


def _scrambled(r, hit):
    """Any verdict, chosen from the reading and the frames it meets."""
    v = hash((r.tag, tuple(sorted(g.tag for g in hit)))) % 3
    if v == 2 and len(hit) == 1:
        return Verdict.REPLACE
    return Verdict.JOIN if v else Verdict.SKIP


RULES = [_join_free, _low_filter_like, _scrambled]


@settings(max_examples=300, deadline=None)
@given(frames=_frames(), readings=_frames(tag0=100), rule=st.sampled_from(RULES),
       added_block=st.booleans(), sort=st.sampled_from([None, True, False]))
def test_merge_overlapping_equals_the_quadratic_oracle(frames, readings, rule, added_block,
                                                       sort):
    got = merge_overlapping(frames, readings, rule, added_block=added_block, sort=sort)
    want = _oracle(frames, readings, rule, added_block=added_block, sort=sort)
    assert [f.tag for f in got] == [f.tag for f in want]


@settings(max_examples=300, deadline=None)
@given(frames=_frames(), readings=_frames(tag0=100), rule=st.sampled_from(RULES),
       added_block=st.booleans(), sort=st.sampled_from([None, True, False]),
       scans=st.sampled_from([0, 1, 3]), given_spans=st.booleans())
def test_merge_overlapping_equals_the_oracle_across_the_index_switch(
        frames, readings, rule, added_block, sort, scans, given_spans):
    """The scan of the frames' arrays for the first ``scans`` readings, the Spans index
    after (built from the frames then held), with the arrays given by the caller or not:
    the same result as the oracle."""
    spans = (np.array([f.start_us for f in frames], float),
             np.array([f.end_us for f in frames], float)) if given_spans else None
    before = merge.SCAN_QUERIES
    merge.SCAN_QUERIES = scans
    try:
        got = merge_overlapping(frames, readings, rule, added_block=added_block, sort=sort,
                                spans=spans)
    finally:
        merge.SCAN_QUERIES = before
    want = _oracle(frames, readings, rule, added_block=added_block, sort=sort)
    assert [f.tag for f in got] == [f.tag for f in want]


def test_given_spans_must_match_the_frames():
    frames = [_Frame(0.0, 1.0, True, 1)]
    with pytest.raises(ValueError, match="one start and one end per frame"):
        FrameMerge(frames, spans=(np.zeros(2), np.zeros(2)))


def _doubtful_before(frames, other):
    """The doubtful opinion's loop before the shared step (less its window test)."""
    extra = []
    for g in other:
        if not g.ok:
            continue
        if any(f.start_us < g.end_us and g.start_us < f.end_us for f in frames + extra):
            continue
        extra.append(g)
    return sorted(frames + extra, key=lambda f: f.start_us) if extra else frames


@settings(max_examples=300, deadline=None)
@given(frames=_frames(), other=_frames(tag0=100))
def test_doubtful_rule_equals_the_loop_it_replaced(frames, other):
    got = merge_overlapping(frames, other, _join_free)
    assert [f.tag for f in got] == [f.tag for f in _doubtful_before(frames, other)]


@settings(max_examples=300, deadline=None)
@given(data=st.data(), frames=_frames(max_size=20))
def test_spans_find_every_overlap_as_they_change(data, frames):
    """Adds, removals and queries in any order: the overlaps equal every pair tested."""
    spans = Spans((f.tag, f.start_us, f.end_us) for f in frames[:5])
    held = {f.tag: f for f in frames[:5]}
    for f in frames[5:]:
        if held and data.draw(st.booleans()):
            k = data.draw(st.sampled_from(sorted(held)))
            spans.remove(k, held.pop(k).start_us)
        else:
            spans.add(f.tag, f.start_us, f.end_us)
            held[f.tag] = f
        q = data.draw(_frames(max_size=1))
        for r in q:
            assert spans.overlapping(r.start_us, r.end_us) == sorted(
                k for k, g in held.items() if _overlap(g, r))
    assert len(spans) == len(held)


@settings(max_examples=300, deadline=None)
@given(starts=st.lists(st.integers(0, 30), min_size=1, max_size=15),
       t=st.integers(-4, 64), offset=OFFSETS)
def test_nearest_start_is_numpys_argmin(starts, t, offset):
    """Ties (equal starts, or equally far either side) go to the first in key order."""
    s = offset + 0.5 * np.array(starts, float)
    tq = offset + 0.25 * t
    got = Spans((k, v, v + 1.0) for k, v in enumerate(s.tolist())).nearest(tq)
    k = int(np.abs(s - tq).argmin())
    assert got == (abs(float(s[k]) - tq), k)


def test_nearest_of_no_spans_is_none():
    assert Spans().nearest(5.0) is None


def test_frame_merge_keeps_slots_and_sorts_only_when_added():
    a, b, c = _Frame(10.0, 20.0, False, 1), _Frame(0.0, 5.0, True, 2), _Frame(7.0, 8.0, True, 3)
    m = FrameMerge([a, b])
    m.replace(0, c)
    assert m.frames() == [c, b]  # replaced in place, nothing added: order kept
    m.add(_Frame(1.0, 2.0, True, 4))
    assert [f.tag for f in m.frames()] == [2, 4, 3]


def test_replace_needs_exactly_one_overlapped_frame():
    frames = [_Frame(0.0, 10.0, True, 1), _Frame(5.0, 15.0, True, 2)]
    with pytest.raises(ValueError, match="got 2"):
        merge_overlapping(frames, [_Frame(6.0, 7.0, True, 3)], lambda r, h: Verdict.REPLACE)
