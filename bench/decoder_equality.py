"""The decoder's frames against the pre-rewrite decoder's, on the same received trains.

Cases: every example spec, every registered line code (``LINE_CODES``, each at its
``DEFAULTS``) in one bed spec (PN9 whitening, CRC-8/SMBUS), each through every channel
preset (``PRESETS``): ``--transmissions`` random transmissions (``stress.random_batch``)
through ``apply_channel``. Both decoders read the same trains with bad checks included;
the old one (default: commit ``ba90ba0``, extracted with ``git archive`` into a temporary
folder unless ``--old-ref`` names one) runs in a subprocess with that tree first on
``sys.path``. Specs are given to both as the same dict, with the check's byte order
written out (the old loader's default was big-endian for every frame).

Ground truth per copy: the sent payload and its start (``channel_time_map_us``). A frame
is *right* when its check passes, its payload is the copy's and it starts within one unit
of the copy; *wrong* when its check passes otherwise (false accept or misplaced); frames
whose check fails claim nothing. Frames are given to the nearest copy (stray: further
than half a copy period from every copy). Per copy the two lists are *same* (equal
(check, payload) and starts within ``--same-tol-units``), or a difference classified:

- new right, old wrong: the new decoder has the copy right and the old does not, or the
  old has a wrong frame there and the new does not;
- new wrong: the reverse;
- both wrong: neither has it right and neither has a wrong frame the other lacks;
- both right: both have it right, frames differ otherwise (bad-check frames, times).

Stray accepted frames are counted per decoder. Specs whose on-air format changed since
the old commit (the old encoder's trains of three random frames differ from the current
encoder's) are listed and left out: no train can be right for both. Exits 0 whatever the
outcome.

    python bench/decoder_equality.py [--transmissions N] [--seed S] [--old-ref DIR] [--json]
"""

from __future__ import annotations

import json
import sys

if len(sys.argv) > 2 and sys.argv[1] == "--worker":  # the old decoder's side
    sys.path.insert(0, sys.argv[2])


def _worker(path_in: str, path_out: str) -> None:
    """Decode every case of ``path_in`` (npz + json) with the ookframe first on sys.path."""
    import numpy as np

    import ookframe
    from ookframe.decode import decode
    from ookframe.pulses import PulseTrain
    from ookframe.spec.load import spec_from_dict

    meta = json.loads(open(path_in + ".json").read())
    arrays = np.load(path_in + ".npz")
    out = {"ookframe": str(ookframe.__file__), "cases": [], "encoded": {}}
    for name, (d, values) in meta["encode"].items():
        spec = spec_from_dict(d)
        trains = [ookframe.encode(spec, {k: bytes.fromhex(v[1]) if isinstance(v, list) else v
                                         for k, v in vals.items()}) for vals in values]
        out["encoded"][name] = [[t.levels.tolist(), t.durations_us.tolist()] for t in trains]
    for k, case in enumerate(meta["cases"]):
        spec = spec_from_dict(case["spec"])
        train = PulseTrain(arrays[f"levels{k}"], arrays[f"dur{k}"])
        frames = decode(spec, train, include_bad=True)
        out["cases"].append([[f.start_us, f.end_us, bool(f.crc_ok), f.payload_hex]
                             for f in frames])
    with open(path_out, "w") as fh:
        json.dump(out, fh)


if len(sys.argv) > 2 and sys.argv[1] == "--worker":
    _worker(sys.argv[3], sys.argv[4])
    sys.exit(0)

import argparse  # noqa: E402
import subprocess  # noqa: E402
import tarfile  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import tomllib  # noqa: E402
from dataclasses import dataclass  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

import ookframe  # noqa: E402
from ookframe.channel import apply_channel, get_preset  # noqa: E402
from ookframe.channel.apply import channel_time_map_us  # noqa: E402
from ookframe.channel.presets import PRESETS  # noqa: E402
from ookframe.decode import decode  # noqa: E402
from ookframe.linecodes import LINE_CODES  # noqa: E402
from ookframe.spec_io import spec_from_dict  # noqa: E402
from ookframe.stress.batch import random_batch  # noqa: E402

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = Path(ookframe.__file__).resolve().parent / "examples"
OLD_COMMIT = "ba90ba0"
KINDS = ("same", "new right, old wrong", "both wrong", "both right", "new wrong")


