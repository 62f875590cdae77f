"""Figures of a frame design (matplotlib, Agg): timing diagram and baseband PSD as PNG bytes;
and a sampled capture through the front end (samples, envelope, thresholds, pulses).

Figures are built with the object-oriented API (``matplotlib.figure.Figure``), so no global
pyplot state or interactive backend is touched.
"""

from __future__ import annotations

import io
from collections.abc import Mapping

import numpy as np
from matplotlib.figure import Figure

from .frame import body_bits, field_bits, frame_chips, raw_values
from .plan import FramePlan, as_plan
from .spec.model import FrameSpec

_COLOURS = {"preamble": "tab:blue", "sync": "tab:orange", "fields": "tab:green",
            "check": "tab:red"}
#: bits of the body shown after the sync in the zoomed panel of the timing diagram
ZOOM_BODY_BITS = 24


class _OnAir:
    """On-air bits of one frame (after stuffing) and how many chips any prefix of them takes."""

    def __init__(self, plan: FramePlan, values: Mapping[str, object]) -> None:
        self.lc = plan.line_code
        body = body_bits(plan, values)
        n_fields = field_bits(plan, raw_values(plan, values)).size
        stuffed = self.lc.stuff(body)
        self.n_head = plan.head_bits.size
        self.n_fields = self.lc.stuff(body[:n_fields]).size if n_fields else 0
        self.bits = np.concatenate((plan.head_bits, stuffed))
        self.n_chips = self.lc.encode(self.bits).size
        self._lead = self.lc.encode(np.zeros(0, np.uint8)).size  # e.g. an appended stop mark

    def chips_before(self, n_bits: int) -> int:
        """Chips sent before on-air bit ``n_bits`` (a partial block at the code's fixed rate)."""
        if n_bits >= self.bits.size:
            return self.n_chips
        if n_bits % self.lc.bits_per_block:
            return round(n_bits * self.lc.units_per_bit)
        return self.lc.encode(self.bits[:n_bits]).size - self._lead


def section_spans_us(spec: FrameSpec | FramePlan, values: Mapping[str, object]
                     ) -> list[tuple[str, float, float]]:
    """Return (section, start_us, stop_us) of preamble, sync, fields and check on air.

    Bit stuffing is counted with the section whose bits caused it; a stop mark the line code
    appends belongs to the last section. Empty sections are left out.
    """
    plan = as_plan(spec)
    spec = plan.spec
    air = _OnAir(plan, values)
    stops = [spec.preamble.length_bits, air.n_head, air.n_head + air.n_fields]
    edges = [0] + [air.chips_before(b) for b in stops] + [air.n_chips]
    return [(name, a * spec.unit_us, b * spec.unit_us)
            for name, a, b in zip(("preamble", "sync", "fields", "check"), edges[:-1], edges[1:],
                                  strict=True) if b > a]


def _draw_levels(ax, chips: np.ndarray, unit_us: float, spans, stop_us: float) -> None:
    n = min(chips.size, int(np.ceil(stop_us / unit_us - 1e-9)))
    t = np.arange(n + 1) * unit_us
    lv = np.append(chips[:n], chips[n - 1]).astype(float)
    ax.step(t, lv, where="post", color="black", linewidth=1.0)
    ax.fill_between(t, lv, step="post", color="0.6", alpha=0.5)
    for name, a, b in spans:
        if a >= t[-1]:
            continue
        b = min(b, t[-1])
        ax.axvspan(a, b, color=_COLOURS[name], alpha=0.15, linewidth=0)
        if b - a > 0.04 * t[-1]:  # label only spans wide enough to hold it
            ax.text((a + b) / 2, 1.12, name, ha="center", va="bottom", fontsize=8,
                    color=_COLOURS[name])
    ax.set_xlim(0, t[-1])
    ax.set_ylim(-0.15, 1.35)
    ax.set_yticks([0, 1], ["space", "mark"])
    ax.set_xlabel("time (µs)")


def timing_figure(spec: FrameSpec | FramePlan, values: Mapping[str, object]) -> Figure:
    """Return a two-panel timing diagram: the whole first frame, and its start (preamble,
    sync and the first body bits) chip by chip; levels against µs, sections shaded."""
    plan = as_plan(spec)
    spec = plan.spec
    chips = frame_chips(plan, values)
    spans = section_spans_us(plan, values)
    frame_us = chips.size * spec.unit_us
    air = _OnAir(plan, values)
    zoom_us = air.chips_before(air.n_head + ZOOM_BODY_BITS) * spec.unit_us
    fig = Figure(figsize=(11, 5.5), layout="constrained")
    top, bottom = fig.subplots(2, 1)
    _draw_levels(top, chips, spec.unit_us, spans, frame_us)
    top.set_title(f"{spec.name}: one frame, {spec.line_code.name}, unit {spec.unit_us:g} µs, "
                  f"{frame_us / 1000:.2f} ms (x{spec.repeats} per transmission)", fontsize=10)
    _draw_levels(bottom, chips, spec.unit_us, spans, zoom_us)
    bottom.set_title(f"start of the frame: first {zoom_us / 1000:.2f} ms", fontsize=10)
    return fig


