"""``ookframe airtime``: airtime, duty cycle, region rules, collision odds and battery energy."""

from __future__ import annotations

import argparse
import dataclasses

import numpy as np
from rich.table import Table

from ..analysis import airtime as at
from ..analysis.regions import REGIONS, Finding, met_options, verdict
from . import battery_options, common
from .output import REGULATORY_CAUTION, err, out, print_json

NAME = "airtime"
HELP = "airtime and duty cycle at a report interval, region rules, collisions, battery energy"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--interval-s", type=float, required=True, metavar="T",
                   help="time between the starts of two transmissions of one node, s")
    p.add_argument("--nodes", type=int, default=1, metavar="N",
                   help="nodes sharing the channel at the same interval (default 1)")
    p.add_argument("--region", choices=(*REGIONS, "all"), default="all",
                   help="rule set to check (default all)")
    p.add_argument("--power-mw", type=float, metavar="P",
                   help="e.r.p. of the transmitter, mW (power rules: not assessed without it)")
    p.add_argument("--carrier-mhz", type=float, metavar="F",
                   help="carrier frequency, MHz, e.g. 433.92 (band, field-strength and "
                   "bandwidth rules: not assessed without it)")
    p.add_argument("--tx-current-ma", type=float, metavar="I",
                   help=f"supply current with the carrier on, mA (default "
                   f"{at.TYPICAL_TX_CURRENT_MA:g}, a typical figure)")
    p.add_argument("--supply-v", type=float, metavar="V",
                   help=f"supply voltage, V (default {at.TYPICAL_SUPPLY_V:g}, a typical figure)")
    p.add_argument("--battery-mah", type=float, metavar="C", help="battery capacity, mAh")
    battery_options.add_battery_arguments(p)
    common.add_json_argument(p)


def _fmt(value: float | None, unit: str) -> str:
    if value is None:
        return "-"
    if unit == "Hz":
        return f"{value / 1e6:.3f} MHz" if value >= 1e6 else f"{value / 1e3:.1f} kHz"
    if unit == "s":
        return f"{value:.3f} s"
    if unit == "µV/m":
        return f"{value:,.0f} µV/m"
    return f"{value:.4g} {unit}"


def _limit(f: Finding) -> str:
    if f.limit is None:
        return "-"
    if f.relation == "in":
        return f"{_fmt(f.limit, f.unit)} to {_fmt(f.limit_high, f.unit)}"
    return f"{f.relation} {_fmt(f.limit, f.unit)}"


def _ok(ok: bool | None) -> str:
    return {True: "[green]ok[/green]", False: "[red]FAIL[/red]",
            None: "[yellow]not assessed[/yellow]"}[ok]


def report_dict(spec, rep: at.AirtimeReport, bw_hz: float, assumed: bool,
                cautions: list[str]) -> dict:
    """Return the JSON document of ``ookframe airtime``."""
    t, d = rep.timing, rep.duty
    return {
        "name": spec.name,
        "interval_s": d.interval_s,
        "nodes": rep.collisions.n_nodes,
        "frame_us": t.frame_us,
        "airtime_us": t.airtime_us,
        "max_airtime_us": t.max_airtime_us,
        "mark_us": t.mark_us,
        "repeats": t.repeats,
        "gap_us": t.gap_us,
        "data_dependent": t.data_dependent,
        "transmissions_per_hour": d.transmissions_per_hour,
        "on_time_per_hour_s": d.on_time_per_hour_s,
        "duty_cycle_pct": d.duty_cycle_pct,
        "bandwidth_hz": bw_hz,
        "rf_bandwidth_hz": rep.rf_bandwidth_hz,
        "regions": [
            {"region": name, "title": REGIONS[name].title, "source": REGIONS[name].source,
             "verdict": verdict(found),
             "met_options": [{"option": o, "conditions": list(c)} for o, c in met_options(found)],
             "findings": [dataclasses.asdict(f) for f in found]}
            for name, found in rep.regions.items()
        ],
        "collisions": {**dataclasses.asdict(rep.collisions),
                       "aloha_max_throughput": at.ALOHA_MAX_THROUGHPUT},
        "energy": {**dataclasses.asdict(rep.energy), "assumed_typical_figures": assumed},
        "cautions": cautions,
    }


def _kv_table(title: str, rows: list[tuple[str, str]]) -> Table:
    t = Table(title=title)
    t.add_column("quantity")
    t.add_column("value", justify="right")
    for k, v in rows:
        t.add_row(k, v)
    return t


