"""Network design helpers on top of :mod:`.network`: repeats and interval randomisation that
meet a delivery target (exact pure-ALOHA figure over candidates, then a simulation to
confirm), and delivery over a range of node counts (for the plot over N)."""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

from ..analysis.airtime import collisions, duty_cycle, max_airtime_us
from ..errors import ValueRangeError
from ..plan import FramePlan, spec_of
from ..spec.model import FrameSpec
from .network import DAY_S, NetworkConfig, NetworkResult, aloha_reference, network_spec, run_network

#: repeat counts tried by :func:`suggest`
REPEAT_CANDIDATES: tuple[int, ...] = tuple(range(1, 11))
#: interval jitter fractions tried by :func:`suggest`, smallest first
JITTER_CANDIDATES: tuple[float, ...] = (0.0, 0.02, 0.05, 0.1, 0.2, 0.3)
#: a jitter half-width of at least this many transmission vulnerable windows (2 x airtime)
#: moves two nodes that just collided apart before their next updates (rule of this tool:
#: with a half-width of 2 windows a repeated hit needs the random steps of both nodes to
#: land within one window of each other, under about 1 chance in 4)
JITTER_WINDOWS = 2.0


@dataclass(frozen=True)
class Candidate:
    """One design point: repeats, exact P(update delivered), lost updates per node and
    day, duty cycle of the worst hour (%, longest payload)."""

    repeats: int
    p_report_ok: float
    lost_per_node_day: float
    duty_cycle_pct: float
    meets: bool


@dataclass(frozen=True)
class Suggestion:
    """The smallest repeat count meeting the target (or the best one when none does),
    the interval jitter to use, every candidate evaluated, and the confirming run.

    target_kind: "loss_per_day" (lost updates per node and day at most ``target``) or
    "delivery" (fraction of updates delivered at least ``target``). confirmed: the run's
    95 % interval lies wholly on the right side of the target; consistent: the target lies
    inside the interval (more hours would decide).
    """

    target_kind: str
    target: float
    candidates: tuple[Candidate, ...]
    repeats: int
    met: bool
    interval_jitter: float
    jitter_reason: str
    run: NetworkResult | None
    confirmed: bool
    consistent: bool

    def to_dict(self) -> dict[str, object]:
        from dataclasses import asdict

        d = {k: getattr(self, k) for k in self.__dataclass_fields__ if k != "run"}
        d["candidates"] = [asdict(c) for c in self.candidates]
        d["run"] = None if self.run is None else self.run.to_dict()
        return d


def evaluate(spec: FrameSpec | FramePlan, interval_s: float, n_nodes: int,
             repeats: Sequence[int] = REPEAT_CANDIDATES) -> list[Candidate]:
    """Return the exact pure-ALOHA figures (``airtime``'s :func:`collisions`) for each
    repeat count whose transmission fits the interval (``meets`` left False)."""
    out = []
    for r in repeats:
        s = network_spec(spec, r)
        longest_us = max_airtime_us(s)
        if longest_us * 1e-6 >= interval_s:
            continue
        coll, _ = aloha_reference(s, interval_s, n_nodes)
        out.append(Candidate(r, coll.p_report_ok, (1.0 - coll.p_report_ok) * DAY_S / interval_s,
                             duty_cycle(longest_us, interval_s).duty_cycle_pct, False))
    return out


def jitter_for(spec: FrameSpec | FramePlan, interval_s: float,
               candidates: Sequence[float] = JITTER_CANDIDATES) -> tuple[float, str]:
    """Return (smallest jitter fraction whose half-width ``j x interval`` is at least
    ``JITTER_WINDOWS`` vulnerable windows of 2 x airtime, why)."""
    s = spec_of(spec)
    window_s = 2.0 * max_airtime_us(s) * 1e-6
    need = JITTER_WINDOWS * window_s / interval_s
    for j in candidates:
        if j >= need and j > 0:
            return j, (f"+-{j:.0%} of {interval_s:g} s = +-{j * interval_s:.3g} s is at least "
                       f"{JITTER_WINDOWS:g} collision windows (2 x airtime = {window_s:.3g} s): "
                       "two nodes that collided drift apart by their next update")
    j = candidates[-1]
    return j, (f"even +-{j:.0%} is under {JITTER_WINDOWS:g} collision windows "
               f"({window_s:.3g} s each) at this interval: the airtime is a large part of it")


