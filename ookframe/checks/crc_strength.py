"""CRC strength: Hamming distance at a data length, and the longest data word per HD.

A CRC of width W with generator g(x) = x^W + poly (normal notation, top bit implied)
protects a codeword of N data bits + W check bits. An error pattern e(x) goes undetected
iff g(x) divides e(x), i.e. iff the XOR of the syndromes x^i mod g(x) of its bit
positions is 0. init, xorout and bit reflection do not change which patterns are
undetected, so they do not enter here.

Algorithm (meet in the middle over error-position syndromes, numpy vectorised):

* undetected patterns are shift invariant (x^t e(x) is also a multiple of g), so only
  patterns whose lowest position is 0 ("anchored") are searched; a pattern of weight k
  and span s (highest position + 1) fits in every codeword of length >= s;
* an anchored weight-k pattern is {0} + L + R with |L| = (k-1)//2, |R| = k-1-|L| and
  1 ^ xor(L) == xor(R): all L-combinations are sorted, R-combinations are streamed in
  chunks ordered by their highest position and looked up with ``np.searchsorted``;
* weights are searched in increasing order, so an L and R that overlap would imply a
  lighter pattern already ruled out;
* weight 2 is exact at any length: the first weight-2 pattern is {0, order of x mod g},
  with the order computed algebraically (:mod:`._gf2`);
* when (x+1) divides g every odd-weight pattern is detected and odd weights are skipped.

The longest data word for each HD is searched up to :data:`SEARCH_LIMIT_BITS` codeword
bits per error weight; beyond it the answer is ``None``. The Hamming distance at a given
length searches each weight within :data:`MAX_WORK` combinations; when a weight would
need more, the HD is reported as a lower bound (``hd_exact`` False).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ValueRangeError
from . import _gf2

#: codeword bits searched for the first undetected pattern of each weight (weight 2 is exact)
SEARCH_LIMIT_BITS: dict[int, int] = {3: 2_000_000, 4: 20_000, 5: 6_000}
#: most combinations (streamed side) examined for one weight at one length
MAX_WORK: int = 60_000_000
#: HDs whose longest data word is reported
HD_RANGE: tuple[int, ...] = (2, 3, 4, 5, 6)
_CHUNK = 1 << 20


def koopman_to_normal(koopman: int, width: int) -> int:
    """Return the normal-notation poly (top bit implied) of a Koopman-notation poly.

    Koopman writes the x^W term as the top bit and implies the +1 term: 0x8810 (16 bits)
    is x^16 + x^12 + x^5 + 1, normal 0x1021.
    """
    _check_width(width)
    if not 0 <= koopman < (1 << width) or not koopman >> (width - 1):
        raise ValueRangeError(f"Koopman poly 0x{koopman:X} must have its top bit (x^{width}) "
                              f"set and fit in {width} bits")
    return ((koopman << 1) | 1) & ((1 << width) - 1)


def normal_to_koopman(poly: int, width: int) -> int:
    """Return the Koopman notation (x^W as top bit, +1 implied) of a normal-notation poly."""
    _check_poly(width, poly)
    return (poly | (1 << width)) >> 1


def _check_width(width: int) -> None:
    if not 1 <= width <= 64:
        raise ValueRangeError(f"CRC width {width} out of range; allowed 1..64")


def _check_poly(width: int, poly: int) -> None:
    _check_width(width)
    if not 0 <= poly < (1 << width):
        raise ValueRangeError(f"poly 0x{poly:X} does not fit in width {width} (normal notation, "
                              "top bit implied)")
    if poly & 1 == 0:
        raise ValueRangeError(f"poly 0x{poly:X} has no +1 term; only polys with an odd normal "
                              "value are supported (every published CRC has one)")


def syndromes(width: int, poly: int, n_bits: int) -> np.ndarray:
    """Return x^i mod g(x) for i = 0..n_bits-1 as uint64 (g = x^width + poly)."""
    _check_poly(width, poly)
    if n_bits <= 0:
        return np.zeros(0, np.uint64)
    g = poly | (1 << width)
    k = math.isqrt(n_bits - 1) + 1  # k parallel LFSR streams, each advanced k steps
    m = -(-n_bits // k)
    step = _gf2.powmod(2, k, g)
    starts = [1]
    for _ in range(m - 1):
        starts.append(_gf2.mulmod(starts[-1], step, g))
    cur = np.array(starts, dtype=np.uint64)
    out = np.empty((m, k), dtype=np.uint64)
    top_shift = np.uint64(width - 1)
    mask = np.uint64((1 << width) - 1)
    p = np.uint64(poly)
    one = np.uint64(1)
    for i in range(k):
        out[:, i] = cur
        top = (cur >> top_shift) & one
        cur = ((cur << one) & mask) ^ (top * p)
    return out.ravel()[:n_bits]


def _table(s: np.ndarray, size: int, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Return (xor values, highest position) of all ``size``-subsets of positions 1..n-1,
    ordered by highest position (size 0: the empty set, value 0)."""
    if size == 0:
        return np.zeros(1, np.uint64), np.zeros(1, np.int64)
    if size == 1:
        return s[1:n].copy(), np.arange(1, n, dtype=np.int64)
    if size == 2:
        hi, lo = np.tril_indices(n - 1, -1)  # row-major: ordered by the higher index
        return s[hi + 1] ^ s[lo + 1], (hi + 1).astype(np.int64)
    raise ValueError(size)


