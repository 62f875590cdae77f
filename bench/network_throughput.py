"""Network simulation speed: simulated hours per second of ``run_network`` (schedule, encode,
carrier merge with capture, reference decoder, matching), on one core.

Baseline measured in the same run: the same simulation with a decoder that returns
nothing (schedule + encode + merge + matching only), so the ratio shows what decoding the
merged capture costs. Scenarios: the two-probe greenhouse display, 20 beehive scales at
15 min and at 1 min, and a loaded channel (10 probes every 8 s).

    python bench/network_throughput.py [--hours H]
"""

from __future__ import annotations

import argparse
from pathlib import Path

import ookframe
from ookframe.stress.network import NetworkConfig, run_network

EXAMPLES = Path(ookframe.__file__).resolve().parent / "examples"
SCENARIOS = (
    ("greenhouse display, 2 probes, 60 s", "greenhouse_probe", 2, 60.0),
    ("20 beehive scales, 900 s", "hive_scale", 20, 900.0),
    ("20 beehive scales, 60 s", "hive_scale", 20, 60.0),
    ("10 probes, 8 s (loaded)", "greenhouse_probe", 10, 8.0),
)


def no_decoder(spec, train) -> list:
    return []


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--hours", type=float, default=24.0, help="simulated hours per scenario")
    args = ap.parse_args()
    print(f"{'scenario':38s} {'updates':>8s} {'sim h/s':>9s} {'no-decode h/s':>14s} "
          f"{'ratio':>6s} {'delivered':>9s}")
    for label, name, n, interval in SCENARIOS:
        spec = ookframe.load_spec(EXAMPLES / f"{name}.toml")
        hours = args.hours if interval >= 60 else args.hours / 8
        cfg = NetworkConfig(n_nodes=n, interval_s=interval, hours=hours, seed=1)
        full = min((run_network(spec, cfg) for _ in range(2)), key=lambda r: r.elapsed_s)
        base = min((run_network(spec, cfg, decoder=no_decoder) for _ in range(2)),
                   key=lambda r: r.elapsed_s)
        print(f"{label:38s} {full.updates:8d} {full.simulated_hours_per_s:9.1f} "
              f"{base.simulated_hours_per_s:14.1f} "
              f"{full.simulated_hours_per_s / base.simulated_hours_per_s:6.2f} "
              f"{full.delivery:9.4f}")


if __name__ == "__main__":
    main()