def suggest(spec: FrameSpec | FramePlan, cfg: NetworkConfig, *, target_loss_per_day: float |
            None = None, target_delivery: float | None = None, confirm: bool = True,
            progress: Callable[[float], None] | None = None) -> Suggestion:
    """Return the repeats and interval jitter that meet the target at ``cfg``'s node count
    and interval, chosen by the exact formula and confirmed by a run of ``cfg`` with them."""
    if (target_loss_per_day is None) == (target_delivery is None):
        raise ValueRangeError("give one target: lost updates per node and day, or delivery")
    if target_loss_per_day is not None:
        if not (math.isfinite(target_loss_per_day) and target_loss_per_day >= 0):
            raise ValueRangeError(f"target lost updates per day must be >= 0, got "
                                  f"{target_loss_per_day}")
        kind, target = "loss_per_day", float(target_loss_per_day)
    else:
        assert target_delivery is not None
        if not (math.isfinite(target_delivery) and 0 < target_delivery < 1):
            raise ValueRangeError(f"target delivery must be in (0, 1), got {target_delivery}")
        kind, target = "delivery", float(target_delivery)
    cands = evaluate(spec, cfg.interval_s, cfg.n_nodes)
    if not cands:
        raise ValueRangeError(f"no repeat count fits a transmission into {cfg.interval_s:g} s")

    def meets(c: Candidate) -> bool:
        return (c.lost_per_node_day <= target if kind == "loss_per_day"
                else c.p_report_ok >= target)

    cands = [replace(c, meets=meets(c)) for c in cands]
    ok = [c for c in cands if c.meets]
    best = ok[0] if ok else max(cands, key=lambda c: c.p_report_ok)
    jitter, why = jitter_for(network_spec(spec, best.repeats), cfg.interval_s)
    run = confirmed = consistent = None
    if confirm:
        run = run_network(spec, replace(cfg, repeats=best.repeats, interval_jitter=jitter),
                          progress=progress)
        lo, hi = run.delivery_ci95
        if kind == "loss_per_day":
            per = DAY_S / cfg.interval_s
            lo, hi = (1.0 - hi) * per, (1.0 - lo) * per
            confirmed, consistent = hi <= target, lo <= target < hi
        else:
            confirmed, consistent = lo >= target, lo < target <= hi
    return Suggestion(kind, target, tuple(cands), best.repeats, bool(ok), jitter, why, run,
                      bool(confirmed), bool(consistent))


@dataclass(frozen=True)
class NodeSweep:
    """Delivery over node counts: one run per count, and the exact figure on every count
    from 1 to the largest (``aloha_p``)."""

    counts: tuple[int, ...]
    runs: tuple[NetworkResult, ...]
    aloha_counts: tuple[int, ...]
    aloha_p: tuple[float, ...]
    interval_s: float

    def to_dict(self) -> dict[str, object]:
        return {"counts": list(self.counts), "interval_s": self.interval_s,
                "aloha_counts": list(self.aloha_counts), "aloha_p": list(self.aloha_p),
                "runs": [{"nodes": n, "delivery": r.delivery,
                          "delivery_ci95": list(r.delivery_ci95),
                          "lost_per_node_day": r.lost_per_node_day,
                          "lost_per_node_day_ci95": list(lost_ci(r)),
                          "clear": r.aloha.clear, "p_aloha": r.aloha.p_report_ok}
                         for n, r in zip(self.counts, self.runs, strict=True)]}


def lost_ci(r: NetworkResult) -> tuple[float, float]:
    """Return the 95 % interval of the lost updates per node and day of a run."""
    per = DAY_S / r.config.interval_s
    lo, hi = r.delivery_ci95
    return (1.0 - hi) * per, (1.0 - lo) * per


def sweep_nodes(spec: FrameSpec | FramePlan, cfg: NetworkConfig, counts: Sequence[int], *,
                progress: Callable[[float], None] | None = None) -> NodeSweep:
    """Return one run of ``cfg`` per node count (same seed; powers drawn per run from the
    range, or ``node_power_dbm[0]`` for every node when one per node was given)."""
    counts = tuple(sorted(set(int(n) for n in counts)))
    if not counts or counts[0] < 1:
        raise ValueRangeError("node counts must be integers >= 1")
    runs = []
    for n in counts:
        c = replace(cfg, n_nodes=n, id_values=None,
                    node_power_dbm=None if cfg.node_power_dbm is None
                    else (cfg.node_power_dbm[0],) * n)
        runs.append(run_network(spec, c, progress=progress))
    s = network_spec(spec, cfg.repeats)
    frame_us = runs[0].frame_us
    ns = tuple(range(1, counts[-1] + 1))
    p = tuple(collisions(frame_us, s.repeats, s.gap_us, cfg.interval_s, n).p_report_ok
              for n in ns)
    return NodeSweep(counts, tuple(runs), ns, p, cfg.interval_s)