def bed(line_code: dict) -> dict:
    """Return the bed spec dict with ``line_code``."""
    return {
        "frame": {"name": "bed", "unit_us": 500.0, "repeats": 2, "gap_us": 20000.0},
        "line_code": line_code, "preamble": {"pattern": 0xAA, "count": 2},
        "sync": {"value": 0x2DD4, "length_bits": 16, "max_errors": 2},
        "fields": [{"name": "moisture", "width_bits": 12, "signed": True},
                   {"name": "temp", "width_bits": 10, "scale": 0.1, "offset": -20.0},
                   {"name": "id", "width_bits": 2}],
        "check": {"model": "CRC-8/SMBUS"}, "whitening": {"kind": "pn9"},
    }


def spec_dicts() -> list[tuple[str, dict]]:
    """Return (case name, spec dict) of every example and every registered line code,
    the check's byte order written out as the current loader resolves it."""
    out = [(p.stem, tomllib.loads(p.read_text())) for p in sorted(EXAMPLES.glob("*.toml"))]
    out += [(f"bed-{name}", bed({"name": name, **cls.DEFAULTS}))
            for name, cls in LINE_CODES.items()]
    for _, d in out:
        if "check" in d:
            d["check"]["byte_order"] = spec_from_dict(d).check.byte_order
    return out


@dataclass(frozen=True)
class Case:
    """One spec through one preset: the received train and every copy's truth."""

    name: str
    preset: str
    spec_dict: dict
    unit_us: float
    levels: np.ndarray
    durations_us: np.ndarray
    copy_start_us: np.ndarray
    copy_payload: tuple[str, ...]


def build_case(name: str, d: dict, preset: str, n: int, seed: int) -> Case:
    """Return ``n`` random transmissions of spec ``d`` through ``preset``."""
    spec = spec_from_dict(d)
    rng = np.random.default_rng([seed, sum(map(ord, name)), sum(map(ord, preset))])
    ch = get_preset(preset)
    b = random_batch(spec, n, rng)
    rx = apply_channel(b.train, ch, rng, burst_starts_us=b.starts_us)
    copy_us = (b.ends_us - b.starts_us - (spec.repeats - 1) * spec.gap_us) / spec.repeats
    starts = (b.starts_us[:, None]
              + np.arange(spec.repeats) * (copy_us[:, None] + spec.gap_us)).ravel()
    return Case(name, preset, d, float(spec.unit_us), rx.levels, rx.durations_us,
                channel_time_map_us(starts, ch, b.starts_us),
                tuple(np.repeat(np.array(b.payload_hex, dtype=object), spec.repeats)))


def _json_values(values: dict[str, object]) -> dict[str, object]:
    return {k: ["bytes", v.hex()] if isinstance(v, bytes) else v for k, v in values.items()}


def old_frames(cases: list[Case], old_ref: Path, probes: dict[str, tuple[dict, list[dict]]]
               ) -> tuple[str, list[list[list]], dict[str, list]]:
    """Return (the old ookframe's path, frames per case, the old encoder's trains of the
    ``probes`` values per spec) from the old tree."""
    with tempfile.TemporaryDirectory() as tmp:
        base = str(Path(tmp) / "cases")
        Path(base + ".json").write_text(json.dumps(
            {"cases": [{"name": c.name, "preset": c.preset, "spec": c.spec_dict}
                       for c in cases],
             "encode": {name: (d, [_json_values(v) for v in vals])
                        for name, (d, vals) in probes.items()}}))
        np.savez(base + ".npz", **{f"levels{k}": c.levels for k, c in enumerate(cases)},
                 **{f"dur{k}": c.durations_us for k, c in enumerate(cases)})
        out = str(Path(tmp) / "old.json")
        subprocess.run([sys.executable, __file__, "--worker", str(old_ref), base, out],
                       check=True, cwd=tmp)
        got = json.loads(Path(out).read_text())
    return got["ookframe"], got["cases"], got["encoded"]


def same_format(d: dict, values: list[dict], old_trains: list) -> bool:
    """True when the old encoder's trains of ``values`` equal the current encoder's."""
    spec = spec_from_dict(d)
    for vals, (lv, du) in zip(values, old_trains, strict=True):
        t = ookframe.encode(spec, vals)
        if not (np.array_equal(t.levels, lv)
                and np.allclose(t.durations_us, du, rtol=0, atol=1e-6)):
            return False
    return True


