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


def test_emit_tx_mode_and_ram_of_both_transmitters(capsys, tmp_path):
    """--tx-mode stream leaves the run buffer out, buffer and auto put it in; --json gives
    the RAM of both transmitters either way (the figures are held to sizeof by
    tests/test_codegen_avr_txbuf.py), the text report prints them on one line."""
    reports = {}
    for mode in ("auto", "buffer", "stream"):
        code, out, _ = run(capsys, "emit", HIVE, "-o", str(tmp_path / mode), "--tx-mode", mode,
                           "--json")
        assert code == 0
        reports[mode] = json.loads(out)
        header = (tmp_path / mode / "hive_scale.h").read_text()
        assert ("bool hive_scale_tx_start(" in header) == (mode != "stream")
        assert reports[mode]["tx_mode"] == mode
        assert reports[mode]["streaming"]["ram_bytes"]["avr"] > 0
    assert reports["auto"]["run_buffer"] == reports["buffer"]["run_buffer"]
    buf = reports["buffer"]["run_buffer"]
    assert buf["ram_bytes"]["avr"] > reports["buffer"]["streaming"]["ram_bytes"]["avr"]
    assert buf["avr_isr_cycles"]["worst"] <= 50
    assert reports["stream"]["run_buffer"] is None
    assert reports["stream"]["run_buffer_refusal"] is None
    code, out, _ = run(capsys, "emit", HIVE, "-o", str(tmp_path / "text"))
    assert code == 0 and f"run buffer RAM {buf['ram_bytes']['avr']} B" in out


def test_emit_tx_mode_buffer_refused_when_the_gap_needs_several_periods(capsys, tmp_path):
    """A 9 s gap is longer than one 16-bit timer period at any prescaler (70,312.5 ticks of
    128 µs at 8 MHz / 1024; arithmetic): auto falls back to streaming and says why; buffer
    is refused with that reason, exit CODEGEN, nothing written."""
    spec = tmp_path / "long.toml"
    spec.write_text((EXAMPLES / "hive_scale.toml").read_text().replace("gap_us = 8000",
                                                                     "gap_us = 9000000"))
    code, out, _ = run(capsys, "emit", str(spec), "-o", str(tmp_path / "auto"), "--json")
    report = json.loads(out)
    assert code == 0 and report["run_buffer"] is None
    assert "repeat gap" in report["run_buffer_refusal"]
    code, _, err = run(capsys, "emit", str(spec), "-o", str(tmp_path / "buf"), "--tx-mode",
                       "buffer")
    assert code == exitcodes.CODEGEN and "--tx-mode buffer" in err and "repeat gap" in err
    assert "Traceback" not in err and not (tmp_path / "buf").exists()
    code, _, err = run(capsys, "emit", HIVE, "-o", str(tmp_path / "x"), "--tx-mode", "ring")
    assert code == exitcodes.USAGE and "--tx-mode" in err


def test_emit_report_follows_the_side(capsys, tmp_path):
    """--side rx: the text report says the transmitter is left out (no transmitter RAM line)
    and gives the receiver's RAM, the figure the header states (held to the AVR build's
    RAM by tests/test_codegen_avr_rx.py); --side both gives both; --side tx no receiver."""
    reports, texts = {}, {}
    for side in ("tx", "rx", "both"):
        code, out, _ = run(capsys, "emit", HIVE, "-o", str(tmp_path / side), "--side", side,
                           "--json")
        assert code == 0
        reports[side] = json.loads(out)
        code, texts[side], _ = run(capsys, "emit", HIVE, "-o", str(tmp_path / (side + "t")),
                                   "--side", side)
        assert code == 0
    assert reports["tx"]["receiver"] is None and reports["tx"]["transmitter_default_on"]
    rx = reports["rx"]["receiver"]
    assert rx == reports["both"]["receiver"]
    assert 0 < rx["ram_bytes_without_recovery"] < rx["ram_bytes"]
    header = (tmp_path / "rx" / "hive_scale.h").read_text()
    assert f"RAM: about {rx['ram_bytes']} bytes" in header
    assert not reports["rx"]["transmitter_default_on"] and reports["both"]["transmitter_default_on"]
    assert "transmitter RAM" not in texts["rx"] and "transmitter left out" in texts["rx"]
    assert f"receiver RAM at most {rx['ram_bytes']} B" in texts["rx"]
    assert "streaming transmitter RAM" in texts["both"]
    assert f"receiver RAM at most {rx['ram_bytes']} B" in texts["both"]
    assert "receiver RAM" not in texts["tx"]
