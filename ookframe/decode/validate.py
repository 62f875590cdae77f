"""Input check of a pulse train before decoding (the capture readers check files too)."""

from __future__ import annotations

import numpy as np

from ..errors import CaptureError
from ..pulses import PulseTrain


def validate_train(train: PulseTrain) -> None:
    """Return None when every level is 0/1 and every duration finite and > 0.

    Raises CaptureError naming the first bad pulse (0-based index) and what is allowed.
    """
    du = train.durations_us
    bad = ~(np.isfinite(du) & (du > 0.0))
    if bad.any():
        i = int(np.argmax(bad))
        raise CaptureError(f"pulse {i}: duration {du[i]!r} µs is not allowed; durations must be "
                           "finite and > 0 µs")
    lv = train.levels
    bad = lv > 1
    if bad.any():
        i = int(np.argmax(bad))
        raise CaptureError(f"pulse {i}: level {int(lv[i])} is not allowed; levels are 0 (space) "
                           "or 1 (mark)")
