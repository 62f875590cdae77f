"""Pulse durations -> whole symbol units: classification, unit estimate, drift tracking.

The estimators work on many windows at once: ``durations_us`` is the concatenation of
the windows' pulses and ``lengths`` says how many pulses each window has (ragged arrays,
so one numpy pass serves every candidate frame of a capture).
"""

from __future__ import annotations

import numpy as np
from scipy.signal import lfilter


def classify(durations_us: np.ndarray, unit_us: float | np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (whole units >= 1 as int64, deviation |d/unit - units| in units) per pulse."""
    ratio = np.asarray(durations_us, dtype=np.float64) / unit_us
    if np.ndim(ratio) == 0:
        units = np.maximum(np.rint(ratio), 1.0)
        return units.astype(np.int64), np.abs(ratio - units)
    units = np.rint(ratio)
    np.maximum(units, 1.0, out=units)
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


def _ragged(lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (window of every element, offset of every window's first element)."""
    lengths = np.asarray(lengths, dtype=np.int64)
    offsets = np.concatenate(([0], np.cumsum(lengths)[:-1]))
    return np.repeat(np.arange(lengths.size), lengths), offsets


def _cumsum_within(x: np.ndarray, window: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Return the running sum of ``x`` restarted at every window."""
    cs = np.cumsum(x)
    base = np.concatenate(([0], cs))[offsets]
    return cs - base[window]


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
    window, offsets = _ragged(lengths)
    n_win = offsets.size
    unit = np.array(unit0_us, dtype=np.float64, copy=True)
    t = _cumsum_within(d, window, offsets)
    # every pulse is at least one unit, so a window's pulse i ends at unit i + 1 or later:
    # only its first ``head_units`` pulses can lie inside the head (``t`` stays the running
    # sum over all windows, so the fit is the same to the last bit)
    short = np.minimum(lengths, max(head_units, 0))
    if short.sum() < d.size:
        window, short_offsets = _ragged(short)
        keep = np.arange(int(short.sum())) - short_offsets[window] + offsets[window]
        d, t, offsets = d[keep], t[keep], short_offsets
    for _ in range(iterations):
        n, _ = classify(d, unit[window])
        c = _cumsum_within(n, window, offsets).astype(np.float64)
        use = c <= head_units
        w = use.astype(np.float64)
        npts = np.bincount(window, w, n_win) + 1.0  # + the origin edge (0, 0)
        st = np.bincount(window, t * w, n_win)
        sc = np.bincount(window, c * w, n_win)
        stc = np.bincount(window, t * c * w, n_win)
        scc = np.bincount(window, c * c * w, n_win)
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
    window, offsets = _ragged(lengths)
    u0 = np.asarray(unit0_us, dtype=np.float64)[window]
    u_prev = u0.copy()
    if d.size == 0 or gain <= 0.0:
        return u_prev
    first = np.zeros(d.size, bool)
    first[offsets[np.asarray(lengths) > 0]] = True
    b, a = [gain], [1.0, gain - 1.0]
    for _ in range(iterations):
        n, dev = classify(d, u_prev)
        if max_units is not None:
            n = np.minimum(n, max_units)
        x = np.where(dev <= tolerance, d / n, u_prev) - u0
        y = lfilter(b, a, np.repeat(x, n))
        end = np.cumsum(n) - 1  # chip index of each pulse's last chip
        start = end - n + 1  # ... and of its first
        w_start = start[offsets][window]  # first chip of the pulse's window
        carry = np.concatenate(([0.0], y))[w_start]  # filter state when the window began
        after = y[end] - carry * (1.0 - gain) ** (end - w_start + 1).astype(np.float64)
        u_prev = np.where(first, u0, np.concatenate(([0.0], after[:-1])) + u0)
    return u_prev