def _n_combos(n: int, size: int) -> int:
    return math.comb(max(n - 1, 0), size)


def _stream(s: np.ndarray, size: int, n: int):
    """Yield (xor values, highest positions, counts) chunks of all ``size``-subsets of
    positions 1..n-1 in increasing highest position; ``counts[i]`` subsets have the
    highest position ``positions[i]``."""
    if size == 1:
        for a in range(1, n, _CHUNK):
            b = min(n, a + _CHUNK)
            yield s[a:b], np.arange(a, b, dtype=np.int64), np.ones(b - a, np.int64)
        return
    below, _ = _table(s, size - 1, n)  # (size-1)-subsets ordered by highest position
    vals: list[np.ndarray] = []
    tops: list[int] = []
    counts: list[int] = []
    pending = 0
    for e in range(size, n):
        cnt = _n_combos(e, size - 1)  # subsets of 1..e-1
        vals.append(below[:cnt] ^ s[e])
        tops.append(e)
        counts.append(cnt)
        pending += cnt
        if pending >= _CHUNK:
            yield np.concatenate(vals), np.array(tops, np.int64), np.array(counts, np.int64)
            vals, tops, counts, pending = [], [], [], 0
    if vals:
        yield np.concatenate(vals), np.array(tops, np.int64), np.array(counts, np.int64)


_GOLDEN = np.uint64(0x9E3779B97F4A7C15)


