"""Tests of the physical-link commands: stress/sweep --channel physical, range, render."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from ookframe.cli.main import main

EX = Path(__file__).resolve().parent.parent / "examples"
TANK = str(EX / "tank_level.toml")
HIVE = str(EX / "hive_scale.toml")


def run_json(capsys, *argv: str) -> dict | list:
    assert main(list(argv)) == 0
    return json.loads(capsys.readouterr().out)


def test_stress_physical_json_reports_the_link_and_the_caution(capsys):
    d = run_json(capsys, "stress", TANK, "--channel", "physical", "--distance-m", "150",
                 "--path-exponent", "3", "--tx-power-mw", "10", "--frames", "60",
                 "--workers", "1", "--json")
    assert d["channel"]["kind"] == "physical"
    assert d["channel"]["received_dbm"] == pytest.approx(10 - 25.2 - 65.3, abs=0.1)
    assert d["per"] == 0.0
    assert "regulations" in d["caution"] and "estimates" in d["caution"]
    d = run_json(capsys, "stress", TANK, "--channel", "physical", "--rx-power-dbm", "-115",
                 "--frames", "40", "--workers", "1", "--json")
    assert d["per"] == 1.0 and d["false_accepts"] == 0


def test_stress_physical_table_and_option_errors(capsys):
    assert main(["stress", TANK, "--channel", "physical", "--receiver", "good",
                 "--rx-power-dbm", "-100", "--frames", "30", "--workers", "1",
                 "--progress", "off"]) == 0
    captured = capsys.readouterr()
    assert "physical link" in captured.out and "good receiver" in captured.out
    assert "check your local regulations" in captured.err
    assert main(["stress", TANK, "--channel", "physical", "--distance-m", "-3"]) != 0
    assert main(["stress", TANK, "--channel", "physical", "--distance-m", "10",
                 "--rx-power-dbm", "-90"]) != 0
    assert main(["margin", TANK, "--channel", "physical"]) != 0
    assert "Traceback" not in capsys.readouterr().err


def test_sweep_physical_over_received_power(capsys):
    d = run_json(capsys, "sweep", TANK, "--channel", "physical", "--vary",
                 "rx_power_dbm=-95,-112", "--frames", "40", "--workers", "1", "--json")
    pts = d["specs"][0]["points"]
    assert [p["received_dbm"] for p in pts] == [-95.0, -112.0]
    assert pts[0]["per"] < 0.1 and pts[1]["per"] == 1.0
    assert main(["sweep", TANK, "--channel", "physical", "--vary", "jitter_us=0:1:2"]) != 0


def test_range_json_states_its_assumptions(capsys):
    d = run_json(capsys, "range", TANK, "--path-exponent", "3", "--frames", "40",
                 "--target-per", "0.1", "--margin-db", "6", "--workers", "1", "--json")
    a = d["assumptions"]
    assert a["tx_power_dbm"] == 10.0 and a["margin_db"] == 6.0
    assert a["receiver_sensitivity_dbm"] == pytest.approx(-105.0, abs=0.2)
    assert "exponent 3" in a["path_model"]
    assert -110.0 < d["required_dbm"] < -98.0
    assert d["max_path_loss_db"] == pytest.approx(10.0 - d["required_dbm"] - 6.0)
    by_n = {r["exponent"]: r["range_m"] for r in d["range_by_exponent_m"]}
    assert by_n[2.0] > by_n[3.0] > by_n[4.0]
    assert d["range_m"] == pytest.approx(by_n[3.0])
    assert "regulations" in d["caution"] and "estimates" in d["caution"]


def test_render_writes_captures_the_decoder_reads(capsys, tmp_path):
    wav = tmp_path / "tank.wav"
    iq = tmp_path / "tank.u8.iq"
    pins = tmp_path / "pin.csv"
    for path in (wav, iq, pins):
        assert main(["render", TANK, "-o", str(path), "--rx-power-dbm", "-95",
                     "--transmissions", "2"]) == 0
    capsys.readouterr()
    for path, extra in ((wav, []), (iq, ["--sample-rate", "250000"]), (pins, [])):
        frames = run_json(capsys, "decode", TANK, str(path), "--json", *extra)
        assert sum(f["crc_ok"] for f in frames) >= 2, path
    assert main(["render", TANK, "-o", str(wav), "--rx-power-dbm", "-95"]) != 0  # exists
    assert main(["render", TANK, "-o", str(tmp_path / "x.png")]) != 0
    assert "Traceback" not in capsys.readouterr().err


def test_clock_options_reach_the_transmitter(capsys):
    from ookframe.cli.main import build_parser
    from ookframe.cli.physical_options import FIELDS, physical_from_args

    args = build_parser()[0].parse_args(["stress", TANK, "--channel", "physical",
                                      "--clock-ppm", "-1500", "--drift-ppm-per-s", "30",
                                      "--startup-tau-us", "6", "--quench-hz", "500000"])
    ch = physical_from_args(args)
    assert (ch.tx.clock_ppm, ch.tx.drift_ppm_per_s, ch.tx.startup_tau_us) == (-1500, 30, 6)
    assert ch.rx.quench_hz == 500000
    parts = {"tx": ch.tx, "path": ch.path, "rx": ch.rx}
    for part, name in FIELDS.values():  # every table row names a real field
        assert hasattr(parts[part], name), (part, name)
    d = run_json(capsys, "stress", TANK, "--channel", "physical", "--rx-power-dbm", "-80",
                 "--clock-ppm", "3000", "--frames", "30", "--workers", "1", "--json")
    assert d["channel"]["tx"]["clock_ppm"] == 3000 and d["per"] < 0.2
    assert main(["stress", TANK, "--channel", "physical", "--clock-ppm", "60000"]) != 0
    assert "Traceback" not in capsys.readouterr().err
