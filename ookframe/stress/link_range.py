"""Range estimate of a design over the physical link: the received power at which the
simulated PER meets a target, turned into distance through the link budget."""

from __future__ import annotations

from collections.abc import Callable
from concurrent.futures import Executor
from dataclasses import asdict, dataclass

from ..cautions import RANGE_CAUTION
from ..channel.physical import PhysicalChannel
from ..errors import ValueRangeError
from ..plan import FramePlan, spec_of
from ..spec.model import FrameSpec
from .runner import DEFAULT_CHUNK_FRAMES, run_stress

#: search span around the receiver's sensitivity, dB, and the resolution of the search
SEARCH_SPAN_DB = 20.0
RESOLUTION_DB = 0.25
#: path-loss exponents the estimate is also given for (free space .. cluttered ground level)
EXPONENTS: tuple[float, ...] = (2.0, 2.7, 3.0, 3.5, 4.0)


@dataclass(frozen=True)
class RangeEstimate:
    """Range of ``spec_name`` over ``channel`` (its position unused).

    required_dbm: lowest received power (searched to ``RESOLUTION_DB``) at which the
      simulated PER is at most ``target_per`` (``per_at_required`` with ``frames`` per
      step); None when even the top of the search span fails.
    budget_range_m: distance at which the received power equals the receiver's
      sensitivity plus ``margin_db`` (no simulation).
    range_m: distance at which the received power equals ``required_dbm`` plus
      ``margin_db``, for the channel's path model; ``range_by_exponent_m`` the same for
      other path-loss exponents.
    """

    spec_name: str
    channel: PhysicalChannel
    target_per: float
    margin_db: float
    frames: int
    required_dbm: float | None
    per_at_required: float | None
    max_path_loss_db: float | None
    range_m: float | None
    budget_range_m: float
    range_by_exponent_m: tuple[tuple[float, float | None], ...]
    caution: str = RANGE_CAUTION

    def to_dict(self) -> dict[str, object]:
        """Return the estimate with its assumptions as a JSON-ready dict."""
        ch = self.channel
        d = asdict(self)
        d["channel"] = ch.to_dict()
        d["range_by_exponent_m"] = [{"exponent": n, "range_m": r}
                                    for n, r in self.range_by_exponent_m]
        d["assumptions"] = {
            "tx_power_dbm": ch.tx.power_dbm,
            "tx_antenna_dbi": ch.tx.antenna_gain_dbi,
            "rx_antenna_dbi": ch.rx.antenna_gain_dbi,
            "frequency_hz": ch.tx.frequency_hz,
            "path_model": f"free space (Friis) to {ch.path.reference_m:g} m, then "
                          f"log-distance with exponent {ch.path.exponent:g}",
            "extra_loss_db": ch.path.extra_loss_db,
            "receiver": ch.rx.name,
            "receiver_sensitivity_dbm": ch.rx.sensitivity_dbm,
            "receiver_noise_floor_dbm": ch.rx.noise_floor_dbm,
            "margin_db": self.margin_db,
            "no fading, no interference, antennas matched and clear of the ground": True,
        }
        return d


def _distance(ch: PhysicalChannel, power_dbm: float, exponent: float) -> float:
    """Distance at which ``ch`` (path exponent ``exponent``) receives ``power_dbm``."""
    loss = ch.tx.power_dbm + ch.tx.antenna_gain_dbi + ch.rx.antenna_gain_dbi - power_dbm
    path = ch.path.__class__(exponent, ch.path.reference_m, ch.path.extra_loss_db)
    return path.distance_m(loss, ch.tx.frequency_hz)


def estimate_range(
    spec: FrameSpec | FramePlan,
    channel: PhysicalChannel,
    *,
    target_per: float = 0.01,
    margin_db: float = 10.0,
    frames: int = 300,
    seed: int = 0,
    executor: Executor | None = None,
    workers: int = 1,
    chunk_frames: int = DEFAULT_CHUNK_FRAMES,
    progress: Callable[[int], None] | None = None,
) -> RangeEstimate:
    """Return the range estimate: bisect the received power over the sensitivity
    +- ``SEARCH_SPAN_DB`` (same seed at every step) for the lowest power whose PER is at
    most ``target_per``, add ``margin_db`` and invert the path model."""
    if not 0 < target_per < 1:
        raise ValueRangeError(f"target PER: must be in (0, 1), got {target_per!r}")
    spec = spec_of(spec)
    s = channel.rx.sensitivity_dbm

    def per(p: float) -> float:
        r = run_stress(spec, channel.at(rx_power_dbm=p), frames, seed=seed,
                       executor=executor, workers=workers, chunk_frames=chunk_frames,
                       progress=progress)
        return r.per

    lo, hi = s - SEARCH_SPAN_DB, s + SEARCH_SPAN_DB
    per_hi = per(hi)
    budget = _distance(channel, s + margin_db, channel.path.exponent)
    if per_hi > target_per:
        return RangeEstimate(spec.name, channel, target_per, margin_db, frames, None, None,
                             None, None, budget, tuple((n, None) for n in EXPONENTS))
    while hi - lo > RESOLUTION_DB:
        mid = (lo + hi) / 2
        p = per(mid)
        if p <= target_per:
            hi, per_hi = mid, p
        else:
            lo = mid
    need = hi + margin_db
    loss = channel.tx.power_dbm + channel.tx.antenna_gain_dbi + channel.rx.antenna_gain_dbi \
        - need
    return RangeEstimate(
        spec.name, channel, target_per, margin_db, frames, hi, per_hi, loss,
        _distance(channel, need, channel.path.exponent), budget,
        tuple((n, _distance(channel, need, n)) for n in EXPONENTS))
