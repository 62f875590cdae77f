"""Sync word search in decoded bit streams with a bit-error allowance."""

from __future__ import annotations

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view


def pattern_errors(bits: np.ndarray, valid: np.ndarray, pattern: np.ndarray) -> np.ndarray:
    """Return (offsets x pattern bits) bool: True where the bit differs or is invalid.

    An invalid bit (bad codeword) always counts as an error. Rows: every offset at which
    the whole pattern fits (none when the stream is shorter than the pattern).
    """
    n = pattern.size
    if bits.size < n:
        return np.zeros((0, n), bool)
    return (sliding_window_view(bits, n) != pattern) | sliding_window_view(~valid, n)


def sync_distance(bits: np.ndarray, valid: np.ndarray, sync: np.ndarray) -> np.ndarray:
    """Return the Hamming distance (int64) between ``sync`` and the bits at every offset."""
    return pattern_errors(bits, valid, sync).sum(axis=1, dtype=np.int64)


def best_sync(bits: np.ndarray, valid: np.ndarray, lead: np.ndarray, sync: np.ndarray,
              expected: int, reach: int, max_errors: int) -> tuple[int, int, int] | None:
    """Return (offset, sync errors, lead errors) of the best sync hit near ``expected``.

    Offsets ``expected +- reach`` are tried; a hit has at most ``max_errors`` errors in
    the sync word (an invalid bit counts as an error). ``lead`` are the bits expected just
    before the sync (preamble tail, not counted where the stream starts later); the best
    hit has the fewest errors over lead + sync, then the fewest in the sync (exact hits
    first), then the offset closest to ``expected``. None if there is no hit.
    """
    n = sync.size
    lo = max(expected - reach, 0)
    hi = min(expected + reach, bits.size - n)
    if hi < lo:
        return None
    if hi - lo < _SMALL_SPAN and lead.size + n <= 64:
        return _best_sync_small(bits, valid, lead, sync, expected, lo, hi, max_errors)
    offsets = np.arange(lo, hi + 1)
    at = offsets[:, None] + np.arange(n)
    sync_err = ((bits[at] != sync) | ~valid[at]).sum(axis=1)
    ok = sync_err <= max_errors
    if not ok.any():
        return None
    offsets, sync_err = offsets[ok], sync_err[ok]
    at = offsets[:, None] + np.arange(-lead.size, 0)
    inside = at >= 0
    at = np.maximum(at, 0)
    lead_err = (((bits[at] != lead) | ~valid[at]) & inside).sum(axis=1)
    k = np.lexsort((np.abs(offsets - expected), sync_err, sync_err + lead_err))[0]
    return int(offsets[k]), int(sync_err[k]), int(lead_err[k])


#: offsets up to this many are tried one by one on packed integers (a few numpy calls
#: instead of a few dozen); wider searches use the array form above
_SMALL_SPAN = 32


def _as_int(bits: np.ndarray) -> int:
    """Return the bits (first bit most significant) as one integer."""
    return int.from_bytes(np.packbits(bits).tobytes(), "big") >> (-bits.size % 8)


def _best_sync_small(bits: np.ndarray, valid: np.ndarray, lead: np.ndarray, sync: np.ndarray,
                     expected: int, lo: int, hi: int, max_errors: int
                     ) -> tuple[int, int, int] | None:
    """:func:`best_sync` over offsets lo .. hi (both in range), on packed integers."""
    n, n_lead = sync.size, lead.size
    a, b = max(lo - n_lead, 0), hi + n
    seg = _as_int(bits[a:b])
    bad = _as_int(~valid[a:b])
    pattern = _as_int(np.concatenate((lead, sync)))
    sync_mask = (1 << n) - 1
    best = None
    best_key = None
    for o in range(lo, hi + 1):
        shift = b - o - n
        # lead bits before the stream start are not counted
        err = (((seg >> shift) ^ pattern) | (bad >> shift)) & ((1 << min(n_lead + n, o + n)) - 1)
        sync_err = (err & sync_mask).bit_count()
        if sync_err > max_errors:
            continue
        lead_err = (err >> n).bit_count()
        key = (sync_err + lead_err, sync_err, abs(o - expected))
        if best_key is None or key < best_key:  # first of ties: lowest offset
            best_key, best = key, (o, sync_err, lead_err)
    return best
