"""``airtime`` options for the battery budget with sleep current and MCU active time."""

from __future__ import annotations

import argparse
import dataclasses

from rich.table import Table

from ..analysis.battery import BatteryBudget, battery_budget
from . import common


def add_battery_arguments(p: argparse.ArgumentParser) -> None:
    """Add --sleep-current-ua, --mcu-active-ma and --mcu-active-ms."""
    g = p.add_argument_group("battery budget (given any of these, airtime adds a budget "
                             "with sleep and MCU charge; unset ones count as 0)")
    g.add_argument("--sleep-current-ua", type=common.float_in(0, 1e6), metavar="I",
                   help="current of the whole node asleep between reports, µA")
    g.add_argument("--mcu-active-ma", type=common.float_in(0, 1e4), metavar="I",
                   help="current of the awake microcontroller (and sensor), mA; the "
                   "transmitter's current adds to it during marks")
    g.add_argument("--mcu-active-ms", type=common.float_in(0, 1e9), metavar="T",
                   help="time awake per transmission, ms, the transmission itself included")


def wanted(args: argparse.Namespace) -> bool:
    """Return whether any battery-budget option was given."""
    return any(getattr(args, n, None) is not None
               for n in ("sleep_current_ua", "mcu_active_ma", "mcu_active_ms"))


def budget_from_args(args: argparse.Namespace, interval_s: float, mark_us: float,
                     tx_current_ma: float, airtime_us: float) -> tuple[BatteryBudget, list[str]]:
    """Return the budget and its cautions (e.g. awake time shorter than the airtime)."""
    b = battery_budget(interval_s, mark_us, tx_current_ma,
                       sleep_current_ua=args.sleep_current_ua or 0.0,
                       mcu_active_ma=args.mcu_active_ma or 0.0,
                       mcu_active_ms=args.mcu_active_ms or 0.0,
                       battery_mah=args.battery_mah)
    notes = []
    if b.mcu_active_ms * 1000 < airtime_us:
        notes.append(f"--mcu-active-ms {b.mcu_active_ms:g} is shorter than one transmission "
                     f"({airtime_us / 1000:.2f} ms); the MCU usually stays awake while it keys "
                     "the transmitter.")
    return b, notes


def budget_dict(b: BatteryBudget) -> dict[str, object]:
    """Return the JSON form of the budget."""
    d = dataclasses.asdict(b)
    d["ignores"] = list(b.ignores)
    return d


def budget_table(b: BatteryBudget) -> Table:
    """Return the budget as a table (charge per interval by consumer, mean current, life)."""
    t = Table(title=f"battery budget per {b.interval_s:g} s interval (estimate)")
    t.add_column("consumer")
    t.add_column("current", justify="right")
    t.add_column("time per interval", justify="right")
    t.add_column("charge", justify="right")
    sleep_s = b.interval_s - b.mcu_active_ms / 1000
    t.add_row("transmitter (marks)", f"{b.tx_current_ma:g} mA", f"{b.mark_us / 1000:.3f} ms",
              f"{b.tx_charge_uc:.4g} µC")
    t.add_row("microcontroller awake", f"{b.mcu_active_ma:g} mA", f"{b.mcu_active_ms:g} ms",
              f"{b.mcu_charge_uc:.4g} µC")
    t.add_row("sleep", f"{b.sleep_current_ua:g} µA", f"{sleep_s:.6g} s",
              f"{b.sleep_charge_uc:.4g} µC")
    t.add_row("total", f"mean {b.mean_current_ua:.4g} µA", f"{b.interval_s:g} s",
              f"{b.charge_per_interval_uc:.4g} µC", end_section=True)
    t.add_row("charge per day", "", "", f"{b.charge_per_day_mah:.4g} mAh")
    if b.battery_life_days is not None:
        t.add_row(f"battery life on {b.battery_mah:g} mAh", "", "",
                  f"{b.battery_life_days:.4g} days")
    return t
