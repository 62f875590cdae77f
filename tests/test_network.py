"""Several sensors on one receiver (``ookframe.stress.network``, ``ookframe network``).

Reference: unslotted (pure) ALOHA, N. Abramson, "THE ALOHA SYSTEM - Another alternative for
computer communications", AFIPS Fall Joint Computer Conference 1970: a frame of length T
among nodes with independent uniform phases survives when no other frame starts within T
of it (vulnerable window 2T; P = exp(-2G) in the Poisson limit, from memory). The exact
finite-N figure with repeats is ``ookframe.analysis.airtime.collisions``, which the run
is held to.
"""

from __future__ import annotations

import json
from dataclasses import replace

import numpy as np
import pytest

import ookframe as o
from ookframe.channel.carriers import clip_outside, marks_to_train, union_intervals, visible_marks
from ookframe.cli.main import main
from ookframe.errors import ValueRangeError
from ookframe.intervals import clopper_pearson
from ookframe.stress.network import NetworkConfig, pick_id_field, run_network
from ookframe.stress.network_design import evaluate, suggest

SPEC = "examples/greenhouse_probe.toml"
#: one update every 8 s: 450 updates per node and hour
INTERVAL_S = 8.0


@pytest.fixture(scope="module")
def spec():
    return o.load_spec(SPEC)


def _cfg(n: int, hours: float, **kw) -> NetworkConfig:
    base = dict(n_nodes=n, interval_s=INTERVAL_S, hours=hours, interval_jitter=0.3,
                node_power_dbm=(-70.0,) * n, capture_db=float("inf"), seed=11)
    base.update(kw)
    return NetworkConfig(**base)


@pytest.fixture(scope="module")
def runs(spec):
    """Equal powers, no capture, intervals jittered by +-30 % (so that successive updates
    collide nearly independently): the pure-ALOHA setting at three loads
    (G = N R T / I about 0.05, 0.12, 0.23)."""
    hours = {2: 4.0, 5: 1.5, 10: 1.0}
    return {n: run_network(spec, _cfg(n, h)) for n, h in hours.items()}


@pytest.mark.parametrize("n", [2, 5, 10])
def test_clear_copies_match_exact_aloha(runs, n):
    """Updates with a copy no other frame overlapped: the event the exact pure-ALOHA figure
    (Abramson 1970; ``airtime.collisions``) is about; it lies in the 99.9 % Clopper-Pearson
    interval of the simulated count."""
    r = runs[n]
    k = round(r.aloha.clear * r.updates)
    lo, hi = clopper_pearson(k, r.updates, 0.999)
    assert r.updates > 250
    assert lo <= r.aloha.p_report_ok <= hi, (n, k / r.updates, r.aloha.p_report_ok)
    assert r.aloha.p_report_ok < 0.99 or n == 2  # collisions matter at these loads


@pytest.mark.parametrize("n", [2, 5, 10])
def test_decoded_delivery_against_aloha(runs, n):
    """On the ideal channel the decoder reads every copy no frame overlapped (so delivery
    is at least the clear count), and it rides out only a few overlaps (partly hit
    preambles), so the decoded delivery stays within 4 points above the exact figure."""
    r = runs[n]
    assert r.copies_ok >= r.copies_clear
    assert r.delivered >= round(r.aloha.clear * r.updates)
    assert clopper_pearson(r.delivered, r.updates, 0.999)[1] >= r.aloha.p_report_ok
    assert r.delivery - r.aloha.p_report_ok < 0.04
    assert r.false_frames == 0


def test_delivery_non_increasing_in_nodes(runs):
    """More nodes on the channel never deliver more (exact figure and simulation)."""
    ns = sorted(runs)
    d = [runs[n].delivery for n in ns]
    p = [runs[n].aloha.p_report_ok for n in ns]
    assert d == sorted(d, reverse=True)
    assert p == sorted(p, reverse=True)


