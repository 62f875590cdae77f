"""``ookframe network``: several sensors on one receiver; delivery against pure ALOHA."""

from __future__ import annotations

import argparse
import math

from rich.table import Table

from ..errors import ValueRangeError, excerpt
from . import common
from .cmd_stress import add_channel_arguments, channel_from_args, channel_text, progress_bar
from .output import REGULATORY_CAUTION, check_writable, err, out, print_json, write_atomic

NAME = "network"
HELP = ("simulate N sensors sharing one receiver (carriers overlap, capture, reference "
        "decoder): delivery, latency, lost updates per day against pure ALOHA")
#: node counts of --plot when --plot-nodes is not given (those above --nodes are dropped,
#: --nodes is added)
PLOT_COUNTS = (1, 2, 5, 10, 20, 30, 50)


def _power(text: str) -> tuple[tuple[float, float] | None, tuple[float, ...] | None]:
    """--rx-power-dbm: P (every node), LO:HI (uniform range) or P1,P2,... (one per node)."""
    try:
        if ":" in text:
            lo, hi = (float(x) for x in text.split(":"))
            return (lo, hi), None
        vals = tuple(float(x) for x in text.split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"{excerpt(text)}: expected P, LO:HI or P1,P2,... in dBm") from None
    if len(vals) == 1:
        return (vals[0], vals[0]), None
    return None, vals


def _counts(text: str) -> tuple[int, ...]:
    try:
        v = tuple(int(x) for x in text.split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(f"{excerpt(text)}: expected N1,N2,...") from None
    if not v or min(v) < 1 or max(v) > 1000:
        raise argparse.ArgumentTypeError(f"{excerpt(text)}: node counts must be in 1..1000")
    return v


def _clock(text: str) -> float:
    from ..stress.network import CLOCKS

    if text in CLOCKS:
        return CLOCKS[text]
    try:
        v = float(text)
    except ValueError:
        v = math.nan
    if not (math.isfinite(v) and 0 <= v <= 100000):
        raise argparse.ArgumentTypeError(
            f"{excerpt(text)}: expected {', '.join(CLOCKS)} or a clock error in ppm (0..100000)")
    return v


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--nodes", type=common.int_in(1, 1000), required=True, metavar="N",
                   help="sensors sharing the receiver")
    p.add_argument("--interval-s", type=common.float_in(0, 1e7, lo_open=True), required=True,
                   metavar="T", help="time between two updates of one node, s (its own clock)")
    p.add_argument("--hours", type=common.float_in(0, 1e5, lo_open=True), default=24.0,
                   metavar="H", help="simulated time, hours (default 24)")
    p.add_argument("--repeats", type=common.int_in(1, 255), metavar="R",
                   help="copies per update (default: the spec's repeats)")
    p.add_argument("--id-field", metavar="NAME",
                   help="field holding each node's own address / channel (default: a field "
                   "named like an id; 'none': the nodes differ only in their readings)")
    p.add_argument("--clock", type=_clock, default="rc", metavar="KIND",
                   help="clock error of each node, drawn uniform in +-: crystal (100 ppm), rc "
                   "(2 %%, default), exact, or a number of ppm")
    p.add_argument("--interval-jitter", type=common.float_in(0, 0.5, hi_open=True), default=0.0,
                   metavar="J", help="each interval scaled by 1 + U(-J, J) (default 0: fixed)")
    p.add_argument("--rx-power-dbm", type=_power, default=None, metavar="P|LO:HI|P1,P2,...",
                   help="received power per node, dBm: one value for all, a uniform range, "
                   "or one per node (default -85:-55)")
    p.add_argument("--capture-db", type=common.float_in(0, math.inf, lo_open=True), default=6.0,
                   metavar="DB", help="power difference above which the stronger carrier "
                   "captures the receiver (default 6, common practice; inf: never)")
    p.add_argument("--chunk-s", type=common.float_in(1, 1e6), default=600.0, metavar="S",
                   help="simulated seconds per decoding chunk (default 600; memory, not results)")
    p.add_argument("--seed", type=common.SEED, default=0, help="random seed (default 0)")
    g = p.add_argument_group("design target (suggest repeats and interval jitter)")
    t = g.add_mutually_exclusive_group()
    t.add_argument("--target-loss-per-day", type=common.float_in(0, 1e9), metavar="X",
                   help="at most X lost updates per node and day")
    t.add_argument("--target-delivery", type=common.float_in(0, 1, lo_open=True, hi_open=True),
                   metavar="P", help="at least this fraction of updates delivered")
    g2 = p.add_argument_group("plot over N")
    g2.add_argument("--plot", metavar="FILE.png",
                    help="also run every count of --plot-nodes and draw delivery and lost "
                    "updates per day against N with the ALOHA curve")
    g2.add_argument("--plot-nodes", type=_counts, metavar="N1,N2,...",
                    help=f"node counts of --plot (default {','.join(map(str, PLOT_COUNTS))} "
                    "up to --nodes)")
    g2.add_argument("--force", action="store_true", help="overwrite an existing plot file")
    add_channel_arguments(p, "ideal")
    common.add_json_argument(p)
    common.add_progress_argument(p)


