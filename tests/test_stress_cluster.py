"""Tests of ookframe.stress.cluster and the --scheduler option: stress work on a Dask
distributed cluster gives the same results as the process pool.

The cluster is a ``distributed.LocalCluster`` on the loopback interface with two worker
processes (one thread each): the chunks really travel to other processes, as on a cluster.
Dask's ``Client.get_executor()`` is documented as a ``concurrent.futures.Executor``
(dask distributed documentation, "Client.get_executor"); the tests rely on nothing else.
"""

from __future__ import annotations

import json
import os
import socket
import sys
from pathlib import Path

import pytest

from ookframe.channel import get_preset
from ookframe.cli.main import main
from ookframe.errors import ClusterError
from ookframe.spec_io import load_spec
from ookframe.stress.cluster import cluster_executor
from ookframe.stress.runner import run_stress
from ookframe.stress.sweep import run_sweep

if os.environ.get("CI"):  # CI installs the extra: a missing dask there is a failure
    import distributed
else:
    distributed = pytest.importorskip("distributed")

EX = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EX / "hive_scale.toml")
PROBE = str(EX / "greenhouse_probe.toml")
#: sweep grid: no loss, then marks lost with these probabilities (some frames fail)
GRID = (0.0, 0.02, 0.05)
#: result keys that depend on the wall clock or on where the run ran
NOT_COMPARED = ("elapsed_s", "frames_per_s", "workers")


@pytest.fixture(scope="module")
def scheduler():
    """Address of a two-process LocalCluster on 127.0.0.1 (closed after the module)."""
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                       host="127.0.0.1", dashboard_address="127.0.0.1:0",
                                       silence_logs=50)
    try:
        yield cluster.scheduler_address
    finally:
        cluster.close(timeout=20)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_run_stress_on_a_cluster_equals_the_process_pool(scheduler):
    """Same seed and chunk size: the cluster, a process pool of 2 and one process give
    equal StressResults (every count and interval), and the channel did cause errors."""
    spec = load_spec(HIVE)
    ch = get_preset("budget-superregen").with_(dropout_prob=0.05)  # lost marks: some fail
    kw = dict(seed=21, chunk_frames=40)
    with cluster_executor(scheduler, timeout_s=20) as ex:
        on_cluster = run_stress(spec, ch, 240, executor=ex, **kw)
    pool = run_stress(spec, ch, 240, workers=2, **kw)
    local = run_stress(spec, ch, 240, workers=1, **kw)
    assert on_cluster == pool == local
    assert 0 < on_cluster.ok < on_cluster.frames


def test_run_sweep_on_a_cluster_equals_the_process_pool(scheduler):
    """A two-spec, three-point sweep: identical SweepResult on the cluster, in a pool (both
    submit every point's chunks together) and in one process (point after point)."""
    specs = [load_spec(HIVE), load_spec(PROBE)]
    ch = get_preset("ideal")
    kw = dict(seed=5, chunk_frames=30)
    with cluster_executor(scheduler, timeout_s=20) as ex:
        on_cluster = run_sweep(specs, ch, "dropout_prob", GRID, 90, executor=ex, **kw)
    pool = run_sweep(specs, ch, "dropout_prob", GRID, 90, workers=2, **kw)
    local = run_sweep(specs, ch, "dropout_prob", GRID, 90, workers=1, **kw)
    assert on_cluster == pool == local
    pers = [r.per for rows in pool.results for r in rows]
    assert min(pers) == 0.0 < max(pers)


def _json(capsys, *argv: str) -> dict:
    assert main(list(argv)) == 0
    return json.loads(capsys.readouterr().out)


def _drop(d: dict) -> dict:
    return {k: v for k, v in d.items() if k not in NOT_COMPARED}


def test_cli_scheduler_matches_workers(scheduler, capsys):
    """``stress`` and ``sweep --scheduler ADDRESS`` print the same JSON as ``--workers 2``;
    the table names the scheduler."""
    common = ["--frames", "120", "--chunk-frames", "40", "--seed", "3", "--dropout-prob", "0.05"]
    a = _json(capsys, "stress", HIVE, *common, "--json", "--scheduler", scheduler)
    b = _json(capsys, "stress", HIVE, *common, "--json", "--workers", "2")
    assert _drop(a) == _drop(b) and 0 < a["ok"] < a["frames"]
    sweep = ["sweep", HIVE, "--vary", "dropout_prob=0:0.05:2", "--frames", "60", "--json"]
    assert (_json(capsys, *sweep, "--scheduler", scheduler)
            == _json(capsys, *sweep, "--workers", "2"))
    assert main(["stress", HIVE, "--frames", "40", "--scheduler", scheduler,
                 "--progress", "off"]) == 0
    table = " ".join(capsys.readouterr().out.split())
    assert "Dask scheduler" in table and scheduler.rsplit(":", 1)[1] in table


def test_unreachable_scheduler_is_a_one_line_error_within_the_timeout(capsys):
    """Nothing listens on the port: exit 4 with one line naming the address and the
    timeout, no traceback."""
    import time

    address = f"tcp://127.0.0.1:{_free_port()}"
    t0 = time.monotonic()
    code = main(["stress", HIVE, "--frames", "10", "--scheduler", address,
                 "--scheduler-timeout-s", "1"])
    took = time.monotonic() - t0
    err = capsys.readouterr().err.strip()
    assert code == 4
    assert "cannot reach the Dask scheduler" in err and address in err and "1 s" in err
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert took < 15


def test_missing_dask_is_a_one_line_error(monkeypatch, capsys):
    """Without the extra installed, --scheduler says how to install it (exit 4)."""
    monkeypatch.setitem(sys.modules, "distributed", None)  # import raises ImportError
    for cmd in (["stress", HIVE], ["margin", HIVE], ["noise", HIVE, "--hours", "0.01"],
                ["sweep", HIVE, "--vary", "jitter_us=0,10"]):
        assert main([*cmd, "--scheduler", "tcp://127.0.0.1:8786"]) == 4
        err = capsys.readouterr().err.strip()
        assert 'pip install "ookframe[dask]"' in err and len(err.splitlines()) == 1


def test_worker_with_another_version_is_refused(scheduler, monkeypatch):
    """The workers import the installed ookframe; a client claiming another version is
    refused before any work is sent."""
    import ookframe

    monkeypatch.setattr(ookframe, "__version__", "0.0.0-other")
    with pytest.raises(ClusterError, match="install the same version on every worker"):
        with cluster_executor(scheduler, timeout_s=20):
            pass


def test_bad_timeout_and_address_are_refused():
    with pytest.raises(ClusterError, match="positive"):
        with cluster_executor("tcp://127.0.0.1:1", timeout_s=0):
            pass
    with pytest.raises(ClusterError, match="scheduler address"):
        with cluster_executor("  "):
            pass


@pytest.mark.parametrize("address, match", [
    ("foo", "expected"), ("tcp://", "expected"), ("tcp://127.0.0.1:99999", "expected"),
    ("http://127.0.0.1:80", "scheme 'http' not supported"), ("x" * 500, "expected"),
])
def test_malformed_address_is_refused_at_once(address, match, capsys):
    """A malformed address is refused before any connection attempt (exit 4, one short
    line, the input cut to 80 characters)."""
    assert main(["stress", HIVE, "--frames", "10", "--scheduler", address]) == 4
    err = capsys.readouterr().err.strip()
    assert match in err and len(err.splitlines()) == 1 and len(err) < 250
