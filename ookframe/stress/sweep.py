"""PER against one impairment over a grid, for one or more specs (designs side by side)."""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass

import numpy as np

from ..channel import ChannelSpec, impairment_names
from ..channel.physical import PhysicalChannel
from ..errors import ValueRangeError
from ..plan import FramePlan, spec_of
from ..spec.model import FrameSpec
from .runner import (
    DEFAULT_CHUNK_FRAMES,
    Counts,
    Decoder,
    StressResult,
    chunk_limit,
    chunk_plan,
    map_unordered,
    pool_for,
    run_chunk,
    run_stress,
    stress_result,
)

#: most grid points of one sweep (each point is a full stress run)
MAX_POINTS = 200
#: glitch width, in symbol units, used when glitches are varied on a channel that sets no
#: width: half a unit, wider than the decoder's default glitch filter (0.3 unit), so the
#: glitches reach the decoder
GLITCH_WIDTH_UNITS = 0.5
#: what a sweep over the physical link varies: where the receiver stands
PHYSICAL_PARAMETERS: tuple[str, ...] = ("distance_m", "rx_power_dbm")


def parameter_names(channel: ChannelSpec | PhysicalChannel) -> list[str]:
    """Return the names a sweep over ``channel`` may vary."""
    if isinstance(channel, PhysicalChannel):
        return list(PHYSICAL_PARAMETERS)
    return impairment_names()


def channel_at(spec: FrameSpec | FramePlan, channel: ChannelSpec | PhysicalChannel, name: str,
               value: float) -> ChannelSpec | PhysicalChannel:
    """Return ``channel`` with impairment ``name`` set to ``value``; varying
    ``glitch_rate_per_ms`` on a channel without ``glitch_width_us`` also sets the width to
    ``GLITCH_WIDTH_UNITS`` of the spec's unit. A physical channel is moved to distance or
    received power ``value``."""
    if isinstance(channel, PhysicalChannel):
        if name not in PHYSICAL_PARAMETERS:
            raise ValueRangeError(f"a physical-link sweep varies one of "
                                  f"{', '.join(PHYSICAL_PARAMETERS)}, not {name!r}")
        return channel.at(**{name: float(value)})
    changes = {name: float(value)}
    if name == "glitch_rate_per_ms" and value > 0 and channel.glitch_width_us <= 0:
        changes["glitch_width_us"] = GLITCH_WIDTH_UNITS * spec_of(spec).unit_us
    return channel.with_(**changes)


def parse_vary(text: str, names: Sequence[str] | None = None) -> tuple[str, tuple[float, ...]]:
    """Return (impairment, grid) from ``NAME=START:STOP:COUNT`` (COUNT points, both ends
    included) or ``NAME=V1,V2,...``; NAME one of ``names`` (default: the impairments)."""
    allowed = list(names) if names is not None else impairment_names()
    name, sep, grid = text.partition("=")
    name = name.strip()
    if not sep or name not in allowed:
        raise ValueRangeError(
            f"--vary {text!r}: expected NAME=START:STOP:COUNT with NAME one of "
            f"{', '.join(allowed)}"
        )
    try:
        if ":" in grid:
            start, stop, count = grid.split(":")
            n = int(count)
            if not 1 <= n <= MAX_POINTS:
                raise ValueError
            values = tuple(float(v) for v in np.linspace(float(start), float(stop), n))
        else:
            values = tuple(float(v) for v in grid.split(","))
    except ValueError:
        raise ValueRangeError(
            f"--vary {text!r}: the grid must be START:STOP:COUNT (COUNT 1..{MAX_POINTS}) or "
            "V1,V2,..."
        ) from None
    if not values or len(values) > MAX_POINTS:
        raise ValueRangeError(f"--vary {text!r}: 1..{MAX_POINTS} values allowed")
    return name, values


@dataclass(frozen=True)
class SweepResult:
    """``results[s][k]``: stress result of spec ``specs[s]`` at ``values[k]`` of
    ``parameter`` (every other impairment as in ``channel``)."""

    parameter: str
    values: tuple[float, ...]
    specs: tuple[str, ...]
    channel: ChannelSpec | PhysicalChannel
    results: tuple[tuple[StressResult, ...], ...]

    def to_dict(self) -> dict[str, object]:
        """Return the sweep as a JSON-ready dict (a physical link's points also carry
        their received power and margin)."""
        return {
            "parameter": self.parameter,
            "values": list(self.values),
            "channel": self.channel.to_dict(),
            "specs": [
                {"spec": name, "points": [
                    {"value": v, "frames": r.frames, "ok": r.ok, "per": r.per,
                     "per_ci95": list(r.per_ci95), "false_accepts": r.false_accepts,
                     **_link_figures(r.channel)}
                    for v, r in zip(self.values, rows, strict=True)]}
                for name, rows in zip(self.specs, self.results, strict=True)
            ],
        }