def _config(args: argparse.Namespace, spec):
    from ..stress.network import DEFAULT_POWER_RANGE_DBM, NetworkConfig

    rng_dbm, per_node = (DEFAULT_POWER_RANGE_DBM, None) if args.rx_power_dbm is None \
        else args.rx_power_dbm
    clock = args.clock if isinstance(args.clock, float) else _clock(args.clock)
    id_field = "" if args.id_field == "none" else args.id_field
    return NetworkConfig(
        n_nodes=args.nodes, interval_s=args.interval_s, hours=args.hours, repeats=args.repeats,
        id_field=id_field, clock_ppm=clock, interval_jitter=args.interval_jitter,
        power_range_dbm=rng_dbm or DEFAULT_POWER_RANGE_DBM, node_power_dbm=per_node,
        capture_db=args.capture_db, channel=channel_from_args(args), chunk_s=args.chunk_s,
        seed=args.seed)


def cautions(spec, r) -> list[str]:
    """Return the cautions printed after a network report."""
    notes = [REGULATORY_CAUTION,
             "Collision figures assume every node hears the same receiver and nothing else "
             "transmits on the channel; capture threshold, received powers and clock errors "
             "are assumptions (common practice, no source): measure your own link.",
             "Confidence intervals treat updates as independent; with fixed intervals and "
             "close clocks, collisions of two nodes repeat for a while and the true "
             "uncertainty is wider (see the longest outage)."]
    if r.delivered > r.aloha.clear * r.updates + 0.5:
        notes.append("More updates were decoded than had a copy no other frame overlapped: "
                     "capture, or overlaps that only hit the start of a preamble or the space "
                     "after a frame, which the decoder rides out; pure ALOHA counts every "
                     "overlap as a loss.")
    return notes


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    cfg = _config(args, spec)
    plot_counts = None
    if args.plot is not None:
        if not args.plot.lower().endswith(".png"):
            raise ValueRangeError(f"--plot {excerpt(args.plot)}: the output must be a .png file")
        check_writable(args.plot, args.force)  # fail before the work
        base = args.plot_nodes or tuple(n for n in PLOT_COUNTS if n < args.nodes) + (args.nodes,)
        plot_counts = tuple(sorted(set(base)))
    elif args.plot_nodes is not None:
        raise ValueRangeError("--plot-nodes needs --plot FILE.png")
    from ..stress.network import run_network
    from ..stress.network_design import suggest, sweep_nodes

    want_target = args.target_loss_per_day is not None or args.target_delivery is not None
    total = args.hours * 3600.0 * (1 + want_target + (len(plot_counts) if plot_counts else 0))
    doc: dict[str, object] = {}
    with progress_bar(args, total, "network (simulated s)") as tick:
        r = run_network(spec, cfg, progress=tick)
        sug = suggest(spec, cfg, target_loss_per_day=args.target_loss_per_day,
                      target_delivery=args.target_delivery, progress=tick) if want_target else None
        sweep = sweep_nodes(spec, cfg, plot_counts, progress=tick) if plot_counts else None
    notes = cautions(spec, r)
    if sweep is not None:
        from .. import plots
        from ..plots_network import network_figure

        path = write_atomic(args.plot, plots.figure_png(network_figure(sweep, spec.name)),
                            force=args.force)
        err.print(f"wrote {path} (delivery and lost updates per day over N = "
                  f"{','.join(map(str, sweep.counts))})")
    if args.json:
        doc = r.to_dict()
        doc["suggestion"] = None if sug is None else sug.to_dict()
        doc["sweep"] = None if sweep is None else sweep.to_dict()
        doc["cautions"] = notes
        print_json(doc)
        return 0
    _print_result(args, r)
    if sug is not None:
        _print_suggestion(sug)
    for note in notes:
        err.print(f"caution: {note}", markup=False)
    return 0


def _ms(v: float | None) -> str:
    return "-" if v is None else f"{v:.0f}"


