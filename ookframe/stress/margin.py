"""Tolerance margins: for each impairment alone, the largest value that keeps PER below a
target, by bisection with the confidence interval taken into account."""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from concurrent.futures import Executor
from dataclasses import dataclass

from ..channel import SIGNED, ChannelSpec
from ..errors import ValueRangeError
from ..frame import encode
from ..layout import zero_values
from ..plan import FramePlan, as_plan, spec_of
from ..spec.model import FrameSpec
from .runner import DEFAULT_CHUNK_FRAMES, Decoder, StressResult, pool_for, run_stress
from .sweep import channel_at

#: impairments searched by default
MARGIN_IMPAIRMENTS: tuple[str, ...] = (
    "jitter_us", "mark_bias_us", "clock_error_pct", "drift_pct_per_s", "quant_step_us",
    "glitch_rate_per_ms", "dropout_prob",
)


def search_limit(spec: FrameSpec | FramePlan, name: str) -> float:
    """Return the largest magnitude of impairment ``name`` searched for ``spec``."""
    frame_s = _frame_s(spec)
    spec = spec_of(spec)
    return {
        "jitter_us": spec.unit_us,
        "mark_bias_us": spec.unit_us,
        "clock_error_pct": 20.0,
        "drift_pct_per_s": 20.0 / frame_s,  # 20 % off by the end of one transmission
        "quant_step_us": spec.unit_us,
        "glitch_rate_per_ms": 1000.0 / spec.unit_us,  # one per unit
        "dropout_prob": 0.5,
        "idle_noise_us": 10 * spec.gap_us,
        "min_width_us": spec.unit_us,
    }.get(name, spec.unit_us)


def _frame_s(spec: FrameSpec | FramePlan) -> float:
    plan = as_plan(spec)
    return encode(plan, zero_values(plan)).total_us / 1e6


@dataclass(frozen=True)
class MarginRow:
    """Result for one impairment in one direction (sign -1 for negative values).

    limit: largest value found that passes (PER upper 95 % bound < target); status
    "ok" (a pass/fail boundary was bracketed to ``resolution``), "beyond" (even the search
    limit passes; limit = search limit), "fails-at-zero" (the base channel fails already).
    """

    impairment: str
    sign: int
    limit: float
    first_fail: float | None
    status: str
    at_limit: StressResult | None


@dataclass(frozen=True)
class MarginResult:
    """Margins of one spec against ``target_per`` (``n_frames`` per evaluation)."""

    spec_name: str
    target_per: float
    n_frames: int
    channel: ChannelSpec
    rows: tuple[MarginRow, ...]

    def to_dict(self) -> dict[str, object]:
        """Return the margins as a JSON-ready dict."""
        return {
            "spec": self.spec_name,
            "target_per": self.target_per,
            "frames_per_point": self.n_frames,
            "channel": self.channel.to_dict(),
            "margins": [
                {"impairment": r.impairment, "sign": r.sign, "limit": r.limit,
                 "first_fail": r.first_fail, "status": r.status,
                 "per_at_limit": r.at_limit.per if r.at_limit else None,
                 "per_ci95_at_limit": list(r.at_limit.per_ci95) if r.at_limit else None}
                for r in self.rows
            ],
        }


def frames_needed(target_per: float) -> int:
    """Return the fewest frames for which 0 errors can show PER < target at 95 %:
    the Clopper-Pearson upper bound for k = 0 is 1 - 0.025^(1/n)."""
    return math.ceil(math.log(0.025) / math.log1p(-target_per))


def run_margin(
    spec: FrameSpec | FramePlan,
    target_per: float,
    *,
    channel: ChannelSpec | None = None,
    impairments: Sequence[str] = MARGIN_IMPAIRMENTS,
    n_frames: int | None = None,
    resolution: float = 0.02,
    seed: int = 0,
    executor: Executor | None = None,
    workers: int = 1,
    chunk_frames: int = DEFAULT_CHUNK_FRAMES,
    progress: Callable[[str], None] | None = None,
    decoder: Decoder | None = None,
) -> MarginResult:
    """Return, for each impairment alone (added to ``channel``, default ideal), the largest
    value whose PER upper 95 % bound stays below ``target_per``; signed impairments are
    searched in both directions. Bisection assumes PER grows with the magnitude and
    stops when the bracket is narrower than ``resolution`` * search limit; rates
    (``RATE_IMPAIRMENTS``: glitch rate, dropout probability) are searched on a log scale
    down to ``RATE_FLOOR`` of the limit and stop when the bracket's ratio is at most
    1 + 5 * ``resolution``; every point
    uses the same seed (common random numbers). Glitches searched on a channel without a
    glitch width get half a symbol unit (``sweep.channel_at``). ``decoder``: as in
    ``run_stress`` (default the reference decoder; e.g. ``codegen.host_rx.decode_c``)."""
    if not 0 < target_per < 1:
        raise ValueRangeError(f"target PER must be in (0, 1), got {target_per}")
    spec = spec_of(spec)
    base = channel or ChannelSpec()
    need = frames_needed(target_per)
    n = max(2 * need, 200) if n_frames is None else n_frames
    if n < need:
        raise ValueRangeError(
            f"{n} frames cannot show PER < {target_per} at 95 %; use at least {need}"
        )

    def passes(r: StressResult) -> bool:
        return r.per_ci95[1] < target_per

    rows = []
    with pool_for(executor, workers) as pool:

        def evaluate(name: str, value: float) -> StressResult:
            return run_stress(spec, channel_at(spec, base, name, value), n, seed=seed, executor=pool,
                              chunk_frames=chunk_frames, decoder=decoder)

        for name in impairments:
            if progress is not None:
                progress(name)
            start = float(getattr(base, name))
            for sign in ((1, -1) if name in SIGNED else (1,)):
                rows.append(_bisect(name, sign, start, search_limit(spec, name), resolution,
                                    evaluate, passes))
    return MarginResult(spec.name, target_per, n, base, tuple(rows))