def test_lost_per_day_and_latency(runs):
    """Lost updates per node and day = (1 - delivery) x updates per day; latency is at
    least one frame (the first good copy must end) and below a whole transmission."""
    r = runs[5]
    per_day = 86400 / INTERVAL_S
    assert r.lost_per_node_day == pytest.approx((r.updates - r.delivered) * 86400
                                                / r.simulated_s / 5)
    assert abs(r.lost_per_node_day - (1 - r.delivery) * per_day) < 0.05 * per_day
    for nd in r.nodes:
        assert nd.latency_ms_mean >= r.frame_us / 1000 * 0.95
        assert nd.latency_ms_max <= r.airtime_us / 1000 * 1.05
    assert sum(nd.updates for nd in r.nodes) == r.updates


def test_capture_strong_node_wins(spec):
    """Two nodes colliding often: 30 dB apart with a 6 dB capture threshold the strong one
    is read through the weak one's frames, the weak one only when clear; without capture
    (inf) both lose their overlapped copies alike (capture: common practice, no source)."""
    base = dict(n_nodes=2, interval_s=1.0, hours=0.15, interval_jitter=0.2, seed=3)
    cap = run_network(spec, NetworkConfig(**base, node_power_dbm=(-50.0, -80.0), capture_db=6.0))
    strong, weak = cap.nodes
    assert strong.delivery > 0.99
    assert weak.delivery < 0.95
    assert strong.delivery - weak.delivery > 0.05
    assert abs(weak.delivery - weak.clear / weak.updates) < 0.03
    flat = run_network(spec, NetworkConfig(**base, node_power_dbm=(-50.0, -80.0),
                                           capture_db=float("inf")))
    assert abs(flat.nodes[0].delivery - flat.nodes[1].delivery) < 0.04
    assert flat.nodes[0].delivery < strong.delivery - 0.04


def test_carriers_union_and_clip():
    """Union of marks, clipping by stronger frames, and the train of the union."""
    s, e = union_intervals(np.array([5.0, 0.0, 2.0, 10.0]), np.array([6.0, 3.0, 4.0, 11.0]))
    assert s.tolist() == [0.0, 5.0, 10.0] and e.tolist() == [4.0, 6.0, 11.0]
    cs, ce = clip_outside(np.array([0.0, 4.0, 8.0]), np.array([2.0, 6.0, 12.0]),
                          np.array([1.0, 9.0]), np.array([5.0, 10.0]))
    assert cs.tolist() == [0.0, 5.0, 8.0] and ce.tolist() == [1.0, 6.0, 12.0]
    vs, ve = visible_marks(np.array([0.0, 10.0]), np.array([1.0, 11.0]), np.array([-80.0, -80.0]),
                           np.array([-1.0]), np.array([5.0]), np.array([-60.0]), 6.0)
    assert vs.tolist() == [10.0] and ve.tolist() == [11.0]
    t = marks_to_train(np.array([1.0, 3.0]), np.array([2.0, 4.0]), 0.0, 5.0)
    assert t.levels.tolist() == [0, 1, 0, 1, 0] and t.durations_us.tolist() == [1, 1, 1, 1, 1]


def test_id_field_and_bad_input(spec):
    """The id field is found by name; impossible configurations are refused clearly."""
    assert pick_id_field(spec) == "probe_id"
    assert pick_id_field(o.load_spec("examples/hive_scale.toml")) == "hive"
    with pytest.raises(ValueRangeError, match="nodes must be an integer >= 1"):
        NetworkConfig(n_nodes=0, interval_s=10, hours=1)
    with pytest.raises(ValueRangeError, match="interval_jitter"):
        NetworkConfig(n_nodes=2, interval_s=10, hours=1, interval_jitter=0.7)
    with pytest.raises(ValueRangeError, match="one per node"):
        NetworkConfig(n_nodes=2, interval_s=10, hours=1, node_power_dbm=(-60.0,))
    with pytest.raises(ValueRangeError, match="holds 64 values"):
        run_network(spec, NetworkConfig(n_nodes=65, interval_s=100, hours=0.01))
    with pytest.raises(ValueRangeError, match="not a field"):
        run_network(spec, NetworkConfig(n_nodes=2, interval_s=10, hours=0.01, id_field="nope"))
    with pytest.raises(ValueRangeError):
        run_network(spec, NetworkConfig(n_nodes=2, interval_s=0.1, hours=0.01))  # < airtime


