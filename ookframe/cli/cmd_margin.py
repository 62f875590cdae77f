"""``ookframe margin``: the largest value of each impairment that keeps PER below a target."""

from __future__ import annotations

import argparse
import difflib

from rich import box
from rich.markup import escape
from rich.table import Table

from ..stress.margin import MARGIN_IMPAIRMENTS, run_at_margins, run_margin
from ..stress.runner import copy_loss
from . import common, exitcodes
from .channel_options import add_channel_arguments, channel_from_args
from .cluster import executor_from_args
from .cmd_stress import add_decoder_argument, add_run_arguments, c_decoder
from .output import err, out, print_json, progress_enabled

NAME = "margin"
HELP = "largest value of each impairment alone with PER below a target (bisection, 95 % CI)"


def add_arguments(p: argparse.ArgumentParser) -> None:
    common.add_spec_argument(p)
    p.add_argument("--target-per", type=float, default=0.01, help="PER target (default 0.01)")
    p.add_argument("--frames", type=int, default=None,
                   help="transmissions per evaluation (default: twice the fewest that can "
                   "show the target at 95 %%)")
    p.add_argument("--impairments", type=impairment_list, default=list(MARGIN_IMPAIRMENTS),
                   metavar="NAME,...", help="comma-separated impairments to search (default: "
                   f"all of {', '.join(MARGIN_IMPAIRMENTS)})")
    p.add_argument("--resolution", type=common.float_in(0, 1, lo_open=True, hi_open=True), default=0.02,
                   help="bracket width as a fraction of the search range (default 0.02)")
    add_channel_arguments(p, "ideal")
    add_decoder_argument(p)
    add_run_arguments(p)


def impairment_list(text: str) -> list[str]:
    """argparse type of --impairments: known names, comma-separated (a usage error else)."""
    names = [n.strip() for n in text.split(",") if n.strip()]
    bad = next((n for n in names if n not in MARGIN_IMPAIRMENTS), None)
    if not names or bad is not None:
        close = difflib.get_close_matches(bad or "", MARGIN_IMPAIRMENTS, n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise argparse.ArgumentTypeError(
            f"{bad or text!r} is not a searchable impairment{hint}; allowed: "
            f"{', '.join(MARGIN_IMPAIRMENTS)}")
    return names


def run(args: argparse.Namespace) -> int:
    spec, _ = common.load(args)
    names = args.impairments
    show = progress_enabled(args)
    decode_c = c_decoder([spec]) if args.decoder == "c" else None  # no compiler: fail first
    with executor_from_args(args) as ex:
        r = run_margin(spec, args.target_per, channel=channel_from_args(args),
                       impairments=names, n_frames=args.frames, resolution=args.resolution,
                       seed=args.seed, executor=ex, workers=args.workers,
                       chunk_frames=args.chunk_frames,
                       progress=(lambda n: err.print(f"searching {n} ...")) if show else None)
        if decode_c is not None:
            if show:
                err.print("C receiver at the margins ...")
            rc = run_at_margins(spec, r, decode_c, seed=args.seed, executor=ex,
                                workers=args.workers, chunk_frames=args.chunk_frames)
    failed = any(row.status == "fails-at-zero" for row in r.rows)
    if args.json:
        d = r.to_dict()
        if decode_c is not None:
            for m, row, x in zip(d["margins"], r.rows, rc, strict=True):  # type: ignore[arg-type]
                m["c_per_at_limit"] = x.per if x else None
                m["c_per_ci95_at_limit"] = list(x.per_ci95) if x else None
                for key, res in (("copy_loss", row.at_limit), ("c_copy_loss", x)):
                    loss = copy_loss(res, spec.repeats) if res else None
                    m[f"{key}_at_limit"] = loss[0] if loss else None
                    m[f"{key}_ci95_at_limit"] = list(loss[1]) if loss else None
        print_json(d)
        return exitcodes.FAILED if failed else 0
    out.print(margin_table(spec.name, args.target_per, r))
    if decode_c is not None:
        out.print(parity_table(spec.name, r, rc, spec.repeats))
    return exitcodes.FAILED if failed else 0


def parity_table(name: str, r, rc, repeats: int) -> Table:
    """PER and copy loss of the reference decoder and of the C receiver at each margin,
    same seeds (the reference's copy loss with its 95 % CI; its PER CI is in the margin
    table above)."""
    t = Table(title=f"{name}: reference decoder vs generated C receiver at the margins "
              f"({r.n_frames} frames, same seeds)", box=box.SIMPLE_HEAD)
    for col in ("impairment", "at", "PER\nref.", "PER\nC", "copies lost\nref. [95 % CI]",
                "copies\nlost C"):
        t.add_column(escape(col), justify="left" if col == "impairment" else "right",
                     no_wrap=True)
    for row, x in zip(r.rows, rc, strict=True):
        at = row.at_limit
        if at is None or x is None:
            t.add_row(row.impairment, f"{row.limit:.4g}", "-", "-", "-", "-")
            continue
        lr, lc = copy_loss(at, repeats), copy_loss(x, repeats)
        t.add_row(row.impairment, f"{row.limit:.4g}",
                  f"{at.per:.2g}", f"{x.per:.2g}",
                  f"{lr[0]:.2g} [{lr[1][0]:.2g}, {lr[1][1]:.2g}]", f"{lc[0]:.2g}")
    return t


def margin_table(name: str, target_per: float, r) -> Table:
    """The margin table: impairment names and figures never wrap (readable at 80 columns),
    only the note does."""
    t = Table(title=f"{name}: margins for PER < {target_per:g} "
              f"({r.n_frames} frames per point, upper 95 % bound)", box=box.SIMPLE_HEAD)
    for col in ("impairment", "largest\npassing", "first\nfailing", "PER there\n[95 % CI]",
                "note"):
        t.add_column(escape(col), justify="left" if col in ("impairment", "note") else "right",
                     no_wrap=col != "note", min_width=10 if col == "note" else None)
    for row in r.rows:
        at = row.at_limit
        per = f"{at.per:.3g} [{at.per_ci95[0]:.3g}, {at.per_ci95[1]:.3g}]" if at else "-"
        first = "-" if row.first_fail is None else f"{row.first_fail:.4g}"
        note = {"ok": "", "beyond": "passes the whole search range",
                "fails-at-zero": "fails already without it"}[row.status]
        t.add_row(row.impairment, f"{row.limit:.4g}", first, per, note)
    return t
