"""Captured edges against the ideal edges of re-encoded frames: matching and per-frame fit.

For every decoded frame the ideal edges (chip boundaries where the level changes, the
frame framed by space) are matched to the captured toggles of the same polarity, and one
least-squares fit per frame maps ideal time to captured time::

    t_capture = a + B u + C u**2 + beta * falling,   u = (tau - tau_mid) / 1000  (ms)

``tau`` is the ideal time from the frame's first chip (µs), ``tau_mid`` the mean ``tau``
of its matched edges; ``B`` is the clock scale at mid-frame, ``C`` its curvature (clock
drift), ``beta`` the extra delay of falling edges (mark bias). All frames are fitted at
once through their normal equations (``numpy.linalg.solve`` on stacked 4 x 4 systems).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..frame import frame_chips_many
from ..plan import FramePlan
from ..pulses import PulseTrain, merge_runs

#: parameters of each frame's fit (a, B, C, beta)
N_PARAMS = 4
#: fewest matched edges a frame needs to be fitted (more than the parameters, with room)
MIN_EDGES = 12
#: largest distance (in units of the frame's chip) from a predicted edge to its match
MATCH_UNITS = 0.35
#: residuals beyond this many robust standard deviations are outliers (not jitter)
OUTLIER_SIGMAS = 6.0


@dataclass(frozen=True, eq=False)
class CaptureEdges:
    """Toggles of a capture: sorted times ``t_us`` and ``rising`` (True: space -> mark)."""

    t_us: np.ndarray
    rising: np.ndarray

    @staticmethod
    def of(train: PulseTrain) -> CaptureEdges:
        """Return the toggles of ``train`` (equal neighbours merged first)."""
        m = merge_runs(train.levels, train.durations_us)
        if len(m) < 2:
            return CaptureEdges(np.zeros(0), np.zeros(0, bool))
        ends = np.cumsum(m.durations_us)[:-1]
        return CaptureEdges(ends, m.levels[1:] == 1)


@dataclass(frozen=True, eq=False)
class IdealEdges:
    """Ideal edges of F frames laid end to end: ``frame`` (index), ``tau_us`` (ideal time
    from the frame's first chip), ``rising``; ``first[f]:first[f + 1]`` are frame f's;
    ``n_chips[f]``: frame f's length in chips."""

    frame: np.ndarray
    tau_us: np.ndarray
    rising: np.ndarray
    first: np.ndarray
    n_chips: np.ndarray

    @staticmethod
    def of(plan: FramePlan, values: list[dict[str, object]]) -> IdealEdges:
        """Return the ideal edges of one frame per entry of ``values`` (re-encoded)."""
        chips = frame_chips_many(plan, values)
        taus, rises = [], []
        for c in chips:
            padded = np.concatenate(([0], np.asarray(c, np.int8), [0]))
            at = np.flatnonzero(np.diff(padded))
            taus.append(at * plan.unit_us)
            rises.append(padded[at + 1] == 1)
        counts = np.array([t.size for t in taus], np.int64)
        first = np.concatenate(([0], np.cumsum(counts)))
        return IdealEdges(np.repeat(np.arange(len(chips)), counts),
                          np.concatenate(taus) if taus else np.zeros(0),
                          np.concatenate(rises) if rises else np.zeros(0, bool), first,
                          np.array([len(c) for c in chips], np.int64))


@dataclass(frozen=True, eq=False)
class FrameFits:
    """The matched edges and the per-frame fits.

    Per ideal edge (arrays as long as ``ideal.tau_us``): ``match`` (index into the
    capture's toggles, -1: none), ``used`` (matched and no outlier), ``residual_us``
    (captured - fitted, NaN where not matched).
    Per frame: ``coef`` (F x 4: a, B, C, beta), ``tau_mid_us``, ``xtx_inv`` (F x 4 x 4,
    the fit's (X'X)^-1), ``n_used``, ``ok`` (fitted: enough edges), ``span_us`` (captured
    times of the first and last ideal edge, F x 2, from the fit).
    ``sigma_us``: pooled residual standard deviation, ``dof`` its degrees of freedom.
    """

    ideal: IdealEdges
    match: np.ndarray
    used: np.ndarray
    residual_us: np.ndarray
    coef: np.ndarray
    tau_mid_us: np.ndarray
    xtx_inv: np.ndarray
    n_used: np.ndarray
    ok: np.ndarray
    span_us: np.ndarray
    sigma_us: float
    dof: int
    outliers: int

    def predict(self, frame: np.ndarray, tau_us: np.ndarray, falling: np.ndarray | None = None
                ) -> np.ndarray:
        """Return the fitted capture time of ideal times ``tau_us`` of frames ``frame``
        (``falling`` None: the mark-bias term left out)."""
        return _predict(self.coef, self.tau_mid_us, frame, tau_us, falling)


def _predict(coef: np.ndarray, tau_mid_us: np.ndarray, frame: np.ndarray, tau_us: np.ndarray,
             falling: np.ndarray | None) -> np.ndarray:
    c = coef[frame]
    u = (tau_us - tau_mid_us[frame]) / 1000.0
    t = c[:, 0] + c[:, 1] * u + c[:, 2] * u * u
    if falling is not None:
        t = t + c[:, 3] * falling
    return t


def _design(u: np.ndarray, falling: np.ndarray) -> np.ndarray:
    return np.stack((np.ones_like(u), u, u * u, falling.astype(float)), axis=1)


def _nearest_same_polarity(cap: CaptureEdges, t_pred: np.ndarray, rising: np.ndarray,
                           tol_us: np.ndarray) -> np.ndarray:
    """Return for each predicted edge the index of the nearest captured toggle of its
    polarity within ``tol_us`` (-1 when none)."""
    out = np.full(t_pred.size, -1, np.int64)
    for pol in (True, False):
        sel = np.flatnonzero(rising == pol)
        idx = np.flatnonzero(cap.rising == pol)
        if sel.size == 0 or idx.size == 0:
            continue
        t = cap.t_us[idx]
        j = np.clip(np.searchsorted(t, t_pred[sel]), 1, t.size - 1) if t.size > 1 \
            else np.zeros(sel.size, np.int64)
        left = np.abs(t[j - 1] - t_pred[sel]) if t.size > 1 else np.full(sel.size, np.inf)
        right = np.abs(t[j] - t_pred[sel])
        best = np.where(left < right, j - 1, j) if t.size > 1 else j
        dist = np.minimum(left, right)
        good = dist <= tol_us[sel]
        out[sel[good]] = idx[best[good]]
    return out


def _solve(ideal: IdealEdges, t_cap: np.ndarray, used: np.ndarray, n_frames: int
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Return (coef, tau_mid, (X'X)^-1, n_used, ok) of the per-frame least-squares fits."""
    f = ideal.frame[used]
    n_used = np.bincount(f, minlength=n_frames)
    tau_mid = np.bincount(f, ideal.tau_us[used], minlength=n_frames) / np.maximum(n_used, 1)
    u = (ideal.tau_us[used] - tau_mid[f]) / 1000.0
    x = _design(u, ~ideal.rising[used])
    xtx = np.zeros((n_frames, N_PARAMS, N_PARAMS))
    xty = np.zeros((n_frames, N_PARAMS))
    for i in range(N_PARAMS):
        xty[:, i] = np.bincount(f, x[:, i] * t_cap, minlength=n_frames)
        for j in range(i, N_PARAMS):
            xtx[:, i, j] = xtx[:, j, i] = np.bincount(f, x[:, i] * x[:, j], minlength=n_frames)
    ok = n_used >= MIN_EDGES
    ok &= np.bincount(f, x[:, 3], minlength=n_frames) >= 2  # falling edges to fit beta
    ok &= np.linalg.cond(np.where(ok[:, None, None], xtx, np.eye(N_PARAMS))) < 1e12
    xtx[~ok] = np.eye(N_PARAMS)
    inv = np.linalg.inv(xtx)
    coef = np.einsum("fij,fj->fi", inv, xty)
    coef[~ok] = np.nan
    return coef, tau_mid, inv, n_used, ok


def fit_frames(plan: FramePlan, cap: CaptureEdges, values: list[dict[str, object]],
               start_us: np.ndarray, unit_us: np.ndarray, settle_us: float = 0.0
               ) -> FrameFits:
    """Return the matched edges and fits of the frames with field ``values`` that the
    decoder found at ``start_us`` with chip ``unit_us`` (capture times). Ideal edges
    earlier than ``settle_us`` into a frame are matched but left out of the fit (a
    receiver's slicer settles there)."""
    ideal = IdealEdges.of(plan, values)
    settled = ideal.tau_us >= settle_us
    n = len(values)
    f = ideal.frame
    scale = np.asarray(unit_us, float) / plan.unit_us
    t_pred = np.asarray(start_us, float)[f] + ideal.tau_us * scale[f]
    tol = MATCH_UNITS * np.asarray(unit_us, float)[f]
    t_cap = cap.t_us
    for rnd in range(3):  # match, fit, predict with the fit and match again
        match = _nearest_same_polarity(cap, t_pred, ideal.rising, tol)
        used = _one_to_one(match) & settled
        coef, tau_mid, inv, n_used, ok = _solve(ideal, t_cap[match[used]], used, n)
        used &= ok[f]
        if rnd < 2:
            t_pred = np.where(ok[f], _predict(coef, tau_mid, f, ideal.tau_us, ~ideal.rising),
                              t_pred)
    r = t_cap[match[used]] - _predict(coef, tau_mid, f[used], ideal.tau_us[used],
                                      ~ideal.rising[used])
    outliers = 0
    if r.size:
        robust = 1.4826 * float(np.median(np.abs(r - np.median(r))))
        bad = np.abs(r) > OUTLIER_SIGMAS * max(robust, 1e-9)
        if bad.any():
            outliers = int(bad.sum())
            used[np.flatnonzero(used)[bad]] = False
            coef, tau_mid, inv, n_used, ok = _solve(ideal, t_cap[match[used]], used, n)
            used &= ok[f]
    resid = np.full(ideal.tau_us.size, np.nan)
    resid[used] = t_cap[match[used]] - _predict(coef, tau_mid, f[used], ideal.tau_us[used],
                                                ~ideal.rising[used])
    dof = int(used.sum()) - N_PARAMS * int(ok.sum())
    r = resid[used]
    sigma = float(np.sqrt(np.sum(r * r) / dof)) if dof > 0 else float("nan")
    span = np.full((n, 2), np.nan)
    fi = np.flatnonzero(ok & (ideal.first[1:] > ideal.first[:-1]))
    span[fi, 0] = _predict(coef, tau_mid, fi, ideal.tau_us[ideal.first[fi]], None)
    span[fi, 1] = _predict(coef, tau_mid, fi, ideal.tau_us[ideal.first[fi + 1] - 1], None)
    return FrameFits(ideal, match, used, resid, coef, tau_mid, inv, n_used, ok, span, sigma,
                     dof, outliers)


def _one_to_one(match: np.ndarray) -> np.ndarray:
    """Return the mask of matched edges, each captured toggle taken by its first claimant."""
    used = match >= 0
    _, first_use = np.unique(match[used], return_index=True)
    keep = np.zeros(int(used.sum()), bool)
    keep[first_use] = True
    used[np.flatnonzero(used)[~keep]] = False
    return used
