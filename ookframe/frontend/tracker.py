"""Level trackers and the hysteresis comparator of the adaptive data slicer, vectorised.

A receiver's data slicer holds the carrier level with a peak detector and the noise floor
with a valley detector (fast attack, slow decay) and sets its threshold between them
(common practice, no source). Here both detectors decay exponentially towards the slow
mean ``m`` of the envelope (a one-pole average, ``lfilter``):

    peak[n]   = m[n] + y[n],  y[n] = max(e[n] - m[n], d * y[n-1], 0)
    valley[n] = m[n] - z[n],  z[n] = max(m[n] - e[n], d * z[n-1], 0)

with ``d = exp(-1 / (decay_us * rate))``. The recursion ``y[n] = max(u[n], d y[n-1])``
has the closed form ``y[n] = d^n max_k u[k] d^-k``: one ``np.maximum.accumulate``
over ``u d^-k``, no per-sample loop (in sub-blocks short enough for ``d^-k`` to stay
finite). The comparator's state (mark while above the high threshold, space below the low
one, else unchanged) is the last decisive sample's side: ``compare`` gives it per sample
(a running maximum of the decisive indices), ``changes`` only where it changes (from the
places where the envelope enters either side), which is all the slicer's fast path needs.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, replace

import numpy as np
from scipy import signal

from ._workspace import Workspace
from .config import FrontEndConfig


@dataclass(frozen=True)
class TrackerState:
    """Carried from block to block: mean filter state, peak and valley offsets (>= 0),
    attack filter states, the comparator state and the last envelope sample."""

    mean_zi: np.ndarray
    peak_offset: float
    valley_offset: float
    attack_zi: np.ndarray | None
    mark: bool
    last_e: float


@dataclass(frozen=True)
class Tracked:
    """One block's thresholds (``high``, ``low``), tracked ``carrier`` and ``floor``
    levels, the comparator output ``marks`` and the ``squelched`` samples."""

    high: np.ndarray
    low: np.ndarray
    carrier: np.ndarray
    floor: np.ndarray
    marks: np.ndarray
    squelched: np.ndarray


def decay_factor(time_constant_us: float, rate_hz: float) -> float:
    """Return the per-sample factor of an exponential with ``time_constant_us`` at ``rate_hz``."""
    return float(np.exp(-1e6 / (time_constant_us * rate_hz)))


def start_state(first_e: float, config: FrontEndConfig, rate_hz: float) -> TrackerState:
    """Return the state before the first sample: mean and both detectors settled at
    ``first_e`` (``lfilter``'s ``zi`` of a one-pole average at rest at x is d * x)."""
    attack = None
    if config.attack_us > 0:
        a = decay_factor(config.attack_us, rate_hz)
        attack = np.array([[a * first_e], [a * first_e]], dtype=np.float64)
    d = decay_factor(config.decay_us, rate_hz)
    return TrackerState(np.array([d * first_e]), 0.0, 0.0, attack, False, float(first_e))


#: largest exponent a sub-block's rescaling may reach (e^600 stays well inside float64)
_MAX_EXPONENT = 600.0


@functools.lru_cache(maxsize=16)
def _decay_rows(d: float, length: int, sign: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Return (sign d^-k, d^k) for k = 0..length-1, read-only (cached per decay factor)."""
    k = np.arange(length, dtype=np.float64)
    up, down = sign * np.exp(-k * np.log(d)), np.exp(k * np.log(d))
    up.flags.writeable = down.flags.writeable = False
    return up, down


#: samples per chunk of ``_running_max``
_CHUNK = 128


def _running_max(v: np.ndarray, scale: np.ndarray | None = None) -> None:
    """Replace ``v`` by its running maximum, in place (``np.maximum.accumulate``, exactly),
    times ``scale`` (same length) when given.

    ``accumulate`` goes sample by sample; here each chunk's maximum comes from a fast
    reduction and only chunks holding a new maximum of everything before them are
    accumulated (a peak hold sees few: its input seldom tops the decayed peak); the rest
    hold the maximum before them, written with the scaling in the same pass.
    """
    c = v.size // _CHUNK
    if c < 2:
        np.maximum.accumulate(v, out=v)
        if scale is not None:
            np.multiply(v, scale, out=v)
        return
    body = v[:c * _CHUNK].reshape(c, _CHUNK)
    top = body.max(axis=1)
    upto = np.maximum.accumulate(top)
    before = np.empty(c)
    before[0] = -np.inf
    before[1:] = upto[:-1]
    new = np.flatnonzero(top > before)
    rows = body[new]
    np.maximum.accumulate(rows, axis=1, out=rows)
    np.maximum(rows, before[new, None], out=rows)
    if scale is None:
        body[:] = before[:, None]
    else:
        factors = scale[:c * _CHUNK].reshape(c, _CHUNK)
        np.multiply(before[:, None], factors, out=body)
        np.multiply(rows, factors[new], out=rows)
    body[new] = rows
    tail = v[c * _CHUNK:]
    if tail.size:
        tail[0] = max(tail[0], upto[-1])
        np.maximum.accumulate(tail, out=tail)
        if scale is not None:
            np.multiply(tail, scale[c * _CHUNK:], out=tail)


def _held(u: np.ndarray, start: float, d: float, sign: float = 1.0,
          out: np.ndarray | None = None) -> np.ndarray:
    """Return ``y[n] = max(sign u[n], d y[n-1], 0)`` with ``y[-1] = start >= 0`` (in
    ``out`` if given).

    Closed form per sub-block of ``L`` samples: ``y[k] = d^k max(start d, max_j<=k u[j]
    d^-j)``, with ``L`` short enough that ``d^-L`` stays finite; the sub-blocks are chained
    through their last value (a loop over sub-blocks, not samples). The floor at 0 needs no
    pass of its own: the carry ``start d >= 0`` enters the running maximum at the first
    sample. ``sign = -1`` holds ``-u`` without a negated copy (negation is exact).
    """
    n = u.size
    length = int(min(n, max(1.0, _MAX_EXPONENT // max(-np.log(d), 1e-300))))
    length = max(length, 1)
    up, down = _decay_rows(d, length, sign)
    out = np.empty(n, np.float64) if out is None else out
    carry = start
    for a in range(0, n, length):
        seg = out[a:a + length]
        m = seg.size
        np.multiply(u[a:a + m], up[:m], out=seg)
        seg[0] = max(seg[0], carry * d, 0.0)
        _running_max(seg, down[:m])  # y = d^k times the running maximum
        carry = float(seg[-1])
    return out


@dataclass(frozen=True)
class Levels:
    """One block's thresholds (``high``, ``low``), tracked ``carrier`` and ``floor`` levels
    and the ``squelched`` samples (contrast below ``min_contrast``), before the comparator."""

    high: np.ndarray
    low: np.ndarray
    carrier: np.ndarray
    floor: np.ndarray
    squelched: np.ndarray


def levels(e: np.ndarray, state: TrackerState, config: FrontEndConfig, rate_hz: float,
           work: Workspace | None = None) -> tuple[Levels, TrackerState]:
    """Return the trackers' levels and thresholds over envelope block ``e`` (sampled at
    ``rate_hz``) and the state for the next block (the comparator's part unchanged).

    With ``work`` the arrays returned live in its buffers: valid until the next call."""
    if config.fixed:
        high = np.full(e.size, float(config.threshold_high))  # type: ignore[arg-type]
        low = np.full(e.size, float(config.threshold_low))  # type: ignore[arg-type]
        carrier = floor = np.full(e.size, np.nan)
        squelched = np.zeros(e.size, bool)
        return Levels(high, low, carrier, floor, squelched), state
    d = decay_factor(config.decay_us, rate_hz)
    work = work or Workspace()
    n = e.size
    m, mean_zi = signal.lfilter([1.0 - d], [1.0, -d], e, zi=state.mean_zi)
    u = np.subtract(e, m, out=work.get("u", n))
    y = _held(u, state.peak_offset, d, 1.0, work.get("y", n))
    z = _held(u, state.valley_offset, d, -1.0, work.get("z", n))  # m - e = -(e - m) exactly
    peak_off = float(y[-1]) if y.size else state.peak_offset
    valley_off = float(z[-1]) if z.size else state.valley_offset
    carrier = np.add(m, y, out=y)
    floor = np.subtract(m, z, out=z)
    attack_zi = state.attack_zi
    if attack_zi is not None:
        a = decay_factor(config.attack_us, rate_hz)
        both, attack_zi = signal.lfilter([1.0 - a], [1.0, -a], np.stack((carrier, floor)),
                                         axis=1, zi=attack_zi)
        carrier, floor = both[0], both[1]
    contrast = np.subtract(carrier, floor, out=m)  # the mean is spent
    lo_frac = config.threshold_fraction - config.hysteresis / 2
    low = np.multiply(contrast, lo_frac, out=u)
    np.add(floor, low, out=low)
    high = np.multiply(contrast, config.hysteresis, out=work.get("high", n))
    np.add(low, high, out=high)
    if config.min_contrast == 0 and attack_zi is None:
        # carrier m + y >= m >= floor m - z also after rounding (y, z >= 0): contrast >= 0
        squelched = work.zeros("none_squelched", n, np.bool_)
    else:
        squelched = np.less(contrast, config.min_contrast,
                            out=work.get("squelched", n, np.bool_))
    if config.min_contrast > 0 and squelched.any():
        high[squelched] = np.inf
        low[squelched] = np.inf
    new = TrackerState(mean_zi, peak_off, valley_off, attack_zi, state.mark, state.last_e)
    return Levels(high, low, carrier, floor, squelched), new


def track(e: np.ndarray, state: TrackerState, config: FrontEndConfig,
          rate_hz: float) -> tuple[Tracked, TrackerState]:
    """Return the slicer's view of envelope block ``e`` (sampled at ``rate_hz``), every
    sample's levels, thresholds and comparator output, and the state for the next block
    (the slicer's fast path, ``changes``, skips the per-sample comparator output)."""
    lv, new = levels(e, state, config, rate_hz)
    marks = compare(e, lv.high, lv.low, state.mark)
    new = replace(new, mark=bool(marks[-1]) if marks.size else state.mark,
                  last_e=float(e[-1]) if e.size else state.last_e)
    return Tracked(lv.high, lv.low, lv.carrier, lv.floor, marks, lv.squelched), new


def compare(e: np.ndarray, high: np.ndarray, low: np.ndarray, mark: bool) -> np.ndarray:
    """Return the hysteresis comparator's output: True from a sample above ``high`` until one
    below ``low``; ``mark`` is the state before ``e[0]``."""
    above = e > high
    decisive = above | (e < low)
    idx = np.where(decisive, np.arange(e.size), -1)
    last = np.maximum.accumulate(idx) if e.size else idx
    return np.where(last >= 0, above[last], mark)


def _entries(side: np.ndarray) -> np.ndarray:
    """Return the indices where ``side`` turns True (index 0 when ``side[0]``)."""
    turns = np.flatnonzero(side[1:] != side[:-1]) + 1
    turns = turns[side[turns]]
    return np.concatenate(([0], turns)) if side.size and side[0] else turns


def changes(e: np.ndarray, high: np.ndarray, low: np.ndarray, mark: bool) -> np.ndarray:
    """Return the indices where the comparator ``compare(e, high, low, mark)`` changes state
    (against the sample before; ``mark`` before ``e[0]``), without its per-sample output.

    The state is the side of the last decisive sample, so it can only change where ``e``
    enters the region above ``high`` or below ``low``; it changes at an entry whose side
    differs from the previous entry's (or from ``mark`` for the first).
    """
    ups, downs = _entries(e > high), _entries(e < low)
    at = np.concatenate((ups, downs))
    side = np.concatenate((np.ones(ups.size, bool), np.zeros(downs.size, bool)))
    order = np.argsort(at, kind="stable")
    at, side = at[order], side[order]
    before = np.concatenate(([mark], side[:-1]))
    return at[side != before]


def edge_positions(e: np.ndarray, idx: np.ndarray, marks_at: np.ndarray, high: np.ndarray,
                   low: np.ndarray, last_e: float) -> np.ndarray:
    """Return the position of every comparator change ``idx`` (the first sample of the new
    state, ``marks_at`` that state): the crossing of its threshold interpolated between the
    sample before (``last_e`` for the first of the block) and it, as a fraction in (0, 1]
    (position = index - 1 + fraction)."""
    if idx.size == 0:
        return np.zeros(0)
    e_prev = np.where(idx > 0, e[idx - 1], last_e)
    e_now = e[idx]
    thr = np.where(marks_at, high[idx], low[idx])
    step = e_now - e_prev
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(step != 0, (thr - e_prev) / step, 1.0)
    frac = np.clip(np.nan_to_num(frac, nan=1.0, posinf=1.0, neginf=1.0), 1e-6, 1.0)
    return idx - 1 + frac