def verdicts(case: Case, frames: list[list]) -> tuple[dict[int, list], int, np.ndarray,
                                                     np.ndarray]:
    """Return (frames per copy, stray accepted frames, copy right, copy has a wrong
    accepted frame) for ``frames`` ([start_us, end_us, crc_ok, payload_hex] each)."""
    starts = case.copy_start_us
    period = np.diff(starts).min() if starts.size > 1 else np.inf
    per: dict[int, list] = {}
    stray = 0
    right = np.zeros(starts.size, bool)
    wrong = np.zeros(starts.size, bool)
    for f in frames:
        k = int(np.argmin(np.abs(starts - f[0])))
        off = abs(starts[k] - f[0])
        if off > period / 2:
            stray += bool(f[2])
            continue
        per.setdefault(k, []).append(f)
        if f[2]:
            if f[3] == case.copy_payload[k] and off <= case.unit_us:
                right[k] = True
            else:
                wrong[k] = True
    return per, stray, right, wrong


def _same_frames(a: list, b: list, tol_us: float) -> bool:
    if len(a) != len(b):
        return False
    return all(x[2] == y[2] and x[3] == y[3] and abs(x[0] - y[0]) <= tol_us
               for x, y in zip(sorted(a), sorted(b), strict=True))


def compare(case: Case, new: list[list], old: list[list], same_tol_units: float
            ) -> dict[str, object]:
    """Return the per-copy comparison of one case."""
    pn, sn, rn, wn = verdicts(case, new)
    po, so, ro, wo = verdicts(case, old)
    counts = dict.fromkeys(KINDS, 0)
    new_wrong: list[dict[str, object]] = []
    dt, de = [], []
    for k in range(case.copy_start_us.size):
        a, b = pn.get(k, []), po.get(k, [])
        if rn[k] and ro[k]:
            both = [(x, y) for x in a for y in b if x[2] and y[2] and x[3] == y[3]]
            dt += [abs(x[0] - y[0]) / case.unit_us for x, y in both]
            de += [abs(x[1] - y[1]) / case.unit_us for x, y in both]
        if _same_frames(a, b, same_tol_units * case.unit_us):
            kind = "same"
        elif (rn[k] and not ro[k]) or (rn[k] == ro[k] and wo[k] and not wn[k]):
            kind = "new right, old wrong"
        elif (ro[k] and not rn[k]) or (rn[k] == ro[k] and wn[k] and not wo[k]):
            kind = "new wrong"
        elif rn[k]:
            kind = "both right"
        else:
            kind = "both wrong"
        counts[kind] += 1
        if kind == "new wrong":
            new_wrong.append({"copy": k, "start_us": float(case.copy_start_us[k]),
                              "sent": case.copy_payload[k], "new": a, "old": b})
    return {"example": case.name, "preset": case.preset, "copies": int(rn.size),
            "new_right": int(rn.sum()), "old_right": int(ro.sum()),
            "new_frames": len(new), "old_frames": len(old),
            "new_stray_accepts": sn, "old_stray_accepts": so,
            "max_start_diff_units": float(max(dt)) if dt else 0.0,
            "max_end_diff_units": float(max(de)) if de else 0.0,
            "counts": counts, "new_wrong": new_wrong}


