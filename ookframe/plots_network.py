"""Figure of a network over node counts (matplotlib, Agg, object-oriented API): delivery
and lost updates per node and day against N, simulated with 95 % bars and the exact
pure-ALOHA curve. Render with :func:`ookframe.plots.figure_png`."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from .stress.network import DAY_S
from .stress.network_design import NodeSweep, lost_ci


def network_figure(sweep: NodeSweep, spec_name: str) -> Figure:
    """Return a two-panel figure: delivery (fraction of updates with a good copy) and lost
    updates per node and day against the node count."""
    n = np.array(sweep.counts)
    d = np.array([r.delivery for r in sweep.runs])
    ci = np.array([r.delivery_ci95 for r in sweep.runs])
    lost = np.array([r.lost_per_node_day for r in sweep.runs])
    lci = np.array([lost_ci(r) for r in sweep.runs])
    an = np.array(sweep.aloha_counts)
    ap = np.array(sweep.aloha_p)
    per = DAY_S / sweep.interval_s
    fig = Figure(figsize=(11, 4.5), layout="constrained")
    left, right = fig.subplots(1, 2)
    left.plot(an, ap, color="tab:blue", linewidth=1.2, label="exact pure ALOHA (airtime)")
    left.errorbar(n, d, yerr=[d - ci[:, 0], ci[:, 1] - d], fmt="o", color="tab:red",
                  capsize=3, label="simulated, decoded (95 % CI)")
    left.plot(n, [r.aloha.clear for r in sweep.runs], "x", color="tab:gray",
              label="simulated, >= 1 copy no frame overlapped")
    left.set_xlabel("nodes N")
    left.set_ylabel("updates delivered (>= 1 good copy)")
    left.set_ylim(min(float(ci[:, 0].min()), float(ap.min())) * 0.98, 1.002)
    left.grid(True, alpha=0.3)
    left.legend(fontsize=8, loc="lower left")
    floor = 0.5 / (sweep.runs[-1].simulated_s / DAY_S)  # half an update over the run, per day
    right.plot(an, np.maximum((1.0 - ap) * per, floor), color="tab:blue", linewidth=1.2,
               label="exact pure ALOHA (airtime)")
    right.errorbar(n, np.maximum(lost, floor),
                   yerr=[np.maximum(lost, floor) - np.maximum(lci[:, 0], floor),
                         np.maximum(lci[:, 1], floor) - np.maximum(lost, floor)],
                   fmt="o", color="tab:red", capsize=3, label="simulated (95 % CI)")
    right.set_yscale("log")
    right.set_xlabel("nodes N")
    right.set_ylabel("lost updates per node and day (0 drawn at half an update per run)")
    right.grid(True, which="both", alpha=0.3)
    right.legend(fontsize=8, loc="upper left")
    r0 = sweep.runs[0]
    fig.suptitle(f"{spec_name}: one update every {sweep.interval_s:g} s, {r0.repeats} "
                 f"copies, {r0.config.hours:g} h simulated per point; capture "
                 f"{r0.config.capture_db:g} dB (estimates: check local rules)", fontsize=10)
    return fig
