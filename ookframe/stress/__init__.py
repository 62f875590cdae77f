"""Stress stage: Monte Carlo packet error rates, sweeps, margins, idle-noise false frames
and distorted test vectors, on top of channel + reference decoder."""

from ..intervals import clopper_pearson, poisson_ci
from .noise import NoiseResult, run_noise
from .runner import StressResult, run_stress

__all__ = [
    "NoiseResult",
    "StressResult",
    "clopper_pearson",
    "poisson_ci",
    "run_noise",
    "run_stress",
]