def extract_old(commit: str, dest: Path) -> Path:
    """Return ``dest`` holding the tree of ``commit`` (``git archive``)."""
    blob = subprocess.run(["git", "-C", str(REPO), "archive", commit], check=True,
                          capture_output=True).stdout
    with tempfile.TemporaryFile() as fh:
        fh.write(blob)
        fh.seek(0)
        with tarfile.open(fileobj=fh) as tar:
            tar.extractall(dest, filter="data")
    return dest


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--transmissions", type=int, default=150,
                    help="random transmissions per case (default 150)")
    ap.add_argument("--seed", type=int, default=9)
    ap.add_argument("--old-ref", type=Path, default=None,
                    help=f"tree of the old decoder (default: commit {OLD_COMMIT} extracted)")
    ap.add_argument("--old-commit", default=OLD_COMMIT)
    ap.add_argument("--same-tol-units", type=float, default=0.25,
                    help="starts within this many units count as the same frame")
    ap.add_argument("--json", action="store_true", help="print the results as JSON")
    args = ap.parse_args(argv)
    t0 = time.perf_counter()
    specs = spec_dicts()
    rng = np.random.default_rng(args.seed)
    probes = {name: (d, [ookframe.random_values(spec_from_dict(d), rng) for _ in range(3)])
              for name, d in specs}
    cases = [build_case(name, d, preset, args.transmissions, args.seed)
             for name, d in specs for preset in sorted(PRESETS)]
    print(f"{len(cases)} cases built", file=sys.stderr)
    t1 = time.perf_counter()
    new = [[[f.start_us, f.end_us, bool(f.crc_ok), f.payload_hex]
            for f in decode(spec_from_dict(c.spec_dict), ookframe.PulseTrain(
                c.levels, c.durations_us), include_bad=True)] for c in cases]
    t_new = time.perf_counter() - t1
    with tempfile.TemporaryDirectory() as tmp:
        ref = args.old_ref or extract_old(args.old_commit, Path(tmp) / "old")
        t1 = time.perf_counter()
        old_path, old, encoded = old_frames(cases, ref, probes)
        t_old = time.perf_counter() - t1
    changed = sorted(name for name, (d, vals) in probes.items()
                     if not same_format(d, vals, encoded[name]))
    rows = [compare(c, a, b, args.same_tol_units)
            for c, a, b in zip(cases, new, old, strict=True) if c.name not in changed]
    total = {k: sum(r["counts"][k] for r in rows) for k in KINDS}  # type: ignore[index]
    summary = {"cases": len(rows), "copies": sum(r["copies"] for r in rows),
               "new_right": sum(r["new_right"] for r in rows),
               "old_right": sum(r["old_right"] for r in rows),
               "new_stray_accepts": sum(r["new_stray_accepts"] for r in rows),
               "old_stray_accepts": sum(r["old_stray_accepts"] for r in rows),
               "counts": total, "format_changed": changed, "new_s": t_new, "old_s": t_old,
               "old_ookframe": old_path, "elapsed_s": time.perf_counter() - t0}
    if args.json:
        print(json.dumps({"transmissions": args.transmissions, "seed": args.seed,
                          "rows": rows, "summary": summary}, indent=2))
        return 0
    print(f"decoder equality: new decoder against the old one ({old_path}), "
          f"{args.transmissions} transmissions per case, seed {args.seed}; per copy: "
          "same frames, or the difference classified against the sent copies")
    head = (f"{'case':22s} {'preset':25s} {'copies':>6s} {'new ok':>6s} {'old ok':>6s} "
            f"{'same':>6s} {'new+':>5s} {'both-':>5s} {'both+':>5s} {'new-':>5s} "
            f"{'stray n/o':>9s} {'dt0 max':>7s} {'dt1 max':>7s}")
    print(head)
    for r in rows:
        c = r["counts"]
        print(f"{r['example']:22s} {r['preset']:25s} {r['copies']:6d} {r['new_right']:6d} "
              f"{r['old_right']:6d} {c['same']:6d} {c['new right, old wrong']:5d} "  # type: ignore[index]
              f"{c['both wrong']:5d} {c['both right']:5d} {c['new wrong']:5d} "  # type: ignore[index]
              f"{r['new_stray_accepts']:4d}/{r['old_stray_accepts']:<4d} "
              f"{r['max_start_diff_units']:7.3f} {r['max_end_diff_units']:7.3f}")
    print("columns: new+ = new right, old wrong; both- = both wrong; both+ = both right, "
          "frames differ; new- = new wrong; stray n/o = accepted frames near no copy; "
          "dt0 / dt1 max = largest start / end difference (units) of frames both have right")
    for r in rows:
        for w in r["new_wrong"]:  # type: ignore[union-attr]
            print(f"NEW WRONG {r['example']} {r['preset']} copy {w['copy']} at "
                  f"{w['start_us']:.0f} us (sent {w['sent']}): new {w['new']} old {w['old']}")
    if changed:
        print(f"left out, on-air format changed since {args.old_commit} (the old encoder's "
              f"trains differ, so the same train cannot be right for both): "
              f"{', '.join(changed)}")
    print(f"\nall cases: {summary['copies']} copies, new right {summary['new_right']}, "
          f"old right {summary['old_right']}; " + ", ".join(
              f"{k} {v}" for k, v in total.items())
          + f"; stray accepts new {summary['new_stray_accepts']}, old "
          f"{summary['old_stray_accepts']}")
    print(f"decode time: new {t_new:.1f} s, old {t_old:.1f} s (ratio {t_old / t_new:.2f}); "
          f"elapsed {summary['elapsed_s']:.0f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
