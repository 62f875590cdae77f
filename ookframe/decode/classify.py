"""Pulse durations -> whole symbol units: classification, unit estimate, drift tracking.

The estimators work on many windows at once: ``durations_us`` is the concatenation of
the windows' pulses and ``lengths`` says how many pulses each window has (ragged arrays,
so one numpy pass serves every candidate frame of a capture).
"""

from __future__ import annotations

import numpy as np
from scipy.signal import lfilter


def _whole_units(ratio: np.ndarray) -> np.ndarray:
    """Return ``np.maximum(np.rint(ratio), 1.0)`` (NaN stays NaN), without maximum's cost."""
    units = np.rint(ratio)
    units[units < 1.0] = 1.0
    return units


def classify(durations_us: np.ndarray, unit_us: float | np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (whole units >= 1 as int64, deviation |d/unit - units| in units) per pulse."""
    ratio = np.asarray(durations_us, dtype=np.float64) / unit_us
    if np.ndim(ratio) == 0:
        units = np.maximum(np.rint(ratio), 1.0)
        return units.astype(np.int64), np.abs(ratio - units)
    units = _whole_units(ratio)
    np.subtract(ratio, units, out=ratio)  # in place: no temporaries on long captures
    np.abs(ratio, out=ratio)
    return units.astype(np.int64), ratio


def fit_unit(durations_us: np.ndarray, units: np.ndarray) -> np.ndarray:
    """Return the least-squares unit in µs (slope of edge time over edge chip count).

    ``durations_us`` is (..., k) measured runs, ``units`` their lengths in units (k,) or
    (..., k); every edge (k + 1 of them, the first at time 0) weighs the same, so the
    jitter of single edges averages out much better than in total time / total units.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    n = d.shape[-1] + 1  # the origin edge (0, 0) adds nothing to the sums below
    if d.ndim == 1:  # one fit: dot products (this runs once per decoded frame)
        t = d.cumsum()
        c = np.asarray(units).cumsum(dtype=np.float64)
        st, sc = t.sum(), c.sum()
        return np.float64((n * t.dot(c) - st * sc) / (n * c.dot(c) - sc * sc))
    t = np.cumsum(d, axis=-1)
    c = np.cumsum(np.broadcast_to(np.asarray(units, dtype=np.float64), d.shape), axis=-1)
    st, sc = t.sum(axis=-1), c.sum(axis=-1)
    return (n * (t * c).sum(axis=-1) - st * sc) / (n * (c * c).sum(axis=-1) - sc * sc)


def _offsets(lengths: np.ndarray) -> np.ndarray:
    """Return where every window starts in the concatenated arrays."""
    return np.concatenate(([0], np.cumsum(lengths)[:-1]))


def _column_sums(x: np.ndarray) -> np.ndarray:
    """Return the sums down the columns of a C-ordered 2-D ``x``, taken in row order as
    ``np.bincount`` adds its weights: numpy reduces over the outer axis row by row, but
    a single column is contiguous and would be summed pairwise, so it is accumulated."""
    if x.shape[1] > 1:
        return np.add.reduce(x, axis=0)
    return np.cumsum(x, axis=0)[-1]


def head_unit(durations_us: np.ndarray, lengths: np.ndarray, unit0_us: np.ndarray,
              head_units: int, iterations: int = 2) -> np.ndarray:
    """Return per window the unit in µs refitted over its pulses of the head.

    Each window starts at its first signature pulse; its pulses wholly inside the first
    ``head_units`` units (classified with the current estimate, starting from
    ``unit0_us``) are least-squares fitted like :func:`fit_unit`, ``iterations`` times.
    The longer baseline (preamble + sync rather than the signature alone) makes the
    estimate good enough for long runs right after the sync.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    unit = np.array(unit0_us, dtype=np.float64, copy=True)
    # every pulse is at least one unit, so a window's pulse i ends at unit i + 1 or later:
    # only its first ``head_units`` pulses can lie inside the head; they are laid out as
    # the columns of a (pulse, window) array
    rows = min(max(head_units, 0), int(lengths.max(initial=0)))
    if rows == 0 or d.size == 0:
        return unit
    offsets = _offsets(lengths)
    row = np.arange(rows)[:, None]
    real = row < lengths  # the window has that pulse
    at = np.minimum(offsets + row, d.size - 1)
    # edge times: the running sum over all windows less its value where the window began
    cs = np.cumsum(d)
    t = cs[at]
    t -= np.where(offsets > 0, cs[offsets - 1], 0.0)
    d = d[at]
    for _ in range(iterations):
        n, _ = classify(d, unit)
        c = np.cumsum(n, axis=0).astype(np.float64)
        w = ((c <= head_units) & real).astype(np.float64)  # a prefix of every column
        npts = _column_sums(w) + 1.0  # + the origin edge (0, 0)
        st = _column_sums(t * w)
        sc = _column_sums(c * w)
        stc = _column_sums(t * c * w)
        scc = _column_sums(c * c * w)
        den = npts * scc - sc * sc
        with np.errstate(divide="ignore", invalid="ignore"):
            fitted = (npts * stc - st * sc) / den
        ok = (npts >= 3) & (den > 0) & (fitted > 0)
        unit = np.where(ok, fitted, unit)
    return unit


def track_unit(durations_us: np.ndarray, lengths: np.ndarray, unit0_us: np.ndarray, *,
               gain: float, tolerance: float, iterations: int = 2,
               max_units: int | None = None) -> np.ndarray:
    """Return the unit in µs used to classify each pulse, tracking slow clock drift.

    First-order loop ``u = u + gain * (d_k / n_k - u)`` started at the window's
    ``unit0_us`` and applied once per symbol unit of each pulse (n_k times for a pulse of
    n_k units), so its memory is about ``1 / gain`` units whatever the line code; pulse k
    is classified with the estimate before it. Vectorised: classify with the current
    estimate, run the loop as one IIR filter (``scipy.signal.lfilter``) over ``d_k / n_k``
    repeated per unit, reclassify with the tracked unit, ``iterations`` times. Windows
    are filtered together; each starts afresh (the filter's carry-over from the windows
    before it decays as ``(1 - gain) ** units`` and is subtracted). Pulses off by more
    than ``tolerance`` units do not move the loop (they feed the previous estimate
    back), and no pulse counts for more than ``max_units`` units.
    """
    d = np.asarray(durations_us, dtype=np.float64)
    lengths = np.asarray(lengths, dtype=np.int64)
    u0 = np.repeat(np.asarray(unit0_us, dtype=np.float64), lengths)
    if d.size == 0 or gain <= 0.0:
        return u0
    offsets = _offsets(lengths)
    u_prev = u0
    b, a = [gain], [1.0, gain - 1.0]
    for _ in range(iterations):
        n, dev = classify(d, u_prev)
        if max_units is not None:
            np.minimum(n, max_units, out=n)
        x = d / n
        np.copyto(x, u_prev, where=~(dev <= tolerance))  # off pulses feed the estimate back
        x -= u0
        y = lfilter(b, a, np.repeat(x, n))
        u_prev = _restart_windows(y, n, offsets, lengths, u0, gain)
    return u_prev


def _restart_windows(y: np.ndarray, n: np.ndarray, offsets: np.ndarray, lengths: np.ndarray,
                     u0: np.ndarray, gain: float) -> np.ndarray:
    """Return the unit before every pulse from the loop filter's output ``y`` over the
    chips of all windows (``n`` chips per pulse): the filter state carried over from the
    windows before is subtracted, and each window's first pulse gets its start unit."""
    chips_to = np.cumsum(n)  # chips up to and including each pulse
    w_chip0 = chips_to[offsets - 1]  # chips before each window ...
    w_chip0[offsets == 0] = 0  # ... none before the first
    carry = y[w_chip0 - 1]  # filter state when the window began
    carry[w_chip0 == 0] = 0.0
    span = chips_to - np.repeat(w_chip0, lengths)  # chips since the window began
    # (1 - gain) ** span by a table made with the same np.power: same values, no pow per pulse
    decay = np.power(1.0 - gain, np.arange(int(span.max()) + 1, dtype=np.float64))
    after = np.repeat(carry, lengths)
    after *= decay[span]
    chips_to -= 1  # the last chip of each pulse
    np.subtract(y[chips_to], after, out=after)
    u = np.empty_like(u0)
    np.add(after[:-1], u0[1:], out=u[1:])
    w_first = offsets[lengths > 0]  # w_first[0] is 0
    u[w_first] = u0[w_first]
    return u