def _print_findings(name: str, found: list[Finding]) -> None:
    v = verdict(found)
    head = {True: "[green]met by an option[/green]", False: "[red]no option met[/red]",
            None: "[yellow]not fully assessed[/yellow]"}[v]
    met = [f"\nmet by: {o}" + "".join(f"\n  only if: {c}" for c in conds)
           for o, conds in met_options(found)]
    t = Table(title=f"{REGIONS[name].title}: {head}{''.join(met)}\n{REGIONS[name].source}")
    for col in ("rule", "clause", "limit", "value", "result"):
        t.add_column(col, justify="right" if col in ("limit", "value") else "left")
    option = None
    for f in found:
        if f.option != option:
            option = f.option
            t.add_row(f"[bold]option: {option}[/bold]", end_section=False)
        t.add_row(f"  {f.rule}", f.clause, _limit(f), _fmt(f.value, f.unit), _ok(f.ok))
    out.print(t)
    notes = dict.fromkeys(f"{f.rule}: {f.note}" for f in found if f.note)
    for n in notes:
        out.print(f"  note - {n}", highlight=False)


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    from ..analysis.spectrum import bandwidth_hz

    assumed = args.tx_current_ma is None or args.supply_v is None
    bw = bandwidth_hz(spec)
    regions = tuple(REGIONS) if args.region == "all" else (args.region,)
    rep = at.airtime_report(
        spec, args.interval_s, np.random.default_rng(at.TIMING_SEED), n_nodes=args.nodes,
        regions=regions, power_mw=args.power_mw, rf_bandwidth_hz=2.0 * bw,
        tx_current_ma=at.TYPICAL_TX_CURRENT_MA if args.tx_current_ma is None else args.tx_current_ma,
        supply_v=at.TYPICAL_SUPPLY_V if args.supply_v is None else args.supply_v,
        battery_mah=args.battery_mah,
        carrier_hz=None if args.carrier_mhz is None else args.carrier_mhz * 1e6)
    cautions = [REGULATORY_CAUTION, *at.cautions(spec)]
    if assumed:
        cautions.append(f"Energy uses typical figures ({rep.energy.tx_current_ma:g} mA at "
                        f"{rep.energy.supply_v:g} V with the carrier on): give --tx-current-ma "
                        "and --supply-v for your transmitter.")
    budget = None
    if battery_options.wanted(args):
        budget, notes = battery_options.budget_from_args(
            args, rep.duty.interval_s, rep.timing.mark_us, rep.energy.tx_current_ma,
            rep.timing.airtime_us)
        cautions += notes
    if args.json:
        doc = report_dict(spec, rep, bw, assumed, cautions)
        if budget is not None:
            doc["battery"] = battery_options.budget_dict(budget)
        print_json(doc)
        return 0
    t, d, c, e = rep.timing, rep.duty, rep.collisions, rep.energy
    rows = [("frame (mean over random payloads)", f"{t.frame_us / 1000:.2f} ms"),
            (f"transmission ({t.repeats} x frame + {t.repeats - 1} gap(s))",
             f"{t.airtime_us / 1000:.2f} ms")]
    if t.data_dependent:
        rows.append(("transmission, longest payload (upper bound)",
                     f"{t.max_airtime_us / 1000:.2f} ms"))
    rows += [("mark time per transmission (carrier on)", f"{t.mark_us / 1000:.2f} ms"),
             ("transmissions per hour", f"{d.transmissions_per_hour:.4g}"),
             ("on-time in the worst hour", f"{d.on_time_per_hour_s:.3f} s"),
             ("duty cycle (worst hour)", f"{d.duty_cycle_pct:.4f} %"),
             ("99 % bandwidth: baseband / RF (ideal keying)",
              f"{bw / 1e3:.1f} / {2 * bw / 1e3:.1f} kHz")]
    out.print(_kv_table(f"{spec.name}: one transmission every {d.interval_s:g} s", rows))
    for name, found in rep.regions.items():
        _print_findings(name, found)
    out.print(_kv_table(
        f"collisions: pure ALOHA, {c.n_nodes} unsynchronised node(s) (Abramson 1970)", [
            ("offered load, all nodes: G = N R T / I", f"{c.offered_load:.4g}"),
            ("throughput S = G exp(-2G) (max 1/(2e) = 0.184)", f"{c.throughput:.4g}"),
            ("load of the other nodes: G' = (N-1) R T / I", f"{c.others_load:.4g}"),
            ("P(one frame survives), exact", f"{c.p_frame_ok:.6f}"),
            ("P(one frame survives), Poisson exp(-2G')", f"{c.p_frame_ok_poisson:.6f}"),
            (f"P(at least one of {c.repeats} copies survives), exact", f"{c.p_report_ok:.6f}"),
            ("  same, assuming copies lost independently", f"{c.p_report_ok_independent:.6f}"),
            ("expected copies delivered per report", f"{c.expected_deliveries:.4f}"),
        ]))
    rows = [("energy per transmission", f"{e.energy_per_tx_uj:.1f} µJ"),
            ("energy per day", f"{e.energy_per_day_j:.4g} J"),
            ("charge per day", f"{e.charge_per_day_mah:.4g} mAh"),
            ("mean transmit current", f"{e.mean_current_ua:.4g} µA")]
    if e.battery_life_days is not None:
        rows.append((f"battery life on {e.battery_mah:g} mAh (transmit only)",
                     f"{e.battery_life_days:.4g} days"))
    out.print(_kv_table(f"transmit energy ({e.tx_current_ma:g} mA at {e.supply_v:g} V, carrier "
                        "on during marks only)", rows))
    out.print(f"energy ignores: {', '.join(e.ignores)}")
    if budget is not None:
        out.print(battery_options.budget_table(budget))
        out.print(f"battery budget ignores: {', '.join(budget.ignores)}")
    for note in cautions:
        err.print(f"caution: {note}", markup=False)
    return 0
