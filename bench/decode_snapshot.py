"""Decoder snapshot, to hold a speed change to the same frames (the decoder against its
own earlier output; bench/decoder_equality.py compares it with the pre-rewrite decoder):
every example spec through every channel
preset and two uniform-jitter cases, fixed seeds; the decoded frames (every field of every
``DecodedFrame``, floats as exact hex), and per example the stress tallies
(``match_frames``) of a few chunks through the budget preset. The trains are made here
from ``random_raw_batch`` (not ``run_stress``, whose chunking and draws may change).

Save a snapshot with the tree before a change, then check the tree after it against it:

    python bench/decode_snapshot.py --save /tmp/decode_before.json
    python bench/decode_snapshot.py --check /tmp/decode_before.json

``--check`` prints, per case, the frames decoded and whether they are equal, and the
ratio of this run's decode time to the saved one's (both on this machine; noisy under load).
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import sys
import time
from pathlib import Path

import numpy as np

import ookframe
from ookframe.batch import encode_bits, frame_bits_of, frame_chips_batch, random_raw_batch
from ookframe.channel import ChannelSpec, apply_channel, channel_time_map_us
from ookframe.channel.presets import PRESETS
from ookframe.decode import compile_decoder, decode
from ookframe.plan import as_plan
from ookframe.stress.batch import join_chips
from ookframe.stress.runner import Counts, match_frames

EXAMPLES = Path(ookframe.__file__).resolve().parent / "examples"
TRANSMISSIONS = 300
STRESS_CHUNKS = 10
STRESS_CHUNK = 150
SEEDS = (0, 1, 2)


def _jitter(unit_us: float, fraction: float) -> ChannelSpec:
    return ChannelSpec(jitter_us=fraction * unit_us, jitter_kind="uniform")


def _batch(spec, n: int, rng: np.random.Generator):
    """``n`` random transmissions of ``spec`` joined by its gap (as a stress chunk)."""
    plan = as_plan(spec)
    enc = encode_bits(plan, random_raw_batch(plan, n, rng))
    chips = frame_chips_batch(plan, frame_bits_of(plan, enc))
    return join_chips(plan, chips, enc.payload_hex(), float(plan.gap_us))


def _plain(x: object) -> object:
    """JSON-ready form of a frame's values, floats as exact hex strings."""
    if isinstance(x, float):
        return x.hex()
    if isinstance(x, dict):
        return {k: _plain(v) for k, v in x.items()}
    if isinstance(x, bytes):
        return x.hex()
    if isinstance(x, list | tuple):
        return [_plain(v) for v in x]
    if isinstance(x, np.generic):
        return _plain(x.item())
    return x


def snapshot() -> tuple[dict[str, object], float]:
    """Return (case name -> decoded frames / stress counts, seconds spent decoding)."""
    out: dict[str, object] = {}
    t_dec = 0.0
    for path in sorted(EXAMPLES.glob("*.toml")):
        spec = ookframe.load_spec(path)
        hm = compile_decoder(spec)
        channels = dict(PRESETS)  # every preset, then uniform edge jitter of the unit
        channels["jitter25"] = _jitter(spec.unit_us, 0.25)
        channels["jitter35"] = _jitter(spec.unit_us, 0.35)
        for cname, ch in channels.items():
            for seed in SEEDS:
                rng = np.random.default_rng(seed)
                batch = _batch(spec, TRANSMISSIONS, rng)
                rx = apply_channel(batch.train, ch, rng, burst_starts_us=batch.starts_us)
                t0 = time.process_time()
                frames = decode(hm, rx, include_bad=True)
                t_dec += time.process_time() - t0
                out[f"{spec.name}/{cname}/{seed}"] = [
                    _plain(dataclasses.asdict(f)) for f in frames]
        c = Counts()
        ch = PRESETS["budget-superregen"]
        for seed in range(STRESS_CHUNKS):
            rng = np.random.default_rng(100 + seed)
            batch = _batch(spec, STRESS_CHUNK, rng)
            rx = apply_channel(batch.train, ch, rng, burst_starts_us=batch.starts_us)
            half = batch.gap_us / 2
            bounds = channel_time_map_us(
                np.append(batch.starts_us - half, batch.ends_us[-1] + half), ch, batch.starts_us)
            c = c + match_frames(batch, decode(hm, rx, include_bad=True), bounds)
        counts = dataclasses.asdict(c)
        out[f"{spec.name}/stress"] = _plain(counts)
    return out, t_dec


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    g = ap.add_mutually_exclusive_group(required=True)
    g.add_argument("--save", type=Path, help="write the snapshot here")
    g.add_argument("--check", type=Path, help="compare with the snapshot saved here")
    args = ap.parse_args()
    snap, t_dec = snapshot()
    if args.save:
        args.save.write_text(json.dumps({"decode_cpu_s": t_dec, "cases": snap}))
        n = sum(len(v) for k, v in snap.items() if not k.endswith("/stress"))
        print(f"saved {len(snap)} cases, {n} frames, decode CPU {t_dec:.2f} s -> {args.save}")
        return 0
    saved = json.loads(args.check.read_text())
    want = saved["cases"]
    bad = 0
    for key in sorted(set(want) | set(snap)):
        same = want.get(key) == snap.get(key)
        bad += not same
        n = len(snap.get(key) or []) if not key.endswith("/stress") else "-"
        if not same:
            print(f"  DIFFERENT {key} (frames now {n}, saved "
                  f"{len(want.get(key) or []) if not key.endswith('/stress') else '-'})")
    print(f"{len(snap)} cases, {bad} different; decode CPU {t_dec:.2f} s against saved "
          f"{saved['decode_cpu_s']:.2f} s (ratio {t_dec / saved['decode_cpu_s']:.2f})")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