def run_at_margins(
    spec: FrameSpec | FramePlan,
    margins: MarginResult,
    decoder: Decoder | None,
    *,
    n_frames: int | None = None,
    seed: int = 0,
    executor: Executor | None = None,
    workers: int = 1,
    chunk_frames: int = DEFAULT_CHUNK_FRAMES,
) -> tuple[StressResult | None, ...]:
    """Return, for every row of ``margins``, a stress run of ``decoder`` at that row's
    limit (same channel, frame count and seed as the search used there, so the result
    compares copy for copy with ``row.at_limit``); None for rows that fail at zero."""
    spec = spec_of(spec)
    n = margins.n_frames if n_frames is None else n_frames
    out: list[StressResult | None] = []
    with pool_for(executor, workers) as pool:
        for row in margins.rows:
            if row.at_limit is None:
                out.append(None)
                continue
            out.append(run_stress(spec, channel_at(spec, margins.channel, row.impairment,
                                                   row.limit), n, seed=seed, executor=pool,
                                  chunk_frames=chunk_frames, decoder=decoder))
    return tuple(out)


#: impairments that are rates or probabilities: their margins span decades (a frame of
#: 200 units fails at a glitch rate of 1 per 64 units, the first linear step), so they are
#: searched on a log scale (``_bisect``)
RATE_IMPAIRMENTS: frozenset[str] = frozenset({"glitch_rate_per_ms", "dropout_prob"})
#: the smallest rate searched, as a fraction of the search limit: below it the margin is 0
RATE_FLOOR = 1e-4
#: factor by which the rate search steps down from a failing value until one passes
RATE_STEP_DOWN = 4.0


def _bisect(name, sign, start, limit, resolution, evaluate, passes) -> MarginRow:
    at0 = evaluate(name, start)
    if not passes(at0):
        return MarginRow(name, sign, start, start, "fails-at-zero", None)
    far = start + sign * limit
    at_far = evaluate(name, far)
    if passes(at_far):
        return MarginRow(name, sign, far, None, "beyond", at_far)
    if name in RATE_IMPAIRMENTS:
        return _bisect_rate(name, sign, start, far, limit, resolution, evaluate, passes, at0)
    return _narrow(name, sign, start, at0, far, lambda g, b: (g + b) / 2,
                   lambda g, b: abs(b - g) > resolution * limit, evaluate, passes)


def _narrow(name, sign, good, good_r, bad, middle, too_wide, evaluate, passes) -> MarginRow:
    """Bisect the bracket ``good`` (passes, result ``good_r``) .. ``bad`` (fails) at
    ``middle(good, bad)`` while ``too_wide(good, bad)``."""
    while too_wide(good, bad):
        mid = middle(good, bad)
        r = evaluate(name, mid)
        if passes(r):
            good, good_r = mid, r
        else:
            bad = mid
    return MarginRow(name, sign, good, bad, "ok", good_r)


def _bisect_rate(name, sign, start, far, limit, resolution, evaluate, passes, at0) -> MarginRow:
    """Bisect a rate impairment on a log scale between ``start`` (passes) and ``far``
    (fails): from a start of 0, step down by ``RATE_STEP_DOWN`` from ``far`` until a value
    passes (none above ``RATE_FLOOR`` * ``limit``: the margin is ``start``), then halve the
    bracket's log width until its ratio is at most 1 + 5 * ``resolution``."""
    good, good_r, bad = start, at0, far
    if good == 0:
        while True:
            v = bad / RATE_STEP_DOWN
            if v < RATE_FLOOR * limit:
                return MarginRow(name, sign, start, bad, "ok", at0)
            r = evaluate(name, v)
            if passes(r):
                good, good_r = v, r
                break
            bad = v
    return _narrow(name, sign, good, good_r, bad, lambda g, b: math.sqrt(g * b),
                   lambda g, b: b / g > 1 + 5 * resolution, evaluate, passes)