def test_same_seed_same_result(spec):
    a = run_network(spec, _cfg(3, 0.05))
    b = run_network(spec, _cfg(3, 0.05))
    assert a == b
    assert a != run_network(spec, replace(_cfg(3, 0.05), seed=12))


def test_suggest_picks_fewest_repeats_meeting_target(spec):
    """Candidates come from the exact formula; the pick is the fewest repeats meeting the
    target, and the confirming run is made with it."""
    cands = evaluate(spec, 60.0, 20)
    by_r = {c.repeats: c for c in cands}
    assert by_r[1].p_report_ok == pytest.approx(
        o.stress.network.aloha_reference(replace(spec, repeats=1), 60.0, 20)[0].p_report_ok)
    cfg = NetworkConfig(n_nodes=20, interval_s=60.0, hours=0.2)
    low = min(c.lost_per_node_day for c in cands)
    s = suggest(spec, cfg, target_loss_per_day=low * 1.001)
    assert s.met
    assert s.repeats == min(c.repeats for c in s.candidates if c.meets)
    assert by_r[s.repeats].lost_per_node_day <= low * 1.001
    assert s.run is not None and s.run.repeats == s.repeats and s.interval_jitter > 0
    none = suggest(spec, cfg, target_loss_per_day=low / 2, confirm=False)
    assert not none.met and none.run is None
    assert none.repeats == max(cands, key=lambda c: c.p_report_ok).repeats
    with pytest.raises(ValueRangeError, match="one target"):
        suggest(spec, NetworkConfig(n_nodes=2, interval_s=60, hours=0.1))


def test_cli_json_shape_and_errors(capsys, tmp_path):
    """``ookframe network --json``: the documented keys; bad options exit non-zero with a
    one-line message and no traceback."""
    code = main(["network", SPEC, "--nodes", "3", "--interval-s", "20", "--hours", "0.05",
                 "--json", "--target-delivery", "0.5"])
    assert code == 0
    doc = json.loads(capsys.readouterr().out)
    for key in ("nodes", "delivery", "delivery_ci95", "lost_per_node_day", "aloha",
                "latency_ms_mean", "cautions", "suggestion", "config", "simulated_hours_per_s"):
        assert key in doc
    assert len(doc["nodes"]) == 3
    assert {"delivery", "lost_per_day", "latency_ms_p95", "id_value"} <= set(doc["nodes"][0])
    assert "p_report_ok" in doc["aloha"] and "offered_load" in doc["aloha"]["collisions"]
    assert any("regulations" in c for c in doc["cautions"])
    assert main(["network", SPEC, "--nodes", "2", "--interval-s", "0.1", "--hours", "0.01"]) == 4
    err = capsys.readouterr().err
    assert "Traceback" not in err and "interval" in err
    assert main(["network", SPEC, "--nodes", "2", "--interval-s", "10", "--plot",
                 str(tmp_path / "x.txt")]) == 4
    assert main(["network", SPEC, "--nodes", "0", "--interval-s", "10"]) == 2


def test_through_channel_preset(spec):
    """Through the cheap superregenerative preset (idle noise, bias, quantisation, jitter:
    common practice, no source) the decoded copies are still mapped back to the copies
    sent: nearly every unoverlapped copy is found, and no false frame."""
    r = run_network(spec, _cfg(3, 0.3, channel=o.get_preset("budget-superregen")))
    assert r.copies_ok >= 0.97 * r.copies_clear
    assert r.false_frames == 0
    assert r.pulses > r.copies * 50  # idle noise was decoded too


def test_cli_plot_writes_png(tmp_path, capsys):
    """``--plot`` writes a PNG (and refuses to overwrite it without --force)."""
    png = tmp_path / "n.png"
    argv = ["network", SPEC, "--nodes", "3", "--interval-s", "20", "--hours", "0.05",
            "--plot", str(png), "--plot-nodes", "1,3"]
    assert main(argv) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert main(argv) == 6
    assert "exists" in capsys.readouterr().err
