"""``ookframe emit``: writes the header, prints the timing report, refuses bad input."""

from __future__ import annotations

import json
from pathlib import Path

from ookframe.cli import exitcodes
from tests.test_cli import run

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EXAMPLES / "hive_scale.toml")


def test_emit_writes_header_and_report(capsys, tmp_path):
    """The report names prescaler, tick and every duration with its error; 250 µs and the
    8 ms gap are exact at 8 MHz / 8 (1 µs ticks, hand computed)."""
    code, out, err = run(capsys, "emit", HIVE, "-o", str(tmp_path / "c"))
    assert code == 0
    header = tmp_path / "c" / "hive_scale.h"
    assert header.read_text().startswith("/*\n * hive_scale.h")
    assert "prescaler 8" in out and "1 unit" in out and "repeat gap" in out
    assert f"wrote {header}" in err
    code, out, _ = run(capsys, "emit", HIVE, "-o", str(tmp_path / "c"), "--json", "--force",
                       "--crc-impl", "bitwise")
    report = json.loads(out)
    assert code == 0 and report["prescaler"] == 8 and report["tick_us"] == 1.0
    assert [(d["name"], d["ticks"]) for d in report["durations"]] == [("1 unit", 250),
                                                                     ("repeat gap", 8000)]
    assert report["worst_error_pct"] == 0.0 and report["crc_impl"] == "bitwise"


def test_emit_never_overwrites_without_force(capsys, tmp_path):
    header = tmp_path / "hive_scale.h"
    header.write_text("hand edits")
    code, _, err = run(capsys, "emit", HIVE, "-o", str(tmp_path))
    assert code == exitcodes.EXISTS and "--force" in err
    assert header.read_text() == "hand edits"


def test_emit_refusals_leave_nothing_behind(capsys, tmp_path):
    """Timing that misses the tolerance, durations that do not fit, an empty prescaler list:
    one-line error, exit code CODEGEN, no file written."""
    out_dir = tmp_path / "none"
    cases = [
        (["--prescalers", "1024"], "exceeds the tolerance"),
        (["--prescalers", "1", "--timer-bits", "8"], "no prescaler fits"),
        (["--prescalers", ""], "prescaler list is empty"),
        (["--mcu-clock-hz", "12"], "mcu clock"),
    ]
    for extra, message in cases:
        code, _, err = run(capsys, "emit", HIVE, "-o", str(out_dir), *extra)
        assert code == exitcodes.CODEGEN, (extra, err)
        assert message in err and len(err.strip().splitlines()) == 1
    assert not out_dir.exists()
    code, _, err = run(capsys, "emit", HIVE, "-o", str(out_dir), "--prescalers", "1,x")
    assert code == exitcodes.USAGE and "comma-separated" in err
