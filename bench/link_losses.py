"""Copy loss and PER of every example on the cheap-link preset, and under short glitches.

For every example spec, ``ookframe.run_stress`` sends ``--frames`` random transmissions:

- through the default cheap-link preset ``budget-superregen`` (receiver idle noise right
  up to the first carrier edge and again after the last one): copy loss (1 - correct
  copies / copies sent) and PER (transmissions with no correct copy);
- through an otherwise perfect channel with glitches narrower than the decoder's glitch
  filter (``--glitch-width-units``, default 0.1 unit; widths drawn in 0.5..1.5x that) at
  ``--glitches-per-unit`` (default 0.02): copy loss; the same glitches on top of the preset
  are shown beside it.

The preset is run twice: by ``run_stress`` (ookframe's own trains; the channel keeps
``idle_quiet_us`` of quiet after the last pulse), and by this bench's own loop, where
trains of the independent transmitter (``bench/refgen.py``) get idle noise right up to
their first carrier edge and again right after their last one ("hugging").

Targets (issue 9): every example <= 1 % copy loss on the preset (both runs);
coldframe_vent PER <= 0.01; glitch copy loss <= 1 %. Exits 0 whatever the outcome.

    python bench/link_losses.py [--frames N] [--seed S] [--workers W] [--json]
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

import refgen  # noqa: E402

import ookframe  # noqa: E402
from ookframe import ChannelSpec, FrameSpec, PulseTrain, StressResult  # noqa: E402

EXAMPLES = Path(ookframe.__file__).resolve().parent / "examples"
PRESET = "budget-superregen"
MAX_COPY_LOSS = 0.01
MAX_PER = {"coldframe_vent": 0.01}


def copy_loss(spec: FrameSpec, r: StressResult) -> float:
    """Return the fraction of copies sent that were not decoded right."""
    return 1 - r.copies_ok / (r.frames * spec.repeats)


def glitch_channel(base: ChannelSpec, spec: FrameSpec, per_unit: float,
                   width_units: float) -> ChannelSpec:
    """Return ``base`` with glitches at ``per_unit`` per symbol unit, ``width_units`` wide."""
    return base.with_(glitch_rate_per_ms=per_unit * 1000.0 / spec.unit_us,
                      glitch_width_us=width_units * spec.unit_us)


def _merge(levels: np.ndarray, durations_us: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return the pulses with adjacent pulses of equal level joined."""
    starts = np.flatnonzero(np.concatenate(([True], levels[1:] != levels[:-1])))
    return levels[starts], np.add.reduceat(durations_us, starts)


def hugging_capture(spec: FrameSpec, channel: ChannelSpec, raws: list[dict[str, object]],
                    rng: np.random.Generator) -> tuple[PulseTrain, np.ndarray]:
    """Return (capture, start time of every copy) of ``raws`` sent one after the other,
    each through ``channel``, with idle noise right up to its first carrier edge and again
    from its last carrier edge on (``channel`` keeps the quiet time only inside a
    transmission, between its copies).

    The transmitter train is cut to its carrier (first mark to last mark); after
    ``apply_channel`` the output is cut at the last falling edge of the carrier, and noise
    drawn as the channel draws it (alternating levels, exponential durations of mean
    ``idle_noise_mean_us``) fills ``idle_noise_us`` after it (a long space when the
    channel has no idle noise).
    """
    lv_parts, du_parts, copy_starts = [], [], []
    t0 = 0.0
    for raw in raws:
        lv, du = refgen.transmission(spec, raw)
        frame_us = sum(refgen.runs(refgen.copy_chips(spec, raw))[1]) * spec.unit_us
        lead = du[0] if lv[0] == 0 else 0.0
        keep = slice(1 if lv[0] == 0 else 0, -1 if lv[-1] == 0 else None)
        lv, du = lv[keep], du[keep]
        out = ookframe.apply_channel(PulseTrain(lv, du), channel, rng)
        edges = np.concatenate(([0.0], np.cumsum(out.durations_us)))
        nominal_end = channel.idle_noise_us + du.sum()
        falls = np.flatnonzero((out.levels == 1) & (edges[1:] < nominal_end
                                                     + channel.idle_quiet_us / 2))
        cut = int(falls[-1]) + 1
        if channel.idle_noise_us:
            n_noise = int(2 * channel.idle_noise_us / channel.idle_noise_mean_us) + 8
            noise = rng.exponential(channel.idle_noise_mean_us, n_noise)
            noise = noise[:int(np.searchsorted(np.cumsum(noise), channel.idle_noise_us)) + 1]
        else:  # a quiet receiver: a long space between transmissions
            noise = np.array([3 * spec.gap_us + 100 * spec.unit_us])
        lv_parts += [out.levels[:cut], (np.arange(noise.size) % 2).astype(np.uint8)]
        du_parts += [out.durations_us[:cut], noise]
        copy_starts += [t0 + channel.idle_noise_us - lead + k * (frame_us + spec.gap_us)
                        for k in range(spec.repeats)]
        t0 += edges[cut] + noise.sum()
    levels, dur = _merge(np.concatenate(lv_parts), np.concatenate(du_parts))
    return PulseTrain(levels, dur), np.array(copy_starts)


