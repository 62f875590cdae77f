"""Biphase-mark (FM1, as used e.g. by AES3): a transition at the start of every bit; a 1
also has a transition in the middle, a 0 has none. Polarity-free."""

from __future__ import annotations

from ._transition import TransitionCode


class BiphaseMark(TransitionCode):
    """Biphase-mark: clock at the bit start, 1 = extra transition in the middle."""

    name = "biphase_mark"
    CLOCK_SLOT = 0
    ONE_HAS_TRANSITION = True
