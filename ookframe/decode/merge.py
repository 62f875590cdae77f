"""One merge step for the decoder's opinions: their readings into the frames found so far.

Every opinion (``framer._second_opinion``, ``_doubtful_opinion``, ``_tail_opinion``,
``_low_filter_opinion``) reads a stretch once more and merges what it read into the
frames: a reading takes the place of one frame (same slot), takes the place of every frame
it overlaps, or is added. :class:`FrameMerge` holds that state and builds the result
(slot order, sorted by start when a frame was added); :func:`merge_overlapping` is the
loop of the opinions that decide by overlap, each passing only its rule
(:class:`Verdict`). Overlaps and nearest starts are looked up in :class:`Spans` (starts
kept sorted, binary search), never by testing every frame.

Two spans overlap when each starts before the other ends (strictly: spans that only touch
do not overlap).
"""

from __future__ import annotations

import bisect
import enum
from collections.abc import Callable, Iterable
from typing import Generic, Protocol, TypeVar


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


class FrameMerge(Generic[F]):
    """The frames an opinion merges its readings into.

    Slots: the frames in their order, then the frames added; a slot is replaced in place
    or dropped. ``added_block``: frames added are found by ``overlapping`` (else only the
    original slots and their replacements are). The span index is built on the first
    ``overlapping`` call and kept up to date from then on.
    """

    def __init__(self, frames: Iterable[F], *, added_block: bool = True) -> None:
        self._slots: list[F | None] = list(frames)
        self._original = len(self._slots)
        self._added_block = added_block
        self._spans: Spans | None = None

    def frame(self, slot: int) -> F:
        """The frame in ``slot`` (not dropped)."""
        f = self._slots[slot]
        assert f is not None, "dropped slot"
        return f

    def _indexed(self, slot: int) -> bool:
        return self._added_block or slot < self._original

    def overlapping(self, start_us: float, end_us: float) -> list[int]:
        """Return the slots (ascending) of the frames held that overlap the span."""
        if self._spans is None:
            self._spans = Spans((k, f.start_us, f.end_us) for k, f in enumerate(self._slots)
                                if f is not None and self._indexed(k))
        return self._spans.overlapping(start_us, end_us)

    def replace(self, slot: int, frame: F) -> None:
        """Put ``frame`` in ``slot`` (not dropped) in place of its frame."""
        old = self.frame(slot)
        if self._spans is not None and self._indexed(slot):
            self._spans.remove(slot, old.start_us)
            self._spans.add(slot, frame.start_us, frame.end_us)
        self._slots[slot] = frame

    def drop(self, slots: Iterable[int]) -> None:
        """Take the frames in ``slots`` out."""
        for k in slots:
            old = self.frame(k)
            if self._spans is not None and self._indexed(k):
                self._spans.remove(k, old.start_us)
            self._slots[k] = None

    def add(self, frame: F) -> None:
        """Add ``frame`` after the last slot."""
        k = len(self._slots)
        self._slots.append(frame)
        if self._spans is not None and self._indexed(k):
            self._spans.add(k, frame.start_us, frame.end_us)

    @property
    def added(self) -> bool:
        """True when a frame was added."""
        return len(self._slots) > self._original

    def frames(self, *, sort: bool | None = None) -> list[F]:
        """Return the frames held in slot order, sorted by start (stable) when ``sort``
        (default: when a frame was added)."""
        out = [f for f in self._slots if f is not None]
        if self.added if sort is None else sort:
            out.sort(key=lambda f: f.start_us)
        return out


def merge_overlapping(frames: Iterable[F], readings: Iterable[F],
                      rule: Callable[[F, list[F]], Verdict], *, added_block: bool = True,
                      sort: bool | None = None) -> list[F]:
    """Return ``frames`` with ``readings`` merged in, one at a time in their order: ``rule``
    gets the reading and the frames it overlaps at that point (slot order) and says what
    happens (:class:`Verdict`; REPLACE only when it overlaps exactly one). ``added_block``
    and the result's order as for :class:`FrameMerge`."""
    m = FrameMerge(frames, added_block=added_block)
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
