"""Tests of the stress-family commands (stress, noise, sweep, margin, vectors)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from ookframe.cli.main import main

EX = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EX / "hive_scale.toml")
PROBE = str(EX / "greenhouse_probe.toml")


def run_json(capsys, *argv: str) -> dict:
    assert main(list(argv)) == 0
    return json.loads(capsys.readouterr().out)


def test_stress_json_has_the_documented_keys(capsys):
    d = run_json(capsys, "stress", HIVE, "--frames", "120", "--workers", "1", "--json",
                 "--preset", "ideal", "--jitter-us", "50")
    for key in ("frames", "ok", "per", "per_ci95", "false_accepts", "frames_per_s"):
        assert key in d
    assert d["frames"] == 120 and 0 < d["ok"] < 120
    assert d["per"] == pytest.approx(1 - d["ok"] / 120)
    lo, hi = d["per_ci95"]
    assert lo <= d["per"] <= hi
    assert d["channel"]["jitter_us"] == 50.0


def test_stress_table_and_same_seed(capsys):
    assert main(["stress", HIVE, "--frames", "60", "--workers", "1", "--progress", "off"]) == 0
    text = capsys.readouterr().out
    assert "packet error rate" in text and "budget-superregen" in text
    a = run_json(capsys, "stress", HIVE, "--frames", "60", "--workers", "2", "--json")
    b = run_json(capsys, "stress", HIVE, "--frames", "60", "--workers", "1", "--json")
    for k in ("ok", "per", "lost_sync", "bad_check", "false_accepts", "decoded"):
        assert a[k] == b[k]


def test_bad_impairment_value_is_a_one_line_error(capsys):
    assert main(["stress", HIVE, "--frames", "10", "--dropout-prob", "2"]) == 4
    err = capsys.readouterr().err
    assert "dropout_prob" in err and "Traceback" not in err


def test_sweep_json_and_plot(capsys, tmp_path):
    plot = tmp_path / "per.png"
    d = run_json(capsys, "sweep", HIVE, PROBE, "--vary", "jitter_us=0:60:3", "--frames", "40",
                 "--workers", "1", "--json", "--plot", str(plot))
    assert d["parameter"] == "jitter_us" and d["values"] == [0.0, 30.0, 60.0]
    assert [s["spec"] for s in d["specs"]] == ["hive_scale", "greenhouse_probe"]
    assert plot.is_file()
    assert main(["sweep", HIVE, "--vary", "jitter_us=0:60:3", "--plot", str(plot)]) == 6


def test_margin_json(capsys):
    d = run_json(capsys, "margin", HIVE, "--target-per", "0.1", "--frames", "40",
                 "--impairments", "jitter_us", "--workers", "1", "--json")
    (row,) = d["margins"]
    assert row["impairment"] == "jitter_us" and row["status"] == "ok" and row["limit"] > 0


def test_noise_json(capsys):
    d = run_json(capsys, "noise", HIVE, "--hours", "0.01", "--workers", "1", "--json")
    assert d["hours"] == 0.01 and d["expected_sync_hits_per_hour"] > 0
    assert d["sync_hits"] >= d["passing"] >= 0


def test_vectors_files(capsys, tmp_path):
    h = tmp_path / "v.h"
    assert main(["vectors", HIVE, "--count", "2", "-o", str(h)]) == 0
    assert "#define HIVE_SCALE_VEC_COUNT 2u" in h.read_text()
    assert main(["vectors", HIVE, "--count", "2", "-o", str(h)]) == 6  # exists, no --force
    d = run_json(capsys, "vectors", HIVE, "--count", "3", "--preset", "ideal")
    assert len(d["vectors"]) == 3 and set(d["vectors"][0]["expected"]) >= {"hive", "weight_g"}
