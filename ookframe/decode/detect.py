"""Frame candidates: where the pulse train matches the head signature at some clock rate."""

from __future__ import annotations

import numpy as np

from .classify import RunTable, nearest_runs

#: signatures of fewer runs also need every duration's nearest allowed length to match
SHORT_SIGNATURE_RUNS = 8
#: an edge of the signature may lie at most this far (units) from the fitted chip grid
MAX_EDGE_OFFSET = 0.5


def find_candidates(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
                    sig_units: np.ndarray, unit_us: float, table: RunTable,
                    clock_error: float) -> tuple[np.ndarray, np.ndarray]:
    """Return (index of the first signature pulse, estimated unit in µs) per candidate.

    A candidate is a run of pulses with the signature's levels whose edges lie on the
    signature's chip grid at one common unit: the least-squares line of edge time over
    chip count (within ``clock_error`` of ``unit_us``) leaves every edge less than half a
    unit from its chip, so each edge, not each duration, must be right. Vectorised: the
    widest durations such edges allow narrow the positions run by run, then the
    survivors are fitted together. When candidates overlap (a periodic preamble longer
    than the signature) only the last is kept: it is the one next to the sync word.
    ``table`` bounds the signature's runs from above (a longer pulse is no frame run).
    """
    k = sig_units.size
    n = durations_us.size - k + 1
    if k == 0 or n <= 0:
        return np.zeros(0, np.int64), np.zeros(0)
    r = sig_units.astype(np.float64)
    lo_us = np.maximum(r - 2 * MAX_EDGE_OFFSET, 0.0) * (1.0 - clock_error) * unit_us
    hi_us = np.minimum(r + 2 * MAX_EDGE_OFFSET, table.cap_ratio) * (1.0 + clock_error) * unit_us
    d0 = durations_us[:n]
    cand = np.flatnonzero((levels[:n] == sig_levels[0]) & (d0 > lo_us[0]) & (d0 < hi_us[0]))
    cand = _spans_fit(cand, durations_us, r, (1.0 + clock_error) * unit_us)
    for j in range(1, k):
        if cand.size == 0:
            break
        dj = durations_us[cand + j]
        cand = cand[(levels[cand + j] == sig_levels[j]) & (dj > lo_us[j]) & (dj < hi_us[j])]
    if cand.size == 0:
        return cand.astype(np.int64), np.zeros(0)
    d = durations_us[cand[:, None] + np.arange(k)]
    unit, offset = _edge_line(d, r)
    ok = np.abs(unit / unit_us - 1.0) <= clock_error  # cheap: before the edge offsets
    cand, d, unit = cand[ok], d[ok], unit[ok]
    worst = _worst_edge(d, r, unit, offset[ok])
    ok = worst < MAX_EDGE_OFFSET
    if k < SHORT_SIGNATURE_RUNS:  # few runs say little: every duration must fit as well
        got, _ = nearest_runs(d / unit[:, None], np.broadcast_to(sig_levels, d.shape), table)
        ok &= (got == sig_units).all(axis=1)
    cand, unit, worst = cand[ok], unit[ok], worst[ok]
    if cand.size > 1:
        cand, unit = _one_per_cluster(cand, unit, worst, k)
    return cand.astype(np.int64), unit


#: fits whose worst edge offsets differ by less than this (units) count as equally good
FIT_STEP = 0.1
#: steps by which the best fit must beat the latest candidate to be framed as well
CLEARLY_BETTER = 2


