"""Sync-word quality and search.

Quality of a sync word of n bits (MSB first, as sent):

* aperiodic autocorrelation sidelobes with bits mapped to +-1:
  C(k) = sum_{i<n-k} a_i a_{i+k} for shifts k = 1..n-1, ``max_sidelobe`` = max |C(k)|;
* ``min_distance_to_preamble``: the smallest Hamming distance between the sync word and
  every n-bit window that starts inside the preamble, i.e. windows straddling preamble
  and sync, plus windows of the preamble repeated without end (a receiver that starts
  listening late in a long preamble); windows after the sync (payload) are not included;
* expected false syncs per hour on random noise: at every bit time a random n-bit window
  matches within ``max_errors`` with probability sum_{k<=e} C(n, k) / 2^n.

Search: exhaustive over every n-bit word up to :data:`EXHAUSTIVE_MAX_BITS` bits
(vectorised, in chunks), random-restart bit-flip hill climbing beyond. Ranking: larger
min distance first, then smaller peak sidelobe, then smaller sidelobe energy
sum C(k)^2, then the smaller word.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import ValueRangeError
from ..plan import FramePlan, as_plan, spec_of
from ..spec.model import FrameSpec

EXHAUSTIVE_MAX_BITS = 24
MAX_BITS = 64
_CHUNK = 1 << 20


def _check_bits(n_bits: int) -> None:
    if not 2 <= n_bits <= MAX_BITS:
        raise ValueRangeError(f"sync word length {n_bits} bits out of range; allowed 2..{MAX_BITS}")


def _pack(bits: np.ndarray) -> np.ndarray:
    """Rows of 0/1 (MSB first) -> uint64 values."""
    out = np.zeros(bits.shape[0], np.uint64)
    for j in range(bits.shape[1]):
        out = (out << np.uint64(1)) | bits[:, j].astype(np.uint64)
    return out


def word_bits(word: int, n_bits: int) -> np.ndarray:
    """Return the bits (uint8, MSB first) of an n-bit word."""
    return np.array([(word >> (n_bits - 1 - i)) & 1 for i in range(n_bits)], np.uint8)


def preamble_windows(preamble_bits: Sequence[int], n_bits: int) -> np.ndarray:
    """Return the distinct n-bit windows (uint64, MSB first) of the preamble repeated
    without end, one per start phase (windows running into the sync word: see
    ``_straddle_parts``)."""
    p = np.asarray(preamble_bits, np.uint8)
    if p.size == 0:
        return np.zeros(0, np.uint64)
    reps = -(-(n_bits + p.size) // p.size)
    long = np.tile(p, reps)
    idx = np.arange(p.size)[:, None] + np.arange(n_bits)[None, :]
    return np.unique(_pack(long[idx]))


def _straddle_parts(preamble_bits: Sequence[int], n_bits: int) -> list[tuple[int, int, int]]:
    """(preamble tail value, tail length t, sync-head length n-t) of every window that
    starts inside the preamble and ends inside the sync word."""
    p = [int(b) & 1 for b in preamble_bits]
    parts = []
    for start in range(max(0, len(p) - n_bits + 1), len(p)):
        tail = p[start:]
        t = len(tail)
        if t >= n_bits:
            continue
        v = 0
        for b in tail:
            v = (v << 1) | b
        parts.append((v, t, n_bits - t))
    return parts


def _distances(words: np.ndarray, n_bits: int, preamble_bits: Sequence[int]) -> np.ndarray:
    """Min Hamming distance of each word to the preamble windows and straddling windows."""
    dt = words.dtype.type
    best = np.full(words.shape, n_bits, np.uint8)
    for v in preamble_windows(preamble_bits, n_bits):
        np.minimum(best, np.bitwise_count(words ^ dt(v)), out=best)
    for tail, t, h in _straddle_parts(preamble_bits, n_bits):
        # window = tail bits, then the first h bits of the word itself
        window = dt(tail << h) | (words >> dt(t))
        np.minimum(best, np.bitwise_count(words ^ window), out=best)
    return best.astype(np.int64)


def _sidelobes(words: np.ndarray, n_bits: int) -> tuple[np.ndarray, np.ndarray]:
    """(peak |C(k)|, sum C(k)^2) of each word over shifts k = 1..n-1."""
    dt = words.dtype.type
    peak = np.zeros(words.shape, np.int32)
    energy = np.zeros(words.shape, np.int32)
    for k in range(1, n_bits):
        diff = np.bitwise_count((words ^ (words >> dt(k))) & dt((1 << (n_bits - k)) - 1))
        c = (n_bits - k) - 2 * diff.astype(np.int32)
        np.maximum(peak, np.abs(c), out=peak)
        energy += c * c
    return peak.astype(np.int64), energy.astype(np.int64)


def autocorrelation(word: int, n_bits: int) -> np.ndarray:
    """Return the aperiodic autocorrelation C(k), k = 1..n-1, of the word with bits as +-1."""
    _check_bits(n_bits)
    a = word_bits(word, n_bits).astype(np.int64) * 2 - 1
    return np.array([int(np.dot(a[:-k], a[k:])) for k in range(1, n_bits)], np.int64)


def false_match_probability(n_bits: int, max_errors: int) -> float:
    """Return P(a random n-bit window is within ``max_errors`` bits of a given word)."""
    if not 0 <= max_errors <= n_bits:
        raise ValueRangeError(f"max_errors {max_errors} out of range; allowed 0..{n_bits}")
    return sum(math.comb(n_bits, k) for k in range(max_errors + 1)) / 2.0**n_bits


def false_syncs_per_hour(n_bits: int, max_errors: int, bit_rate_bps: float) -> float:
    """Return the expected false sync detections per hour on random noise bits at
    ``bit_rate_bps`` (one window test per bit time)."""
    if not bit_rate_bps > 0:
        raise ValueRangeError(f"bit rate {bit_rate_bps} bit/s must be > 0")
    return false_match_probability(n_bits, max_errors) * bit_rate_bps * 3600.0


@dataclass(frozen=True)
class SyncQuality:
    """Figures of merit of one sync word (see the module docstring).

    min_distance_to_preamble: None without a preamble. false_syncs_per_hour: None
    without a bit rate.
    """

    word: int
    n_bits: int
    max_sidelobe: int
    sidelobe_energy: int
    min_distance_to_preamble: int | None
    max_errors: int = 0
    false_syncs_per_hour: float | None = None

    @property
    def hex(self) -> str:
        """The word as 0x-prefixed hex, zero-padded to the word length."""
        return f"0x{self.word:0{(self.n_bits + 3) // 4}X}"

    @property
    def margin_bits(self) -> int | None:
        """Bit errors a preamble window may pick up before it is taken for the sync word:
        min distance - max_errors - 1 (negative: an error-free preamble already matches)."""
        if self.min_distance_to_preamble is None:
            return None
        return self.min_distance_to_preamble - self.max_errors - 1

    def as_dict(self) -> dict[str, object]:
        """Return a JSON-ready dict (word as hex)."""
        return {"word": self.hex, "n_bits": self.n_bits, "max_sidelobe": self.max_sidelobe,
                "sidelobe_energy": self.sidelobe_energy,
                "min_distance": self.min_distance_to_preamble,
                "max_errors": self.max_errors, "margin_bits": self.margin_bits,
                "false_syncs_per_hour_on_noise": self.false_syncs_per_hour}


def sync_quality(word: int, n_bits: int, preamble_bits: Sequence[int] = (), *,
                 max_errors: int = 0, bit_rate_bps: float | None = None) -> SyncQuality:
    """Return the :class:`SyncQuality` of an n-bit word sent after ``preamble_bits``."""
    _check_bits(n_bits)
    if not 0 <= word < (1 << n_bits):
        raise ValueRangeError(f"sync word 0x{word:X} does not fit in {n_bits} bits")
    w = np.array([word], np.uint64)
    peak, energy = _sidelobes(w, n_bits)
    dist = int(_distances(w, n_bits, preamble_bits)[0]) if len(preamble_bits) else None
    fsph = None if bit_rate_bps is None else false_syncs_per_hour(n_bits, max_errors, bit_rate_bps)
    if bit_rate_bps is None:
        false_match_probability(n_bits, max_errors)  # validates max_errors
    return SyncQuality(word, n_bits, int(peak[0]), int(energy[0]), dist, max_errors, fsph)


def _score(words: np.ndarray, n_bits: int, preamble_bits: Sequence[int]) -> np.ndarray:
    """Integer score (higher is better) in ranking order: distance, -peak, -energy."""
    peak, energy = _sidelobes(words, n_bits)
    dist = _distances(words, n_bits, preamble_bits) if len(preamble_bits) else 0
    return (np.asarray(dist, np.int64) << 40) - (peak << 24) - energy


def _best(words: np.ndarray, scores: np.ndarray, top: int) -> tuple[np.ndarray, np.ndarray]:
    order = np.lexsort((words, -scores))[:top]
    return words[order], scores[order]


def search_sync_words(n_bits: int, preamble_bits: Sequence[int] = (), *, max_errors: int = 0,
                      top: int = 10, bit_rate_bps: float | None = None,
                      rng: np.random.Generator | None = None, restarts: int = 64
                      ) -> list[SyncQuality]:
    """Return the ``top`` best n-bit sync words after ``preamble_bits``, best first.

    Exhaustive for n <= :data:`EXHAUSTIVE_MAX_BITS`; beyond, ``restarts`` random starts
    (drawn from ``rng``, default ``np.random.default_rng(0)``) each climb by single- and
    two-bit flips to a local optimum.
    """
    _check_bits(n_bits)
    if top < 1:
        raise ValueRangeError(f"top {top} out of range; allowed >= 1")
    false_match_probability(n_bits, max_errors)
    pre = tuple(int(b) & 1 for b in preamble_bits)
    if n_bits <= EXHAUSTIVE_MAX_BITS:
        words = np.zeros(0, np.uint64)
        scores = np.zeros(0, np.int64)
        for lo in range(0, 1 << n_bits, _CHUNK):
            w = np.arange(lo, min(1 << n_bits, lo + _CHUNK), dtype=np.uint32)
            s = _score(w, n_bits, pre)
            keep = np.argpartition(-s, min(top, s.size) - 1)[:top] if s.size > top else slice(None)
            words, scores = _best(np.concatenate((words, w[keep].astype(np.uint64))),
                                  np.concatenate((scores, s[keep])), top)
    else:
        words, scores = _hill_climb(n_bits, pre, top,
                                    rng if rng is not None else np.random.default_rng(0), restarts)
    return [sync_quality(int(w), n_bits, pre, max_errors=max_errors, bit_rate_bps=bit_rate_bps)
            for w in words]


def _hill_climb(n_bits: int, pre: tuple[int, ...], top: int, rng: np.random.Generator,
                restarts: int) -> tuple[np.ndarray, np.ndarray]:
    """Climb from ``restarts`` random words at once: best single-bit flip while one
    improves, else best two-bit flip; stop when neither improves."""
    single = np.uint64(1) << np.arange(n_bits, dtype=np.uint64)
    i, j = np.triu_indices(n_bits, 1)
    double = single[i] | single[j]
    cur = rng.integers(0, 1 << n_bits, restarts, dtype=np.uint64)
    cur_s = _score(cur, n_bits, pre)
    active = np.arange(restarts)
    for _ in range(8 * n_bits):  # each step improves the score; this bound is never reached
        if not active.size:
            break
        moved = np.zeros(active.size, bool)
        for moves in (single, double):
            todo = np.flatnonzero(~moved)
            if not todo.size:
                break
            nb = cur[active[todo], None] ^ moves[None, :]
            s = _score(nb.ravel(), n_bits, pre).reshape(nb.shape)
            k = np.argmax(s, axis=1)
            best = s[np.arange(todo.size), k]
            up = best > cur_s[active[todo]]
            who = active[todo[up]]
            cur[who] = nb[np.flatnonzero(up), k[up]]
            cur_s[who] = best[up]
            moved[todo[up]] = True
        active = active[moved]
    words, first = np.unique(cur, return_index=True)
    return _best(words, cur_s[first], top)


def bit_rate_bps(spec: FrameSpec | FramePlan) -> float:
    """Return the spec's data bit rate in bit/s (1e6 / (unit_us * units per bit))."""
    plan = as_plan(spec)
    return 1e6 / (plan.unit_us * plan.line_code.units_per_bit)


def spec_sync_quality(spec: FrameSpec | FramePlan) -> SyncQuality:
    """Return the :class:`SyncQuality` of the spec's sync word after its preamble, at the
    spec's bit rate and allowed sync errors."""
    spec = spec_of(spec)
    return sync_quality(spec.sync.value, spec.sync.length_bits, spec.preamble.bits(),
                        max_errors=spec.sync.max_errors, bit_rate_bps=bit_rate_bps(spec))
