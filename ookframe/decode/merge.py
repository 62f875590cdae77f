"""One merge step for the decoder's opinions: their readings into the frames found so far.

Every opinion (``framer._second_opinion``, ``_doubtful_opinion``, ``_tail_opinion``,
``_low_filter_opinion``) reads a stretch once more and merges what it read into the
frames: a reading takes the place of one frame (same slot), takes the place of every frame
it overlaps, or is added. :class:`FrameMerge` holds that state and builds the result
(slot order, sorted by start when a frame was added); :func:`merge_overlapping` is the
loop of the opinions that decide by overlap, each passing only its rule
(:class:`Verdict`). Nearest starts are looked up in :class:`Spans` (starts kept sorted,
binary search); overlaps by one numpy pass over the frames' spans for the first few
readings (an opinion's cost then grows with its readings, not with a Python sort of every
frame), then in a :class:`Spans` index.

Two spans overlap when each starts before the other ends (strictly: spans that only touch
do not overlap).
"""

from __future__ import annotations

import bisect
import enum
from collections.abc import Callable, Iterable, Iterator
from typing import Generic, Protocol, TypeVar

import numpy as np


class _Timed(Protocol):
    @property
    def start_us(self) -> float: ...

    @property
    def end_us(self) -> float: ...


F = TypeVar("F", bound=_Timed)


class Spans:
    """Spans (start, end) under integer keys, kept sorted by start for binary search.

    ``overlapping`` searches the starts from the query's start less twice the longest
    span held (a span reaching past the query's start cannot start earlier; twice, and a
    relative margin, absorb float rounding) to the query's end, so it visits only the
    spans near the query when spans do not nest deeply.
    """

    def __init__(self, spans: Iterable[tuple[int, float, float]] = ()) -> None:
        rows = sorted((float(s), float(e), k) for k, s, e in spans)
        self._starts = [r[0] for r in rows]
        self._ends = [r[1] for r in rows]
        self._keys = [r[2] for r in rows]
        self._longest = max((e - s for s, e, _ in rows), default=0.0)
        self._longest = max(self._longest, 0.0)

    def __len__(self) -> int:
        return len(self._keys)

    def add(self, key: int, start_us: float, end_us: float) -> None:
        """Hold the span (``start_us``, ``end_us``) under ``key``."""
        start_us, end_us = float(start_us), float(end_us)
        i = bisect.bisect_right(self._starts, start_us)
        self._starts.insert(i, start_us)
        self._ends.insert(i, end_us)
        self._keys.insert(i, key)
        self._longest = max(self._longest, end_us - start_us)

    def remove(self, key: int, start_us: float) -> None:
        """Drop the span held under ``key`` (which starts at ``start_us``)."""
        i = bisect.bisect_left(self._starts, float(start_us))
        while self._keys[i] != key:
            i += 1
        del self._starts[i], self._ends[i], self._keys[i]

    def overlapping(self, start_us: float, end_us: float) -> list[int]:
        """Return the keys (ascending) of the spans that overlap (``start_us``, ``end_us``):
        they start before ``end_us`` and end after ``start_us``."""
        low = start_us - 2.0 * self._longest
        low -= (abs(low) + 1.0) * 2.0 ** -40
        lo = bisect.bisect_left(self._starts, low)
        hi = bisect.bisect_left(self._starts, end_us)
        ends, keys = self._ends, self._keys
        return sorted(keys[i] for i in range(lo, hi) if ends[i] > start_us)

    def nearest(self, t_us: float) -> tuple[float, int] | None:
        """Return (|start - ``t_us``|, key) of the span whose start lies nearest to
        ``t_us``, the smallest key among equally near ones (``numpy.argmin`` over the
        starts listed in key order); None when no span is held."""
        starts = self._starts
        if not starts:
            return None
        i = bisect.bisect_left(starts, t_us)
        # |start - t| (as float) only grows away from t on either side: the nearest lie
        # next to i, equally near ones in a run from there
        best = min(abs(starts[j] - t_us) for j in (i - 1, i) if 0 <= j < len(starts))
        keys = []
        j = i - 1
        while j >= 0 and abs(starts[j] - t_us) == best:
            keys.append(self._keys[j])
            j -= 1
        j = i
        while j < len(starts) and abs(starts[j] - t_us) == best:
            keys.append(self._keys[j])
            j += 1
        return best, min(keys)


