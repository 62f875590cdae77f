"""Stress stage: Monte Carlo packet error rates, sweeps, margins, idle-noise false frames
and distorted test vectors, on top of channel + reference decoder."""

from ..intervals import clopper_pearson, poisson_ci
from .allocator import keep_freed_memory
from .noise import NoiseResult, run_noise
from .runner import StressResult, run_stress, worker_pool

__all__ = [
    "NoiseResult",
    "StressResult",
    "clopper_pearson",
    "keep_freed_memory",
    "poisson_ci",
    "run_noise",
    "run_stress",
    "worker_pool",
]
