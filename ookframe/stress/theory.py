"""Closed-form and numerical expectations that the Monte Carlo runs are checked against."""

from __future__ import annotations

import math

import numpy as np

from ..plan import FramePlan, as_plan, spec_of
from ..spec.model import FrameSpec


def width_misread_prob(sigma_us: float, unit_us: float, margin_units: float = 0.5) -> float:
    """Return the probability that one pulse width is misread by a fixed-threshold
    classifier (known clock, thresholds half a unit either side of each nominal width).

    A width is the difference of two independent N(0, σ²) edge errors, so its error is
    N(0, 2σ²); misread when |error| > ``margin_units`` * unit: 2 * Q(m u / (√2 σ)).
    """
    if sigma_us <= 0:
        return 0.0
    from scipy.stats import norm  # slow import: only when the figure is computed

    return float(2.0 * norm.sf(margin_units * unit_us / (math.sqrt(2.0) * sigma_us)))


def widths_error_prob(
    n_widths: int, sigma_us: float, unit_us: float, margin_units: float = 0.5,
    *, grid_points: int = 4001,
) -> float:
    """Return the probability that at least one of ``n_widths`` consecutive pulse widths
    is misread (same classifier as ``width_misread_prob``).

    Consecutive widths share an edge, so they are not independent. With edge errors
    e_0..e_n i.i.d. N(0, σ²), P(all read) = ∫ φ(e_0) Π_k φ(e_k) 1{|e_k - e_(k-1)| < h} de,
    h = margin * unit: a Markov chain over the edge error. Each step
    f_k(y) = φ(y) ∫_{y-h}^{y+h} f_(k-1)(x) dx is evaluated on a grid over ±10σ through
    the running integral of f (trapezoid rule, linear interpolation).
    """
    if n_widths <= 0 or sigma_us <= 0:
        return 0.0
    from scipy.stats import norm  # slow import: only when the figure is computed

    h = margin_units * unit_us
    x = np.linspace(-10 * sigma_us, 10 * sigma_us, grid_points)
    dx = x[1] - x[0]
    phi = norm.pdf(x, scale=sigma_us)
    f = phi
    for _ in range(n_widths):
        cum = np.concatenate(([0.0], np.cumsum((f[1:] + f[:-1]) * (dx / 2))))
        f = phi * (np.interp(x + h, x, cum) - np.interp(x - h, x, cum))
    total = float(np.sum((f[1:] + f[:-1]) * (dx / 2)))
    return float(np.clip(1.0 - total, 0.0, 1.0))


def bit_rate_bps(spec: FrameSpec | FramePlan) -> float:
    """Return the data bit rate (bit/s) of ``spec``: 1e6 / (unit_us * chips per bit)."""
    plan = as_plan(spec)
    return 1e6 / (plan.unit_us * plan.line_code.units_per_bit)


def sync_hit_prob(spec: FrameSpec | FramePlan) -> float:
    """Return the probability that ``length_bits`` random bits match the sync word with at
    most ``max_errors`` differences: Σ_{i<=k} C(L, i) / 2^L."""
    sync = spec_of(spec).sync
    n, k = sync.length_bits, sync.max_errors
    return sum(math.comb(n, i) for i in range(k + 1)) / 2.0**n


def expected_false_frames_per_hour(spec: FrameSpec | FramePlan) -> tuple[float, float]:
    """Return (sync hits, frames passing the check) per hour expected from random bits at
    the spec's bit rate: one sync test per bit, a hit passing the check with 2^-width."""
    plan = as_plan(spec)
    hits = bit_rate_bps(plan) * 3600.0 * sync_hit_prob(plan)
    return hits, hits * 2.0 ** -plan.n_check_bits