def hugging_losses(spec: FrameSpec, channel: ChannelSpec, n: int, seed: int,
                   chunk: int = 100) -> dict[str, object]:
    """Return copy loss, PER and false accepts of ``n`` transmissions with noise hugging the
    carrier (see :func:`hugging_capture`), decoded ``chunk`` transmissions a capture."""
    rng = np.random.default_rng([seed, sum(map(ord, spec.name))])
    copies_ok = tx_ok = false_accepts = 0
    for done in range(0, n, chunk):
        raws = [refgen.random_raw(spec, rng) for _ in range(min(chunk, n - done))]
        train, starts = hugging_capture(spec, channel, raws, rng)
        good = np.zeros(starts.size, bool)
        for f in ookframe.decode_frames(spec, train):
            if not f.crc_ok:
                continue
            k = int(np.argmin(np.abs(starts - f.start_us)))
            right = f.raw == raws[k // spec.repeats]
            if right and abs(starts[k] - f.start_us) <= spec.unit_us + 20.0:
                good[k] = True
            elif not right:
                false_accepts += 1
        copies_ok += int(good.sum())
        tx_ok += int(good.reshape(-1, spec.repeats).any(axis=1).sum())
    return {"copy_loss": 1 - copies_ok / (n * spec.repeats), "per": 1 - tx_ok / n,
            "false_accepts": false_accepts, "frames": n}


def run_example(path: Path, args: argparse.Namespace) -> dict[str, object]:
    """Return the figures of one example."""
    spec, _ = ookframe.load_spec_and_defaults(path)
    preset = ookframe.get_preset(PRESET)
    glitchy = glitch_channel(ookframe.get_preset("ideal"), spec, args.glitches_per_unit,
                             args.glitch_width_units)
    both = glitch_channel(preset, spec, args.glitches_per_unit, args.glitch_width_units)
    out: dict[str, object] = {"example": spec.name, "line_code": spec.line_code.name,
                              "repeats": spec.repeats}
    for key, ch in (("preset", preset), ("glitches", glitchy), ("preset_glitches", both)):
        r = ookframe.run_stress(spec, ch, args.frames, seed=args.seed, workers=args.workers)
        out[key] = {"copy_loss": copy_loss(spec, r), "per": r.per, "per_ci95": list(r.per_ci95),
                    "lost_sync": r.lost_sync, "bad_check": r.bad_check,
                    "false_accepts": r.false_accepts, "frames": r.frames}
    out["preset_hugging"] = hugging_losses(spec, preset, args.frames, args.seed)
    loss = {k: out[k]["copy_loss"] for k in ("preset", "preset_hugging", "glitches")}  # type: ignore[index]
    targets = {"stress_copy_loss_le_1pct": loss["preset"] <= MAX_COPY_LOSS,
               "hugging_copy_loss_le_1pct": loss["preset_hugging"] <= MAX_COPY_LOSS,
               "glitch_copy_loss_le_1pct": loss["glitches"] <= MAX_COPY_LOSS}
    if spec.name in MAX_PER:
        for key, label in (("preset", "stress"), ("preset_hugging", "hugging")):
            targets[f"{label}_per_le_{MAX_PER[spec.name]}"] = (
                out[key]["per"] <= MAX_PER[spec.name])  # type: ignore[index]
    out["targets"] = targets
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=2000, help="transmissions per run")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--glitches-per-unit", type=float, default=0.02)
    ap.add_argument("--glitch-width-units", type=float, default=0.1)
    ap.add_argument("--json", action="store_true", help="print the results as JSON")
    args = ap.parse_args(argv)
    t0 = time.perf_counter()
    results = []
    for p in sorted(EXAMPLES.glob("*.toml")):
        t1 = time.perf_counter()
        results.append(run_example(p, args))
        print(f"{p.stem}: {time.perf_counter() - t1:.1f} s", file=sys.stderr)
    names = [n for r in results for n in r["targets"]]  # type: ignore[union-attr]
    all_ok = {n: all(r["targets"].get(n, True) for r in results)  # type: ignore[union-attr]
              for n in dict.fromkeys(names)}
    if args.json:
        print(json.dumps({"frames": args.frames, "seed": args.seed, "preset": PRESET,
                          "glitches_per_unit": args.glitches_per_unit,
                          "glitch_width_units": args.glitch_width_units, "results": results,
                          "summary": all_ok}, indent=2))
        return 0
    print(f"link losses: {args.frames} transmissions a run, seed {args.seed}; preset {PRESET} "
          "(stress: ookframe.run_stress; hugging: idle noise right up to the first and from "
          f"the last carrier edge); glitches {args.glitches_per_unit} per unit, "
          f"{args.glitch_width_units} unit wide (alone, and on the preset)")
    print(f"{'':33s}{'-- preset, stress --':>22s}  {'-- preset, hugging --':>21s}  "
          f"{'-- glitch loss % --':>19s}")
    print(f"{'example':17s} {'code':15s} {'loss %':>7s} {'PER':>7s} {'false':>6s}  "
          f"{'loss %':>7s} {'PER':>7s} {'false':>5s}  {'alone':>9s} {'+preset':>9s}")
    for r in results:
        p, h, g, b = (r[k] for k in ("preset", "preset_hugging", "glitches", "preset_glitches"))
        print(f"{r['example']:17s} {r['line_code']:15s} {100 * p['copy_loss']:7.2f} "  # type: ignore[index]
              f"{p['per']:7.4f} {p['false_accepts']:6d}  {100 * h['copy_loss']:7.2f} "  # type: ignore[index]
              f"{h['per']:7.4f} {h['false_accepts']:5d}  {100 * g['copy_loss']:9.2f} "  # type: ignore[index]
              f"{100 * b['copy_loss']:9.2f}")  # type: ignore[index]
    for r in results:
        verdict = ", ".join(f"{n} {'PASS' if ok else 'FAIL'}"
                            for n, ok in r["targets"].items())  # type: ignore[union-attr]
        print(f"  {r['example']}: {verdict}")
    print("all examples:")
    for name, ok in all_ok.items():
        print(f"  target {name}: {'PASS' if ok else 'FAIL'}")
    print(f"elapsed {time.perf_counter() - t0:.0f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
