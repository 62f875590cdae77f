"""Frame candidates: where the pulse train matches the head signature at some clock rate."""

from __future__ import annotations

import numpy as np

from .classify import fit_unit


def find_candidates(levels: np.ndarray, durations_us: np.ndarray, sig_levels: np.ndarray,
                    sig_units: np.ndarray, unit_us: float, tolerance: float,
                    clock_error: float) -> tuple[np.ndarray, np.ndarray]:
    """Return (index of the first signature pulse, estimated unit in µs) per candidate.

    A candidate is a run of pulses with the signature's levels whose durations are the
    signature's unit counts at one common unit (least-squares fit, within ``clock_error``
    of ``unit_us``), each within ``tolerance`` units. Vectorised: a loose per-pulse bound
    narrows the positions run by run, then the survivors are fitted together. When
    candidates overlap (a periodic preamble longer than the signature) only the last is
    kept: it is the one next to the sync word.
    """
    k = sig_units.size
    n = durations_us.size - k + 1
    if k == 0 or n <= 0:
        return np.zeros(0, np.int64), np.zeros(0)
    r = sig_units.astype(np.float64)
    lo_us = (r - tolerance) * (1.0 - clock_error) * unit_us
    hi_us = (r + tolerance) * (1.0 + clock_error) * unit_us
    d0 = durations_us[:n]
    cand = np.flatnonzero((levels[:n] == sig_levels[0]) & (d0 >= lo_us[0]) & (d0 <= hi_us[0]))
    for j in range(1, k):
        if cand.size == 0:
            break
        dj = durations_us[cand + j]
        cand = cand[(levels[cand + j] == sig_levels[j]) & (dj >= lo_us[j]) & (dj <= hi_us[j])]
    if cand.size == 0:
        return cand.astype(np.int64), np.zeros(0)
    d = durations_us[cand[:, None] + np.arange(k)]
    unit = fit_unit(d, r) if k > 1 else d[:, 0] / r[0]
    ok = np.abs(unit / unit_us - 1.0) <= clock_error
    ok &= (np.abs(d / unit[:, None] - r) <= tolerance).all(axis=1)
    cand, unit = cand[ok], unit[ok]
    if cand.size > 1:
        last = np.append(np.diff(cand) >= k, True)
        cand, unit = cand[last], unit[last]
    return cand.astype(np.int64), unit