def _print_result(args: argparse.Namespace, r) -> None:
    c = r.config
    t = Table(title=f"{r.spec_name}: {c.n_nodes} node(s), one update every {c.interval_s:g} s, "
              f"{r.repeats} copies {r.gap_us / 1000:g} ms apart, {c.hours:g} h simulated; "
              f"id field: {r.id_field or '(none)'}; channel {args.preset} "
              f"({channel_text(c.channel)}); capture {c.capture_db:g} dB")
    for col in ("node", "id", "ppm", "dBm", "sent", "deliv.", "95 % CI", "lost/d",
                "ms avg/p95", "outage"):
        t.add_column(col, justify="right")
    for n in r.nodes:
        lo, hi = n.delivery_ci95
        t.add_row(str(n.index), "-" if n.id_value is None else str(n.id_value),
                  f"{n.clock_error_ppm:+.0f}", f"{n.rx_power_dbm:.1f}", str(n.updates),
                  f"{n.delivery:.4f}", f"{lo:.3f}-{hi:.3f}", f"{n.lost_per_day:.3g}",
                  f"{_ms(n.latency_ms_mean)}/{_ms(n.latency_ms_p95)}", str(n.longest_outage))
    out.print(t)
    out.print("ppm: clock error; dBm: received power; deliv.: updates with >= 1 good copy; "
              "lost/d: lost updates per day; ms: update to end of first good copy; outage: "
              "most lost updates in a row")
    a = r.aloha
    lo, hi = a.delivery_ci95
    clo, chi = a.clear_ci95
    k = Table(title="against the exact pure-ALOHA figure of 'ookframe airtime' (Abramson 1970)")
    k.add_column("quantity")
    k.add_column("value", justify="right")
    yes = {True: "[green]agrees (inside the 95 % CI)[/green]",
           False: "[yellow]outside the 95 % CI[/yellow]"}
    k.add_row("mean frame / transmission", f"{r.frame_us / 1000:.2f} / {r.airtime_us / 1000:.2f} ms")
    k.add_row("offered load G = N R T / I", f"{a.collisions.offered_load:.4g}")
    k.add_row(f"P(update delivered), exact ALOHA, {r.repeats} copies", f"{a.p_report_ok:.5f}")
    k.add_row("simulated: delivered (decoded, all nodes)", f"{r.delivery:.5f}  ({lo:.5f} .. {hi:.5f})")
    k.add_row("  against ALOHA", yes[a.delivery_agrees])
    k.add_row("simulated: >= 1 copy no frame overlapped", f"{a.clear:.5f}  ({clo:.5f} .. {chi:.5f})")
    k.add_row("  against ALOHA", yes[a.clear_agrees])
    k.add_row("simulated: >= 1 copy only weaker frames overlapped (capture)",
              f"{r.clear_with_capture / r.updates if r.updates else 0:.5f}")
    k.add_row("lost updates per node and day: ALOHA / simulated",
              f"{a.lost_per_node_day:.3g} / {r.lost_per_node_day:.3g}")
    k.add_row("time to first good frame, mean / p95",
              f"{_ms(r.latency_ms_mean)} / {_ms(r.latency_ms_p95)} ms")
    k.add_row("frames sent / no overlap / decoded right", f"{r.copies} / {r.copies_clear} / {r.copies_ok}")
    k.add_row("false frames (check passed, payload not sent)", str(r.false_frames))
    k.add_row("frames with a failed check", str(r.bad_check))
    k.add_row("speed", f"{r.simulated_hours_per_s:.3g} simulated h/s ({r.pulses:,} pulses decoded)")
    out.print(k)


def _print_suggestion(s) -> None:
    unit = ("lost updates per node and day <= " if s.target_kind == "loss_per_day"
            else "delivery >= ")
    t = Table(title=f"design target: {unit}{s.target:g} (exact ALOHA over repeat counts)")
    for col in ("repeats", "P(delivered)", "lost/node/day", "duty cycle %", "meets"):
        t.add_column(col, justify="right")
    for c in s.candidates:
        t.add_row(str(c.repeats), f"{c.p_report_ok:.6f}", f"{c.lost_per_node_day:.3g}",
                  f"{c.duty_cycle_pct:.4f}", "yes" if c.meets else "no")
    out.print(t)
    head = "suggested" if s.met else "no candidate meets the target; best"
    out.print(f"{head}: repeats = {s.repeats}, interval jitter +-{s.interval_jitter:.0%} "
              f"({s.jitter_reason})")
    if s.met:
        out.print("  (fewest repeats that meet it: least airtime, energy and load; the ALOHA "
                  "figure counts collisions only, so keep a repeat or two for fades and "
                  "interference if the link margin is thin)")
    if s.run is not None:
        r = s.run
        lo, hi = r.delivery_ci95
        verdict = ("confirmed" if s.confirmed else
                   "consistent (the target lies inside the CI: simulate longer to decide)"
                   if s.consistent else "NOT confirmed")
        out.print(f"simulation with it: delivered {r.delivery:.5f} ({lo:.5f} .. {hi:.5f}), "
                  f"lost {r.lost_per_node_day:.3g} per node and day: {verdict}")
    if not s.met:
        out.print("  try a longer interval, fewer nodes, a shorter frame (higher bit rate, "
                  "shorter preamble) or a second receiver")