class Verdict(enum.Enum):
    """What an opinion's rule makes of one reading (``merge_overlapping``)."""

    SKIP = "skip"  # the frames stay as they are
    JOIN = "join"  # the reading takes the place of every frame it overlaps (none: added)
    REPLACE = "replace"  # the reading takes the slot of the one frame it overlaps


#: queries a FrameMerge answers by scanning its arrays before it builds a :class:`Spans`
#: (a scan costs one pass of numpy over the frames; an opinion meets a handful of
#: readings, while the sorted index costs a Python sort of every frame up front)
SCAN_QUERIES = 16


class _Scan:
    """Spans in slot order as numpy arrays, answering overlaps by testing them all.

    ``starts`` / ``ends``: the spans of slots 0..n-1 (not written to); ``alive``: the
    slots they still hold; ``extra``: slot -> span of the slots replaced or added since.
    ``overlapping`` returns the same keys as :meth:`Spans.overlapping`, which finds
    exactly the spans with start < end and end > start (see there)."""

    def __init__(self, starts: np.ndarray, ends: np.ndarray, alive: np.ndarray) -> None:
        self.starts, self.ends, self.alive = starts, ends, alive
        self.extra: dict[int, tuple[float, float]] = {}

    def overlapping(self, start_us: float, end_us: float) -> list[int]:
        hit = np.flatnonzero((self.starts < end_us) & (self.ends > start_us)
                             & self.alive).tolist()
        if self.extra:
            hit += [k for k, (s, e) in self.extra.items() if s < end_us and e > start_us]
            hit.sort()
        return hit

    def set(self, slot: int, span: tuple[float, float] | None) -> None:
        """Hold ``span`` (None: nothing) in ``slot``."""
        if slot < self.alive.size:
            self.alive[slot] = False
        if span is None:
            self.extra.pop(slot, None)
        else:
            self.extra[slot] = span