def _one_per_cluster(cand: np.ndarray, unit: np.ndarray, worst: np.ndarray, k: int
                     ) -> tuple[np.ndarray, np.ndarray]:
    """Keep of every cluster of overlapping candidates (less than ``k`` pulses apart) the
    latest and, where it fits clearly better (worst edge offset at least CLEARLY_BETTER
    steps of FIT_STEP lower), the best fit as well.

    A periodic preamble matches at several shifts about equally well, and the latest is
    next to the sync word; but a shift that reaches into the sync can also fit by bending
    the clock (short signatures), leaving some edge far off its chip: then the best fit
    is the true one. Both are framed; a frame found from the earlier one covers the other.
    """
    cluster = np.concatenate(([0], np.cumsum(np.diff(cand) >= k)))
    score = np.floor(worst / FIT_STEP)
    order = np.lexsort((-cand, score, cluster))  # per cluster: best score, latest first
    best_i = order[np.concatenate(([True], cluster[order][1:] != cluster[order][:-1]))]
    last = np.append(cluster[1:] != cluster[:-1], True)
    last_i = np.flatnonzero(last)
    # the best fit also, where it is clearly better than the latest (by CLEARLY_BETTER)
    clearly = score[best_i] <= score[last_i] - CLEARLY_BETTER
    keep = last.copy()
    keep[best_i[clearly]] = True
    # a signature of preamble runs alone also matches where the data repeats the preamble
    # right after the sync: then the latest is inside the body. Every run of good fits that
    # ends at a clearly worse fit (a shift reaching into the sync) is a place the sync may
    # follow, so the latest of each such run is framed too.
    good = score < score[best_i][cluster] + CLEARLY_BETTER
    keep[:-1] |= good[:-1] & ~good[1:] & (cluster[1:] == cluster[:-1])
    return cand[keep], unit[keep]

def _spans_fit(cand: np.ndarray, durations_us: np.ndarray, r: np.ndarray, max_unit_us: float
               ) -> np.ndarray:
    """Return the candidates whose spans of pulses keep the signature's proportions.

    If every edge lies within half a unit u of its chip (the final test), the time S_j
    from the first edge to edge j and the whole span S_k obey
    |S_j C_k - C_j S_k| <= (C_k + C_j) u for chip counts C; whatever the clock. Checked
    at every eighth of the signature, it drops most positions
    inside frames (runs of other lengths) before any fit, and never a true head.
    """
    k = r.size
    if k < 4 or cand.size == 0:
        return cand
    c = np.concatenate(([0.0], np.cumsum(r)))
    t = np.concatenate(([0.0], np.cumsum(durations_us)))
    total = t[cand + k] - t[cand]
    for j in sorted({k * q // 8 for q in range(1, 8)} - {0}):
        part = t[cand + j] - t[cand]
        ok = np.abs(part * c[k] - c[j] * total) <= (c[k] + c[j]) * max_unit_us
        cand, total = cand[ok], total[ok]
    return cand


def _edge_line(d: np.ndarray, r: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return per row (unit in µs: NaN unless positive, offset of the first edge from the
    line in units) of the least-squares line of edge time over chip count for rows of
    durations ``d`` with run lengths ``r``.

    Edge j lies at t_j = d_0 + ... + d_(j-1), so the sums over edges the fit needs are
    sums over durations with fixed weights: sum_j t_j (c_j - mean c) = d @ W with
    W_i = sum_(j > i) (c_j - mean c), and sum_j t_j = d @ (k - i): one matrix product,
    no edge times.
    """
    k = r.size
    c = np.concatenate(([0.0], np.cumsum(r)))
    w = c - c.mean()
    weights = np.empty((k, 2))
    weights[:, 0] = np.cumsum(w[::-1])[::-1][1:] / (w @ w)
    weights[:, 1] = np.arange(k, 0, -1) / (k + 1.0)
    slope, tm = (d @ weights).T
    unit = np.where(slope > 0, slope, np.nan)
    offset = (tm - slope * c.mean()) / unit
    return unit, offset


def _worst_edge(d: np.ndarray, r: np.ndarray, unit: np.ndarray, offset: np.ndarray
                ) -> np.ndarray:
    """Return per row the largest distance (units) of an edge from the line ``unit``,
    ``offset`` (see :func:`_edge_line`) for rows of durations ``d`` with run lengths ``r``."""
    c = np.cumsum(r)
    t = np.cumsum(d, axis=1)
    t /= unit[:, None]
    t -= offset[:, None]
    t -= c
    np.abs(t, out=t)
    return np.maximum(t.max(axis=1, initial=0.0), np.abs(offset))