class _KeyTable:
    """Open-addressing hash table of distinct non-zero uint64 keys with an int64 payload.

    Load factor <= 1/8 while the table stays under 2^26 slots (few second probes).
    """

    def __init__(self, keys: np.ndarray, payload: np.ndarray) -> None:
        bits = max(4, min(int(8 * keys.size - 1).bit_length(),
                          max(26, int(2 * keys.size - 1).bit_length())))
        self.shift = np.uint64(64 - bits)
        self.mask = (1 << bits) - 1
        self.keys = np.zeros(1 << bits, np.uint64)
        self.payload = np.zeros(1 << bits, np.int32)
        home = self._home(keys)
        pending = np.arange(keys.size)
        off = np.zeros(keys.size, np.int64)
        while pending.size:
            cand = (home[pending] + off[pending]) & self.mask
            free = self.keys[cand] == 0
            _, first = np.unique(cand[free], return_index=True)
            win = pending[free][first]
            wslot = cand[free][first]
            self.keys[wslot] = keys[win]
            self.payload[wslot] = payload[win]
            placed = np.zeros(keys.size, bool)
            placed[win] = True
            off[pending] += 1
            pending = pending[~placed[pending]]

    def _home(self, q: np.ndarray) -> np.ndarray:
        return ((q * _GOLDEN) >> self.shift).astype(np.intp)

    def find(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Return (indices into q that are keys, their payloads)."""
        slot = self._home(q)
        t = self.keys[slot]
        hit = t == q
        hits = [np.flatnonzero(hit)]
        pays = [self.payload[slot[hits[0]]]]
        idx = np.flatnonzero((t != 0) & ~hit)  # occupied by another key: probe on
        slot = slot[idx]
        while idx.size:
            slot = (slot + 1) & self.mask
            t = self.keys[slot]
            hit = t == q[idx]
            hits.append(idx[hit])
            pays.append(self.payload[slot[hit]])
            go = (t != 0) & ~hit
            idx, slot = idx[go], slot[go]
        return np.concatenate(hits), np.concatenate(pays)


def _anchored_spans(s: np.ndarray, k: int, n: int, *, first_only: bool = False) -> np.ndarray:
    """Return the span of every (L, R) match of anchored weight-k patterns inside n bits.

    Each pattern appears C(k-1, (k-1)//2) times (once per choice of L). With
    ``first_only`` the scan stops once no shorter pattern can follow (the result then
    holds the shortest span, not every match). Assumes no undetected pattern of weight
    < k fits in n bits, so L-values are distinct and never 0.
    """
    left_size = (k - 1) // 2
    lv, lt = _table(s, left_size, n)
    if lv.size == 0:
        return np.zeros(0, np.int64)
    table = _KeyTable(lv ^ np.uint64(1), lt)  # the anchor: position 0, syndrome 1
    spans: list[np.ndarray] = []
    best = n + 1
    for q, tops, counts in _stream(s, k - 1 - left_size, n):
        if first_only and tops[0] + 1 >= best:
            break
        qi, ltop = table.find(q)
        if qi.size:
            qtop = tops[np.searchsorted(np.cumsum(counts), qi, side="right")]
            sp = np.maximum(ltop, qtop) + 1
            spans.append(sp)
            best = min(best, int(sp.min()))
    return np.concatenate(spans) if spans else np.zeros(0, np.int64)


def _work(n: int, k: int) -> int:
    left = (k - 1) // 2
    return max(_n_combos(n, k - 1 - left), _n_combos(n, left))


@dataclass(frozen=True)
class WeightCount:
    """Undetected error patterns of the lightest weight inside one codeword length."""

    weight: int
    count: int


def _has_parity(width: int, poly: int) -> bool:
    """True when (x+1) divides g(x): every odd-weight error is detected."""
    return (bin(poly | (1 << width)).count("1") % 2) == 0


def lightest_undetected(width: int, poly: int, data_bits: int, *,
                        max_weight: int = 6, max_work: int = MAX_WORK
                        ) -> tuple[WeightCount | None, int]:
    """Return (lightest undetected weight and its pattern count, weights searched up to).

    The count is the number of undetected error patterns of that weight inside the
    ``data_bits + width`` bit codeword. None when no pattern of weight <= the returned
    bound exists (the bound is below ``max_weight`` when the work budget ran out).
    """
    _check_poly(width, poly)
    if data_bits < 1:
        raise ValueRangeError(f"data_bits {data_bits} out of range; allowed >= 1")
    n = data_bits + width
    parity = _has_parity(width, poly)
    period = _gf2.order_of_x(poly | (1 << width))
    if period < n:  # weight 2: {0, period} and its shifts
        spans = np.arange(period, n, period, dtype=np.int64) + 1
        return WeightCount(2, int((n - spans + 1).sum())), 2
    s = syndromes(width, poly, n)
    searched = 2
    for k in range(3, max_weight + 1):
        if parity and k % 2:
            searched = k
            continue
        if _work(n, k) > max_work:
            break
        spans = _anchored_spans(s, k, n)
        if spans.size:
            mult = math.comb(k - 1, (k - 1) // 2)
            return WeightCount(k, int((n - spans + 1).sum()) // mult), k
        searched = k
    if parity and searched % 2 == 0 and searched == max_weight:
        searched += 1  # the next weight is odd: detected too
    return None, searched


def first_undetected_span(width: int, poly: int, k: int, limit_bits: int) -> int | None:
    """Return the shortest codeword length (bits) holding an undetected weight-k pattern,
    searching lengths up to ``limit_bits``; None if there is none within it.

    Assumes no lighter pattern fits in ``limit_bits`` (the caller caps the limit).
    """
    if k == 2:
        span = _gf2.order_of_x(poly | (1 << width)) + 1
        return span if span <= limit_bits else None
    if _has_parity(width, poly) and k % 2:
        return None
    s = syndromes(width, poly, limit_bits)
    # L is a single position for k <= 4 (cheap to build at full length: one pass);
    # for heavier weights L is quadratic in the length, so grow the length by doubling
    n = limit_bits if k <= 4 else min(limit_bits, max(64, 2 * k))
    while True:
        spans = _anchored_spans(s, k, n, first_only=True)
        if spans.size:
            return int(spans.min())
        if n >= limit_bits:
            return None
        n = min(limit_bits, 2 * n)


@dataclass(frozen=True)
class HdReach:
    """Longest data words per Hamming distance for one polynomial.

    max_data_bits: HD k -> longest data word (bits) at which HD >= k holds (0: not even at
        one data bit); None when not settled within the search (then ``at_least_bits``
        holds the proven lower bound) and, for HD 2, because a poly with a +1 term
        detects every single-bit error at every length.
    searched_bits: error weight -> codeword bits searched for its first pattern.
    """

    max_data_bits: dict[int, int | None]
    at_least_bits: dict[int, int]
    searched_bits: dict[int, int]


def hd_reach(width: int, poly: int, *, limits: dict[int, int] | None = None) -> HdReach:
    """Return the :class:`HdReach` of g(x) = x^width + poly for HD 2..6.

    ``limits`` (error weight -> codeword bits) defaults to :data:`SEARCH_LIMIT_BITS`.
    """
    _check_poly(width, poly)
    limits = dict(SEARCH_LIMIT_BITS if limits is None else limits)
    parity = _has_parity(width, poly)
    # weight -> (first span or a lower bound of it, exact?); inf: never undetected
    first: dict[int, tuple[float, bool]] = {
        2: (_gf2.order_of_x(poly | (1 << width)) + 1, True)}
    searched: dict[int, int] = {}
    for k in range(3, max(HD_RANGE)):
        if parity and k % 2:
            first[k] = (math.inf, True)
            continue
        # lighter patterns must not fit: search below the smallest lighter span
        cap = int(min(limits.get(k, 0), min(b for b, _ in first.values()) - 1))
        searched[k] = max(cap, 0)
        span = first_undetected_span(width, poly, k, cap) if cap > width else None
        first[k] = (span, True) if span is not None else (cap + 1, False)
    exact_bits: dict[int, int | None] = {}
    at_least: dict[int, int] = {}
    for hd in HD_RANGE:
        lighter = [first[k] for k in range(2, hd)]
        if not lighter:
            exact_bits[hd] = None
            continue
        span, exact = min(lighter, key=lambda t: (t[0], not t[1]))
        bits = max(0, int(span) - 1 - width)
        if exact:
            exact_bits[hd] = bits
        else:
            exact_bits[hd] = None
            at_least[hd] = bits
    return HdReach(exact_bits, at_least, searched)


@dataclass(frozen=True)
class CrcStrength:
    """Error-detection strength of one CRC generator polynomial at one data length.

    hd: Hamming distance at ``data_bits`` (a lower bound when ``hd_exact`` is False).
    undetected: count of undetected patterns of weight ``hd`` in the codeword (None when
        the HD is a lower bound).
    period_bits: order of x mod g(x); weight-2 errors this far apart are undetected.
    reach: longest data words per HD (None when not asked for).
    """

    width_bits: int
    poly: int
    data_bits: int
    hd: int
    hd_exact: bool
    undetected: int | None
    odd_errors_detected: bool
    period_bits: int
    reach: HdReach | None = None

    @property
    def koopman(self) -> int:
        """Koopman notation of the polynomial."""
        return normal_to_koopman(self.poly, self.width_bits)

    def undetected_probability(self, ber: float) -> float:
        """Return P(a frame with random bit errors at ``ber`` passes the check), approx.

        Leading term A_hd p^hd (1-p)^(n-hd) of the weight distribution (good for n p << 1);
        when the HD is only a lower bound, the bound C(n, hd) p^hd (1-p)^(n-hd) is used.
        """
        return undetected_probability(self.data_bits + self.width_bits, self.hd,
                                      self.undetected, ber)

    def as_dict(self) -> dict[str, object]:
        """Return a JSON-ready dict (ints, None; polys as hex strings)."""
        digits = (self.width_bits + 3) // 4
        d: dict[str, object] = {
            "width_bits": self.width_bits,
            "poly": f"0x{self.poly:0{digits}X}",
            "koopman": f"0x{self.koopman:0{digits}X}",
            "data_bits": self.data_bits,
            "hd": self.hd,
            "hd_exact": self.hd_exact,
            "undetected_patterns_at_hd": self.undetected,
            "odd_errors_detected": self.odd_errors_detected,
            "period_bits": self.period_bits,
        }
        if self.reach is not None:
            d["max_data_bits"] = {str(k): v for k, v in self.reach.max_data_bits.items()}
            d["max_data_bits_at_least"] = {str(k): v for k, v in self.reach.at_least_bits.items()}
            d["searched_codeword_bits"] = {str(k): v for k, v in self.reach.searched_bits.items()}
        return d


def undetected_probability(n_bits: int, hd: int, count: int | None, ber: float) -> float:
    """Return the approx. probability that random errors at ``ber`` in ``n_bits`` go
    undetected: count p^hd (1-p)^(n-hd), or C(n, hd) p^hd (1-p)^(n-hd) when count is None."""
    if not 0.0 <= ber <= 0.5:
        raise ValueRangeError(f"bit error rate {ber} out of range; allowed 0..0.5")
    a = math.comb(n_bits, hd) if count is None else count
    return float(a * ber**hd * (1.0 - ber) ** (n_bits - hd))


def crc_strength(width: int, poly: int, data_bits: int, *, max_weight: int = 6,
                 max_work: int = MAX_WORK, reach: bool = True,
                 limits: dict[int, int] | None = None) -> CrcStrength:
    """Return the :class:`CrcStrength` of g(x) = x^width + poly at ``data_bits`` data bits.

    ``reach`` also computes the longest data word per HD (slower for wide CRCs).
    """
    lw, searched = lightest_undetected(width, poly, data_bits, max_weight=max_weight,
                                       max_work=max_work)
    if lw is None:
        hd, exact, count = searched + 1, False, None
    else:
        hd, exact, count = lw.weight, True, lw.count
    return CrcStrength(width_bits=width, poly=poly, data_bits=data_bits, hd=hd, hd_exact=exact,
                       undetected=count, odd_errors_detected=_has_parity(width, poly),
                       period_bits=_gf2.order_of_x(poly | (1 << width)),
                       reach=hd_reach(width, poly, limits=limits) if reach else None)
