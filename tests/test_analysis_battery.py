"""Tests of ookframe.analysis.battery (battery life with sleep current and MCU active time)
and the airtime options that show it."""

from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import pytest

from ookframe.analysis.airtime import energy
from ookframe.analysis.battery import battery_budget
from ookframe.cli.main import main
from ookframe.errors import ValueRangeError

HIVE = str(Path(__file__).resolve().parent.parent / "examples" / "hive_scale.toml")


def test_hand_computed_case():
    """The docstring's worked case, computed by hand (charge = current x time, 1 mAh =
    3.6 C; common practice, no source): T = 60 s, 10 ms of marks at 12 mA, 25 ms awake at
    2 mA, 3 µA asleep for 59.975 s, 1000 mAh.
    Q = 120 + 50 + 179.925 = 349.925 µC per interval; mean 349.925 / 60 µA;
    life = 1000 mAh / mean = 60e6 / 349.925 h = 2.5e6 / 349.925 days = 7144.388... days."""
    b = battery_budget(60, 10_000, 12, sleep_current_ua=3, mcu_active_ma=2, mcu_active_ms=25,
                       battery_mah=1000)
    assert (b.tx_charge_uc, b.mcu_charge_uc) == (120.0, 50.0)
    assert b.sleep_charge_uc == 179.925
    assert b.charge_per_interval_uc == 349.925
    assert b.mean_current_ua == float(Fraction("349.925") / 60)
    assert b.battery_life_days == float(Fraction(2_500_000) / Fraction("349.925"))
    assert 7144.38 < b.battery_life_days < 7144.39
    # mean current x 24 h = charge per day: 5.8320833 µA x 24 h = 0.13997 mAh
    assert b.charge_per_day_mah == float(Fraction("349.925") / 60 * 24 / 1000)


def test_without_sleep_and_mcu_it_is_the_transmit_only_figure():
    """With sleep and MCU at 0 the budget equals airtime.energy's transmit-only battery life
    (an independent float implementation of the same formula)."""
    for mark_us, interval_s, i_ma in ((84_000.0, 60.0, 12.0), (3_217.5, 900.0, 9.5)):
        b = battery_budget(interval_s, mark_us, i_ma, battery_mah=2400)
        e = energy(mark_us, interval_s, i_ma, 3.0, battery_mah=2400)
        assert b.battery_life_days == pytest.approx(e.battery_life_days, rel=1e-12)
        assert b.mean_current_ua == pytest.approx(e.mean_current_ua, rel=1e-12)


def test_sleep_dominates_a_slow_node():
    """A report every hour (hand computation): 84 ms of 12 mA marks = 1008 µC, 200 ms awake
    at 1.5 mA = 300 µC, 3 µA asleep for 3599.8 s = 10799.4 µC; total 12107.4 µC, so sleep
    is 89 % of the charge and the transmit-only figure is 12 x too optimistic."""
    b = battery_budget(3600, 84_000, 12, sleep_current_ua=3, mcu_active_ms=200,
                       mcu_active_ma=1.5)
    assert (b.tx_charge_uc, b.mcu_charge_uc) == (1008.0, 300.0)
    assert b.sleep_charge_uc == 10799.4
    assert b.charge_per_interval_uc == 12107.4
    assert 0.89 < b.sleep_charge_uc / b.charge_per_interval_uc < 0.90


@pytest.mark.parametrize("kw, match", [
    (dict(mcu_active_ms=60_001), "fit in the interval"),
    (dict(sleep_current_ua=-1), "sleep_current_ua"),
    (dict(sleep_current_ua=float("nan")), "sleep_current_ua"),
    (dict(battery_mah=0), "battery_mah"),
])
def test_bad_values_are_refused(kw, match):
    with pytest.raises(ValueRangeError, match=match):
        battery_budget(60, 10_000, 12, **kw)


def test_airtime_cli_budget_json_and_table(capsys):
    """airtime --sleep-current-ua/--mcu-active-ma/--mcu-active-ms adds a 'battery' object
    whose transmit part equals the transmit-only energy block; the table names each
    consumer; the caution stays."""
    argv = ["airtime", HIVE, "--interval-s", "60", "--sleep-current-ua", "3",
            "--mcu-active-ma", "2", "--mcu-active-ms", "250", "--battery-mah", "1000"]
    assert main([*argv, "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    bat, en = d["battery"], d["energy"]
    assert bat["tx_charge_uc"] == pytest.approx(en["energy_per_tx_uj"] / en["supply_v"])
    assert bat["mcu_charge_uc"] == 500.0 and bat["sleep_charge_uc"] == pytest.approx(179.25)
    assert bat["battery_life_days"] < en["battery_life_days"]
    assert any("estimates" in c for c in d["cautions"])
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert "battery budget" in text and "microcontroller awake" in text and "sleep" in text
    assert main(["airtime", HIVE, "--interval-s", "60", "--json"]) == 0
    assert "battery" not in json.loads(capsys.readouterr().out)


def test_airtime_cli_awake_longer_than_interval_is_one_line(capsys):
    assert main(["airtime", HIVE, "--interval-s", "1", "--mcu-active-ms", "2000"]) == 4
    err = capsys.readouterr().err.strip()
    assert "fit in the interval" in err and len(err.splitlines()) == 1
