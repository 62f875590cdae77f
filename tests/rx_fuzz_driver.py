"""Driver of the sanitized C receiver fuzz (``test_codegen_rx.test_queue_fuzz_sanitized``),
run in a child process that has the ASan runtime preloaded.

``python -m tests.rx_fuzz_driver SPEC LIB EDGES SEED`` feeds EDGES edges, edge by edge as
firmware does, through the receiver library LIB (built with ``sanitize=True``): random
pulses (zero, glitch-sized, unit multiples, saturated, random levels) and real frames of
SPEC cut, spliced, jittered and sent back to back; the main loop polls the edge FIFO
after about half the edges and takes frames in some stretches and not in others (so the
frame queue fills and overruns). After every edge the
receiver's invariants must hold; every frame taken must be well-formed. Prints
``edges E frames F overruns O`` and exits 0, or names the broken invariant and exits 1.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

from ookframe.codegen.host_rx import HostReceiver
from ookframe.frame import encode, random_values
from ookframe.spec_io import load_spec


def _well_formed(spec, frame) -> str | None:
    """None if the frame's fields fit the spec, else what is wrong."""
    if set(frame.raw) != {f.name for f in spec.fields}:
        return f"fields {sorted(frame.raw)}"
    for f in spec.fields:
        v = frame.raw[f.name]
        if f.kind == "bytes":
            if len(v) > f.max_len_bytes:  # type: ignore[arg-type]
                return f"{f.name}: {len(v)} bytes"  # type: ignore[arg-type]
        elif not (-(1 << f.width_bits) < int(v) < (1 << f.width_bits)):  # type: ignore[arg-type]
            return f"{f.name} = {v}"
    return None


def _pulses(spec, rx: HostReceiver, rng: np.random.Generator, n: int):
    """Yield (level, ticks) pulses: random and adversarial pieces until n are given."""
    unit = spec.unit_us / rx.tick_us
    given = 0
    while given < n:
        kind = rng.integers(0, 4)
        if kind == 0:  # random pulses of every size, random levels
            m = int(rng.integers(1, 2000))
            t = rng.choice([0, 1, unit * 0.1, unit * 0.5, unit, unit * 1.5, unit * 2, unit * 3,
                            unit * 8, 65535], m) * rng.uniform(0.8, 1.2, m)
            lv = rng.integers(0, 2, m)
        else:  # frames: whole, cut, jittered; back to back (no gap) to fill the queue
            pieces_t, pieces_l = [], []
            for _ in range(int(rng.integers(1, 6))):
                tr = encode(spec, random_values(spec, rng))
                d = tr.durations_us / rx.tick_us
                if kind == 2:
                    d = d * rng.uniform(0.75, 1.25, d.size)
                if kind == 3:
                    d = d[: int(rng.integers(1, d.size + 1))]
                pieces_t.append(d)
                pieces_l.append(tr.levels[: d.size])
            t = np.concatenate(pieces_t)
            lv = np.concatenate(pieces_l)
        t = np.clip(np.rint(t), 0, 65535).astype(int)
        yield from zip(lv.tolist(), t.tolist(), strict=True)
        given += t.size


def main(argv: list[str]) -> int:
    spec = load_spec(argv[0])
    rx = HostReceiver(spec, Path(argv[1]))
    n, seed = int(argv[2]), int(argv[3])
    rng = np.random.default_rng(seed)
    rx.init()
    edges = frames = 0
    taking = True
    for level, ticks in _pulses(spec, rx, rng, n):
        rx.edge(level, ticks)
        edges += 1
        if edges % 997 == 0:
            taking = bool(rng.integers(0, 2))  # stretches without a main loop: overruns
        if rng.random() < 0.002:
            rx.idle()
        if rng.random() < 0.5:  # the main loop decodes the edge FIFO (now and then late)
            rx.poll()
        bad = rx.invariants()
        if bad:
            print(f"invariant {bad} broken after {edges} edges")
            return 1
        while taking and rx.ready():
            f = rx.take()
            if f is None:
                break
            frames += 1
            why = _well_formed(spec, f)
            if why:
                print(f"malformed frame after {edges} edges: {why}")
                return 1
    c = rx.counters()
    print(f"edges {edges} frames {frames} overruns {c['overruns']} seen {c['frames_seen']} "
          f"edge_overruns {c['edge_overruns']}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
