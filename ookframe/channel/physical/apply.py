"""``apply_physical``: a pulse train through the physical link, as the receiver's data pin."""

from __future__ import annotations

import numpy as np

from ..._require import require, require_rng, require_train
from ...pulses import PulseTrain
from .carrier import Carrier
from .model import PhysicalChannel
from .receiver import receive_carriers


def apply_physical(
    train: PulseTrain, channel: PhysicalChannel, rng: np.random.Generator,
    *, burst_starts_us: np.ndarray | None = None,
) -> PulseTrain:
    """Return the receiver's data pin for ``train`` keyed by ``channel.tx`` and received
    at ``channel.received_dbm``: same timeline as the input (times are not shifted; edges
    lie on the receiver's quench grid), noise output wherever no carrier is received.
    ``burst_starts_us`` is accepted for the runner's interface and unused (the physical
    model has no clock error)."""
    require_train(train, "train")
    require(channel, PhysicalChannel, "channel", "e.g. ookframe.PhysicalChannel()")
    require_rng(rng, "rng")
    if len(train) == 0:
        return train
    carrier = Carrier(train, channel.received_dbm, channel.tx)
    return receive_carriers([carrier], channel.rx, train.total_us, rng)


def physical_time_map_us(t_us: np.ndarray) -> np.ndarray:
    """Return output times of input times: the physical model keeps the timeline."""
    return np.asarray(t_us, dtype=np.float64)
