"""``--scheduler``: run a simulation command on a Dask distributed cluster."""

from __future__ import annotations

import argparse
from collections.abc import Iterator
from concurrent.futures import Executor
from contextlib import contextmanager

from ..stress.cluster import DEFAULT_CONNECT_TIMEOUT_S
from . import common


def add_scheduler_arguments(p: argparse.ArgumentParser) -> None:
    """Add --scheduler and --scheduler-timeout-s."""
    p.add_argument("--scheduler", metavar="ADDRESS", default=None,
                   help="run on the Dask scheduler at ADDRESS (e.g. tcp://10.0.0.5:8786) "
                   "instead of local worker processes; needs ookframe[dask] here and on "
                   "every worker; results are the same as with --workers")
    p.add_argument("--scheduler-timeout-s", type=common.float_in(0, 3600, lo_open=True),
                   default=DEFAULT_CONNECT_TIMEOUT_S, metavar="S",
                   help="seconds to wait for the scheduler and a first worker (default "
                   f"{DEFAULT_CONNECT_TIMEOUT_S:g})")


@contextmanager
def executor_from_args(args: argparse.Namespace) -> Iterator[Executor | None]:
    """Yield the cluster's executor when --scheduler is given, else None (use --workers)."""
    address = getattr(args, "scheduler", None)
    if address is None:
        yield None
        return
    from ..stress.cluster import cluster_executor

    with cluster_executor(address, args.scheduler_timeout_s) as ex:
        yield ex


def workers_text(args: argparse.Namespace) -> str:
    """Return where the run ran: 'N workers' or 'Dask scheduler ADDRESS'."""
    if getattr(args, "scheduler", None) is not None:
        return f"Dask scheduler {args.scheduler}"
    return f"{args.workers} workers"
