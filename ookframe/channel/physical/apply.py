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
    at ``channel.received_dbm``: the input's timeline as the transmitter's clock times it
    (``channel.tx.time_map_us``, drift from each of ``burst_starts_us``, nominal times;
    default one transmission from 0), edges on the receiver's quench grid, noise output
    wherever no carrier is received."""
    require_train(train, "train")
    require(channel, PhysicalChannel, "channel", "e.g. ookframe.PhysicalChannel()")
    require_rng(rng, "rng")
    if len(train) == 0:
        return train
    keyed = channel.tx.keyed(train, burst_starts_us)
    carrier = Carrier(keyed, channel.received_dbm, channel.tx)
    return receive_carriers([carrier], channel.rx, keyed.total_us, rng)


def physical_time_map_us(t_us: np.ndarray, channel: PhysicalChannel | None = None,
                         burst_starts_us: np.ndarray | None = None) -> np.ndarray:
    """Return where (µs, in the output of ``apply_physical``) input times ``t_us`` end up:
    the transmitter's clock map (the receiver's delays of a few µs left out); the times
    themselves without a channel."""
    t = np.asarray(t_us, dtype=np.float64)
    return t if channel is None else channel.tx.time_map_us(t, burst_starts_us)