class FrameMerge(Generic[F]):
    """The frames an opinion merges its readings into.

    Slots: the frames in their order, then the frames added; a slot is replaced in place
    or dropped. ``added_block``: frames added are found by ``overlapping`` (else only the
    original slots and their replacements are). ``spans``: the frames' starts and ends
    (numpy arrays in slot order, equal to their ``start_us`` / ``end_us``) when the caller
    has them. Overlaps are found by scanning those arrays (made on the first
    ``overlapping`` call when not given) for the first ``SCAN_QUERIES`` calls, by a
    :class:`Spans` index of the frames then held from then on; both are kept up to date.
    """

    def __init__(self, frames: Iterable[F], *, added_block: bool = True,
                 spans: tuple[np.ndarray, np.ndarray] | None = None) -> None:
        self._slots: list[F | None] = list(frames)
        self._original = len(self._slots)
        self._added_block = added_block
        self._spans: Spans | None = None
        self._scan: _Scan | None = None
        self._queries = 0
        self._changed = False
        self._starts0: np.ndarray | None = None  # the starts in slot order, nothing changed
        if spans is not None:
            self._starts0 = spans[0]
            starts, ends = spans
            if starts.shape != (self._original,) or ends.shape != (self._original,):
                raise ValueError("spans must hold one start and one end per frame")
            self._scan = _Scan(starts, ends, np.ones(self._original, bool))

    def frame(self, slot: int) -> F:
        """The frame in ``slot`` (not dropped)."""
        f = self._slots[slot]
        assert f is not None, "dropped slot"
        return f

    def _indexed(self, slot: int) -> bool:
        return self._added_block or slot < self._original

    def _held(self) -> Iterator[tuple[int, F]]:
        """The slots the index holds, with their frames."""
        return ((k, f) for k, f in enumerate(self._slots) if f is not None and self._indexed(k))

    def overlapping(self, start_us: float, end_us: float) -> list[int]:
        """Return the slots (ascending) of the frames held that overlap the span."""
        if self._spans is not None:
            return self._spans.overlapping(start_us, end_us)
        self._queries += 1
        if self._queries > SCAN_QUERIES:
            self._spans = Spans((k, f.start_us, f.end_us) for k, f in self._held())
            self._scan = None
            return self._spans.overlapping(start_us, end_us)
        if self._scan is None:
            alive = np.array([f is not None and self._indexed(k)
                              for k, f in enumerate(self._slots)], bool)
            starts = np.array([0.0 if f is None else f.start_us for f in self._slots],
                              np.float64)
            ends = np.array([0.0 if f is None else f.end_us for f in self._slots],
                            np.float64)
            self._scan = _Scan(starts, ends, alive)
            if not self._changed:
                self._starts0 = starts
        return self._scan.overlapping(start_us, end_us)

    def _set(self, slot: int, frame: F | None) -> None:
        """Put ``frame`` (None: drop) in ``slot`` and keep the index up to date."""
        old = self._slots[slot] if slot < len(self._slots) else None
        self._changed = True
        if self._indexed(slot):
            if self._spans is not None:
                if old is not None:
                    self._spans.remove(slot, old.start_us)
                if frame is not None:
                    self._spans.add(slot, frame.start_us, frame.end_us)
            if self._scan is not None:
                self._scan.set(slot, None if frame is None
                               else (float(frame.start_us), float(frame.end_us)))
        if slot == len(self._slots):
            self._slots.append(frame)
        else:
            self._slots[slot] = frame

    def replace(self, slot: int, frame: F) -> None:
        """Put ``frame`` in ``slot`` (not dropped) in place of its frame."""
        self.frame(slot)
        self._set(slot, frame)

    def drop(self, slots: Iterable[int]) -> None:
        """Take the frames in ``slots`` out."""
        for k in slots:
            self.frame(k)
            self._set(k, None)

    def add(self, frame: F) -> None:
        """Add ``frame`` after the last slot."""
        self._set(len(self._slots), frame)

    @property
    def added(self) -> bool:
        """True when a frame was added."""
        return len(self._slots) > self._original

    def frames(self, *, sort: bool | None = None) -> list[F]:
        """Return the frames held in slot order, sorted by start (stable) when ``sort``
        (default: when a frame was added)."""
        out = [f for f in self._slots if f is not None]
        if (self.added if sort is None else sort) and not self._in_order():
            out.sort(key=lambda f: f.start_us)
        return out

    def _in_order(self) -> bool:
        """True when nothing changed and the starts never decrease: a stable sort by start
        would keep the slots as they are."""
        starts = self._starts0
        return (not self._changed and starts is not None
                and bool((starts[1:] >= starts[:-1]).all()))


def merge_overlapping(frames: Iterable[F], readings: Iterable[F],
                      rule: Callable[[F, list[F]], Verdict], *, added_block: bool = True,
                      sort: bool | None = None,
                      spans: tuple[np.ndarray, np.ndarray] | None = None) -> list[F]:
    """Return ``frames`` with ``readings`` merged in, one at a time in their order: ``rule``
    gets the reading and the frames it overlaps at that point (slot order) and says what
    happens (:class:`Verdict`; REPLACE only when it overlaps exactly one). ``added_block``,
    ``spans`` and the result's order as for :class:`FrameMerge`."""
    m = FrameMerge(frames, added_block=added_block, spans=spans)
    for r in readings:
        hits = m.overlapping(r.start_us, r.end_us)
        verdict = rule(r, [m.frame(k) for k in hits])
        if verdict is Verdict.JOIN:
            m.drop(hits)
            m.add(r)
        elif verdict is Verdict.REPLACE:
            if len(hits) != 1:
                raise ValueError(f"REPLACE needs one overlapped frame, got {len(hits)}")
            m.replace(hits[0], r)
    return m.frames(sort=sort)
