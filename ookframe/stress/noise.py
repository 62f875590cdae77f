"""False frames from idle-receiver noise: what a receiver decodes when nobody transmits."""

from __future__ import annotations

import time
from collections.abc import Callable
from concurrent.futures import Executor
from dataclasses import dataclass, field

import numpy as np

from .._require import require, require_spec
from ..channel import idle_noise_train
from ..intervals import poisson_ci
from ..plan import FramePlan, spec_of
from ..spec.model import FrameSpec
from .runner import Decoder, map_unordered, pool_for, reference_decoder
from .theory import expected_false_frames_per_hour

DEFAULT_CHUNK_S = 60.0


@dataclass(frozen=True)
class NoiseResult:
    """False frames decoded from ``hours`` of idle noise (exponential pulses of mean
    ``mean_us``): ``sync_hits`` frames found at all (check passing or not), ``passing``
    those whose check passed; rates per hour with exact Poisson 95 % intervals, and the
    expectation for random bits at the spec's bit rate beside them."""

    spec_name: str
    hours: float
    mean_us: float
    seed: int
    pulses: int
    sync_hits: int
    passing: int
    sync_hits_per_hour: float
    sync_hits_per_hour_ci95: tuple[float, float]
    passing_per_hour: float
    passing_per_hour_ci95: tuple[float, float]
    expected_sync_hits_per_hour: float
    expected_passing_per_hour: float
    elapsed_s: float = field(compare=False)

    def to_dict(self) -> dict[str, object]:
        """Return the result as a JSON-ready dict."""
        from dataclasses import asdict

        return asdict(self)


def noise_chunk(
    spec: FrameSpec, duration_us: float, mean_us: float, seed_seq: np.random.SeedSequence,
    decoder: Decoder | None = None,
) -> tuple[int, int, int]:
    """Return (pulses, frames decoded, frames with a passing check) for one noise chunk."""
    train = idle_noise_train(duration_us, mean_us, np.random.default_rng(seed_seq))
    frames = (decoder or reference_decoder)(spec, train)
    return len(train), len(frames), sum(1 for f in frames if f.crc_ok)


def run_noise(
    spec: FrameSpec | FramePlan,
    hours: float,
    *,
    mean_us: float = 100.0,
    seed: int = 0,
    executor: Executor | None = None,
    workers: int = 1,
    chunk_s: float = DEFAULT_CHUNK_S,
    decoder: Decoder | None = None,
    progress: Callable[[float], None] | None = None,
) -> NoiseResult:
    """Return the false frames per hour the decoder finds in ``hours`` of idle noise.

    Deterministic per ``seed`` (chunks of ``chunk_s`` seconds seeded by SeedSequence
    spawning), whatever the executor; ``progress(s)`` gets seconds of noise done.
    """
    require_spec(spec, "spec")
    require(hours, (int, float), "hours")
    if hours <= 0 or chunk_s <= 0:
        raise ValueError("hours and chunk_s must be > 0")
    spec = spec_of(spec)  # the decoder takes the spec
    total_s = hours * 3600.0
    n_full, rest = divmod(total_s, chunk_s)
    sizes = [chunk_s] * int(n_full) + ([rest] if rest > 1e-9 else [])
    seqs = np.random.SeedSequence(seed).spawn(len(sizes))
    args = [(spec, s * 1e6, mean_us, q, decoder) for s, q in zip(sizes, seqs, strict=True)]
    t0 = time.perf_counter()
    pulses = hits = passing = 0
    with pool_for(executor, workers) as pool:
        for k, got in map_unordered(noise_chunk, args, pool):
            pulses += got[0]
            hits += got[1]
            passing += got[2]
            if progress is not None:
                progress(sizes[k])
    exp_hits, exp_pass = expected_false_frames_per_hour(spec)
    lo_h, hi_h = poisson_ci(hits)
    lo_p, hi_p = poisson_ci(passing)
    return NoiseResult(
        spec_name=spec.name,
        hours=hours,
        mean_us=mean_us,
        seed=seed,
        pulses=pulses,
        sync_hits=hits,
        passing=passing,
        sync_hits_per_hour=hits / hours,
        sync_hits_per_hour_ci95=(lo_h / hours, hi_h / hours),
        passing_per_hour=passing / hours,
        passing_per_hour_ci95=(lo_p / hours, hi_p / hours),
        expected_sync_hits_per_hour=exp_hits,
        expected_passing_per_hour=exp_pass,
        elapsed_s=time.perf_counter() - t0,
    )
