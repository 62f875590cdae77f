"""Differential Manchester (IEEE 802.5 convention): a transition in the middle of every
bit; a 0 also has a transition at the bit start, a 1 has none. Polarity-free."""

from __future__ import annotations

from ._transition import TransitionCode


class DiffManchester(TransitionCode):
    """Differential Manchester: clock in the middle slot, 0 = extra transition at the start."""

    name = "diff_manchester"
    CLOCK_SLOT = 1
    ONE_HAS_TRANSITION = False