def _link_figures(channel: ChannelSpec | PhysicalChannel) -> dict[str, float]:
    """Return received power and margin of a physical channel (nothing for the
    pulse-level model)."""
    if not isinstance(channel, PhysicalChannel):
        return {}
    return {"received_dbm": channel.received_dbm, "margin_db": channel.margin_db}


def run_sweep(
    specs: Sequence[FrameSpec | FramePlan],
    channel: ChannelSpec | PhysicalChannel,
    parameter: str,
    values: Sequence[float],
    n_frames: int,
    *,
    seed: int = 0,
    executor: Executor | None = None,
    workers: int = 1,
    chunk_frames: int = DEFAULT_CHUNK_FRAMES,
    progress: Callable[[int], None] | None = None,
    decoder: Decoder | None = None,
) -> SweepResult:
    """Return PER of every spec at every value of ``parameter`` (same seed at each point,
    so curves are smooth: common random numbers; channel per point by :func:`channel_at`).
    Parallel as ``run_stress``; with a pool or executor the chunks of all points are
    submitted together, so a cluster works on every point at once. ``decoder``: as in
    ``run_stress`` (default the reference decoder; e.g. ``codegen.host_rx.decode_c``)."""
    if parameter not in parameter_names(channel):
        raise ValueRangeError(
            f"unknown impairment {parameter!r}; allowed: {', '.join(parameter_names(channel))}"
        )
    specs = [spec_of(s) for s in specs]
    with pool_for(executor, workers) as pool:
        if pool is None:
            results = tuple(
                tuple(
                    run_stress(spec, channel_at(spec, channel, parameter, v), n_frames,
                               seed=seed, chunk_frames=chunk_frames, progress=progress,
                               decoder=decoder)
                    for v in values
                )
                for spec in specs
            )
        else:
            results = _all_points_at_once(specs, channel, parameter, values, n_frames, seed,
                                          pool, chunk_frames, progress, decoder)
    return SweepResult(parameter, tuple(float(v) for v in values),
                       tuple(s.name for s in specs), channel, results)


def _all_points_at_once(
    specs: Sequence[FrameSpec], channel: ChannelSpec | PhysicalChannel, parameter: str, values: Sequence[float],
    n_frames: int, seed: int, pool: Executor, chunk_frames: int,
    progress: Callable[[int], None] | None, decoder: Decoder | None = None,
) -> tuple[tuple[StressResult, ...], ...]:
    """Submit the chunks of every point together (a cluster works on all points at once);
    each point's chunks and seeds are exactly those ``run_stress`` uses, so the results are
    the same. elapsed_s of a point: from the start to its last chunk."""
    t0 = time.perf_counter()
    points = [(s, channel_at(s, channel, parameter, v)) for s in specs for v in values]
    # run_stress's own chunking: at most chunk_limit(spec) transmissions per chunk
    point_chunk = [min(chunk_frames, chunk_limit(s)) for s, _ in points]
    args, owner = [], []
    for k, (spec, ch) in enumerate(points):
        plan = chunk_plan(n_frames, point_chunk[k])
        seqs = np.random.SeedSequence(seed).spawn(len(plan))
        for n, q in zip(plan, seqs, strict=True):
            args.append((spec, ch, n, q, None, decoder))
            owner.append(k)
    sums = [Counts() for _ in points]
    done_s = [0.0] * len(points)
    for i, counts in map_unordered(run_chunk, args, pool):
        k = owner[i]
        sums[k] = sums[k] + counts  # integer sums: the order of completion does not matter
        done_s[k] = time.perf_counter() - t0
        if progress is not None:
            progress(counts.frames)
    flat = [stress_result(spec, ch, seed, sums[k], point_chunk[k], done_s[k], 0)
            for k, (spec, ch) in enumerate(points)]
    n_v = len(values)
    return tuple(tuple(flat[s * n_v:(s + 1) * n_v]) for s in range(len(specs)))


def plot_sweep(result: SweepResult, path: str) -> None:
    """Write a PNG/SVG/PDF (by extension) of PER with its 95 % band against the parameter."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(7, 4.2), layout="constrained")
    x = np.array(result.values)
    for name, rows in zip(result.specs, result.results, strict=True):
        per = np.array([r.per for r in rows])
        lo = np.array([r.per_ci95[0] for r in rows])
        hi = np.array([r.per_ci95[1] for r in rows])
        (line,) = ax.plot(x, per, marker="o", ms=3, label=name)
        ax.fill_between(x, lo, hi, color=line.get_color(), alpha=0.2, lw=0)
    frames = result.results[0][0].frames if result.results and result.results[0] else 0
    ax.set_xlabel(result.parameter)
    ax.set_ylabel("packet error rate")
    ax.set_ylim(-0.02, 1.02)
    ax.set_title(f"PER vs {result.parameter} ({frames} frames per point, 95 % CI band)")
    ax.grid(True, alpha=0.3)
    ax.legend()
    fig.savefig(path)
    plt.close(fig)
