"""``ookframe demo``: write the demo spec, an encoded frame and its decode into a folder."""

from __future__ import annotations

import argparse
import tomllib
from pathlib import Path

from ..codegen import emit_header
from ..demo import DEMO_SPEC, example_text
from ..errors import ValueRangeError
from ..frame import encode, values_equal
from ..layout import frame_layout
from ..spec_io import spec_and_defaults_from_dict
from . import exitcodes
from .cmd_decode import frame_dicts
from .cmd_encode import capture_text
from .output import REGULATORY_CAUTION, OutputExists, dumps_json, err, out, write_atomic

NAME = "demo"
#: random transmissions sent through the cheap-link channel preset in the demo
STRESS_FRAMES = 300
HELP = "run the built-in demo (a beehive scale node) into ./ookframe-demo/"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--dir", default="ookframe-demo", help="output folder (default: ookframe-demo)")
    p.add_argument("--force", action="store_true", help="overwrite files in an existing folder")


def run(args: argparse.Namespace) -> int:
    from ..decode import decode
    if not args.dir.strip():
        raise ValueRangeError("--dir is empty: give a folder name (default ookframe-demo)")
    d = Path(args.dir)
    names = [DEMO_SPEC, "frame.csv", "frame.vcd", "decoded.json", "hive_scale.h"]
    clash = [n for n in names if (d / n).exists()]
    if clash and not args.force:
        raise OutputExists(f"{d / clash[0]} exists; use --force to overwrite or --dir for another folder")
    text = example_text(DEMO_SPEC)
    spec, values = spec_and_defaults_from_dict(tomllib.loads(text))
    train = encode(spec, values)
    frames = decode(spec, train)
    header = emit_header(spec)  # default target: 8 MHz AVR-style 16-bit timer
    outputs = {
        DEMO_SPEC: text,
        "frame.csv": capture_text(train, "csv", signal=spec.name),
        "frame.vcd": capture_text(train, "vcd", signal=spec.name),
        "decoded.json": dumps_json(frame_dicts(frames)) + "\n",
        "hive_scale.h": header.text,
    }
    for n in names:
        write_atomic(d / n, outputs[n], force=True, make_parents=True)
    lay = frame_layout(spec, values)
    ok = [f for f in frames if f.crc_ok and values_equal(spec, f.fields, values)]
    out.print(f"[bold]ookframe demo[/bold]: {spec.description}")
    out.print(f"  spec            {d / DEMO_SPEC}")
    out.print(f"  sent values     {_values_text(spec, values)}")
    out.print(f"  transmission    {len(train)} pulses, {lay.repeats} repeats, airtime "
              f"{lay.airtime_us / 1000:.2f} ms -> {d / 'frame.csv'}, {d / 'frame.vcd'}")
    out.print(f"  decoded         {len(frames)} frame(s), {len(ok)} with a good check -> {d / 'decoded.json'}")
    if frames:
        f0 = frames[0]
        out.print(f"  first frame     {_values_text(spec, f0.fields)} (unit {f0.unit_us:.2f} µs)")
    from ..channel import get_preset
    from ..stress import run_stress

    preset = "budget-superregen"
    st = run_stress(spec, get_preset(preset), STRESS_FRAMES, seed=1)
    out.print(f"  through {preset}: {st.frames} random transmissions, {st.ok} delivered, PER "
              f"{st.per:.3f} (95 % CI {st.per_ci95[0]:.3f}..{st.per_ci95[1]:.3f}), "
              f"{st.false_accepts} false accepts")
    t = header.timing
    out.print(f"  C header        {d / 'hive_scale.h'}: timer {t.timer_hz:g} Hz (prescaler "
              f"{t.prescaler}), worst timing error {100 * t.worst_error:.3f} %")
    out.print(f"  next            ookframe check {d / DEMO_SPEC}")
    err.print(f"caution: {REGULATORY_CAUTION}")
    return 0 if len(ok) == spec.repeats else exitcodes.FAILED


def _values_text(spec, values) -> str:
    """Field values on one line, each as 'name: value unit', separated by ' | '."""
    return " | ".join(f"{f.name}: {values[f.name]}{' ' + f.unit if f.unit else ''}"
                      for f in spec.fields if f.name in values)