def psd_figure(spec: FrameSpec, rng: np.random.Generator) -> Figure:
    """Return the baseband PSD (dB relative to its peak against kHz) with the 99 % bandwidth.

    ``rng`` draws the payloads of the plotted curve; the marked bandwidth is
    ``bandwidth_hz(spec)``, the figure ``check`` and ``airtime`` report.
    """
    from .analysis.spectrum import bandwidth_hz, baseband_psd

    b99_hz = bandwidth_hz(spec)
    f_hz, psd = baseband_psd(spec, rng, max_freq_hz=max(1.5 * b99_hz, 4e6 / spec.unit_us))
    db = 10.0 * np.log10(np.maximum(psd / psd.max(), 1e-12))
    fig = Figure(figsize=(10, 4.5), layout="constrained")
    ax = fig.subplots()
    ax.plot(f_hz / 1e3, db, color="tab:blue", linewidth=0.8)
    ax.axvline(b99_hz / 1e3, color="tab:red", linestyle="--", linewidth=1.0)
    ax.text(b99_hz / 1e3, -5, f" 99 % bandwidth {b99_hz / 1e3:.1f} kHz", color="tab:red",
            ha="left", va="top", fontsize=9)
    ax.set_xlim(0, f_hz[-1] / 1e3)
    ax.set_ylim(-60, 3)
    ax.set_xlabel("frequency (kHz), one-sided baseband")
    ax.set_ylabel("PSD (dB re peak)")
    ax.set_title(f"{spec.name}: keyed baseband PSD, AC part (DC line removed), random payloads, "
                 "ideal rectangular keying", fontsize=10)
    ax.grid(True, alpha=0.3)
    return fig


#: points drawn per line at most; longer lines are drawn as the minimum and maximum of each
#: of half as many buckets (every spike stays visible)
MAX_LINE_POINTS = 20_000


def _drawn(t: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return (t, y) as drawn: the line itself, or its min and max per bucket when long."""
    if y.size <= MAX_LINE_POINTS:
        return t, y
    starts = np.arange(0, y.size, -(-y.size // (MAX_LINE_POINTS // 2)))
    lo_hi = np.stack((np.minimum.reduceat(y, starts), np.maximum.reduceat(y, starts)),
                     axis=1).ravel()
    return np.repeat(t[starts], 2), lo_hi


def capture_figure(trace, title: str) -> Figure:
    """Return a two-panel figure of a ``SliceTrace`` against ms from the capture start: top,
    the samples (their magnitude for I/Q), the smoothed envelope, the high and low
    thresholds and the tracked carrier and floor; bottom, the sliced pulses."""
    fig = Figure(figsize=(11, 6), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1))
    ms = 1e3
    label = "|I + jQ|" if trace.is_complex else "samples"
    top.plot(*_scaled(_drawn(trace.sample_time_s, trace.samples), ms), color="0.7",
             linewidth=0.6, label=label)
    t_env = trace.envelope_time_s
    for name, y, style in (
            ("envelope", trace.envelope, {"color": "tab:blue", "linewidth": 1.0}),
            ("threshold high", trace.high, {"color": "tab:red", "linewidth": 0.9}),
            ("threshold low", trace.low, {"color": "tab:orange", "linewidth": 0.9}),
            ("carrier", trace.carrier, {"color": "tab:green", "linewidth": 0.7,
                                        "linestyle": ":"}),
            ("floor", trace.floor, {"color": "tab:purple", "linewidth": 0.7,
                                    "linestyle": ":"})):
        if not np.isfinite(y).any():
            continue  # fixed thresholds track no levels; all squelched has no threshold
        y = np.where(np.isfinite(y), y, np.nan)  # squelched (+inf): a gap in the line
        top.plot(*_scaled(_drawn(t_env, y), ms), label=name, **style)
    top.set_ylabel("full scale 1.0")
    top.legend(loc="upper right", fontsize=8, ncols=3)
    top.grid(True, alpha=0.3)
    top.set_title(title, fontsize=10)
    p = trace.pulses
    edges_us = trace.pulses_start_us + np.concatenate(([0.0], np.cumsum(p.durations_us)))
    if len(p):
        lv = np.append(p.levels, p.levels[-1]).astype(float)
        bottom.step(edges_us / 1e3, lv, where="post", color="black", linewidth=1.0,
                    label="sliced pulses")
    bottom.set_xlim(trace.start_s * ms, trace.stop_s * ms)
    bottom.set_ylim(-0.15, 1.15)
    bottom.set_yticks([0, 1], ["space", "mark"])
    bottom.set_xlabel("time from the capture start (ms)")
    bottom.set_title(f"sliced pulses: {len(p)} in the window", fontsize=9)
    return fig


def _scaled(tv: tuple[np.ndarray, np.ndarray], factor: float) -> tuple[np.ndarray, np.ndarray]:
    return tv[0] * factor, tv[1]


def figure_png(fig: Figure, dpi: int = 110) -> bytes:
    """Return the figure rendered as PNG bytes."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()
